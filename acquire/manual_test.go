package acquire

import (
	"context"
	"errors"
	"math"
	"testing"
)

// The manual drive keeps the Drive contract (source.go): a request above
// the limit is refused with ErrDriveLimit and changes nothing; Amp reports
// what was asked; Off asks for zero at the same frequency. Each request
// reaches the person through notify, once.
func TestManualDrive(t *testing.T) {
	var got []ManualSetting
	d, err := NewManualDrive("V", 2, func(s ManualSetting) { got = append(got, s) })
	if err != nil {
		t.Fatal(err)
	}
	if info := d.Info(); info.Kind != "manual" || info.Coherent || info.MaxAmp != 2 || info.Unit != "V" {
		t.Fatalf("info %+v", info)
	}
	if err := d.Off(context.Background()); err != nil || len(got) != 0 {
		t.Fatalf("off before any request: %v, %d requests", err, len(got))
	}
	steps := []struct {
		name    string
		f, a    float64
		limit   bool // refused with ErrDriveLimit
		refused bool // refused for another reason
	}{
		{"first", 36.2, 1, false, false},
		{"above the limit", 36.25, 2.0001, true, false},
		{"at the limit", 36.25, 2, false, false},
		{"no frequency", 0, 1, false, true},
		{"NaN amplitude", 36.3, math.NaN(), false, true},
		{"negative amplitude", 36.3, -1, false, true},
		{"infinite frequency", math.Inf(1), 1, false, true},
	}
	want := []ManualSetting{}
	for _, st := range steps {
		err := d.Set(st.f, st.a)
		switch {
		case st.limit:
			if !errors.Is(err, ErrDriveLimit) {
				t.Errorf("%s: %v, want ErrDriveLimit", st.name, err)
			}
		case st.refused:
			if err == nil || errors.Is(err, ErrDriveLimit) {
				t.Errorf("%s: %v, want a refusal", st.name, err)
			}
		default:
			if err != nil {
				t.Errorf("%s: %v", st.name, err)
			}
			want = append(want, ManualSetting{FreqHz: st.f, Amp: st.a, Gen: uint64(len(want) + 1)})
		}
		if last := want[len(want)-1]; d.Setting() != last || d.Amp() != last.Amp {
			t.Errorf("%s: setting %+v, amp %g; want %+v", st.name, d.Setting(), d.Amp(), last)
		}
	}
	if err := d.Off(context.Background()); err != nil || d.Amp() != 0 {
		t.Fatalf("off: %v, amp %g", err, d.Amp())
	}
	want = append(want, ManualSetting{FreqHz: 36.25, Amp: 0, Gen: uint64(len(want) + 1)})
	if err := d.Off(context.Background()); err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("notified %+v, want %+v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("request %d: %+v, want %+v", i, got[i], want[i])
		}
	}
	for _, lim := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if _, err := NewManualDrive("V", lim, nil); err == nil {
			t.Errorf("limit %g accepted", lim)
		}
	}
}
