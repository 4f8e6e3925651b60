package acquire

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func samplePoint(i int) Point {
	return Point{Index: i, TimeS: float64(i) * 2.5, Clock: time.Date(2026, 12, 1, 10, 0, i, 0, time.UTC),
		Direction: Up, FreqSetHz: 37 + 0.05*float64(i), FreqMeasHz: 37.0001 + 0.05*float64(i), DriveAmp: 0.2,
		Amp: []float64{0.4, 0.001, 0.002}, PhaseDeg: []float64{-90, 10, -170}, THD: 0.0055, NoiseDensity: 3e-5,
		Dwell: 2500 * time.Millisecond, MeasureCycles: 24, Settled: i%2 == 0, SettleState: "settled", TauS: 0.5,
		Note: `quoted, "note"`}
}

var sampleCols = Columns{Harmonics: []string{"1", "3", "1/2"}, Unit: "mm", DriveUnit: "A"}

// A record written row by row reads back exactly (to the 10 significant
// digits it is written with), is never overwritten, and a last row cut
// off by a crash is skipped and reported.
func TestRecordRoundTripAndCrash(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "run.csv")
	r, err := CreateRecord(path, sampleCols)
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 4; i++ {
		if err := r.Write(samplePoint(i)); err != nil {
			t.Fatal(err)
		}
	}
	r.Close()
	if _, err := CreateRecord(path, sampleCols); !errors.Is(err, ErrExists) {
		t.Fatalf("second CreateRecord: %v, want ErrExists", err)
	}
	rec, err := ReadRecord(path)
	if err != nil {
		t.Fatal(err)
	}
	if rec.Truncated || len(rec.Points) != 4 {
		t.Fatalf("read %d points, truncated %v", len(rec.Points), rec.Truncated)
	}
	for i, p := range rec.Points {
		w := samplePoint(i)
		if p.FreqSetHz != w.FreqSetHz || math.Abs(p.Amp[2]-w.Amp[2]) > 1e-15 || p.PhaseDeg[1] != w.PhaseDeg[1] ||
			p.Settled != w.Settled || p.Note != w.Note || p.MeasureCycles != 24 || p.Direction != Up || !p.Clock.Equal(w.Clock) {
			t.Errorf("point %d read back as %+v", i, p)
		}
	}
	if got := strings.Join(rec.Columns.Harmonics, " "); got != "1 3 1/2" || rec.Columns.Unit != "mm" || rec.Columns.DriveUnit != "A" {
		t.Errorf("columns read back as %+v", rec.Columns)
	}
	// Cut the file in the middle of its last row, as a crash mid-write would.
	data, _ := os.ReadFile(path)
	cut := filepath.Join(dir, "cut.csv")
	os.WriteFile(cut, data[:len(data)-40], 0o644)
	rec, err = ReadRecord(cut)
	if err != nil {
		t.Fatal(err)
	}
	if !rec.Truncated || len(rec.Points) != 3 {
		t.Errorf("cut record: %d points, truncated %v; want 3, true", len(rec.Points), rec.Truncated)
	}
}

func TestReadRecordRejectsOtherFiles(t *testing.T) {
	dir := t.TempDir()
	for name, text := range map[string]string{
		"empty.csv":  "",
		"other.csv":  "a,b,c\n1,2,3\n",
		"nofund.csv": "time_s,direction,point,freq_set_hz,settled,amp_h3_mm\n",
	} {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(text), 0o644)
		if _, err := ReadRecord(p); !errors.Is(err, ErrNotRecord) {
			t.Errorf("%s: %v, want ErrNotRecord", name, err)
		}
	}
}

// FuzzReadRecord: the record reader takes any bytes without panicking.
func FuzzReadRecord(f *testing.F) {
	var b strings.Builder
	b.WriteString(strings.Join(sampleCols.Header(), ",") + "\n")
	b.WriteString(strings.Join(sampleCols.Row(samplePoint(0)), ",") + "\n")
	f.Add(b.String())
	f.Add("time_s,direction,point,freq_set_hz,settled,amp_h1_mm\n1,up,0,2,1")
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, s string) {
		p := filepath.Join(dir, "f.csv")
		os.WriteFile(p, []byte(s), 0o644)
		rec, err := ReadRecord(p)
		if err == nil && rec == nil {
			t.Fatal("nil record without an error")
		}
	})
}

// A record written before a column was added still reads: the missing
// optional column reads as unknown.
func TestReadRecordWithoutOptionalColumns(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "old.csv")
	text := "time_s,clock_utc,direction,point,freq_set_hz,freq_meas_hz,drive_amp_A,amp_h1_mm,phase_h1_deg,thd_pct,dwell_s,settled,settle_state\n" +
		"1.5,2026-12-01T10:00:00.000Z,up,0,37,37.0001,0.2,0.4,-90,0.1,2.5,1,settled\n"
	os.WriteFile(p, []byte(text), 0o644)
	rec, err := ReadRecord(p)
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Points) != 1 || rec.Points[0].Amp[0] != 0.4 || !rec.Points[0].Settled || rec.Points[0].MeasureCycles != 0 {
		t.Errorf("old record read as %+v", rec.Points)
	}
}
