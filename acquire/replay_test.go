package acquire_test

import (
	"context"
	"math"
	"math/cmplx"
	"os"
	"path/filepath"
	"testing"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/sweep"
	"github.com/sweeplock/sweeplock/dsp/lockin"
)

// A run captured raw can be measured again later: the frames the sidecar
// gives for each logged point, read back from the WAV file and demodulated
// with the drive phase stored beside them, give the logged amplitude and
// phase again. The samples are stored as 32-bit floats (the WAVE format's
// IEEE float type), whose 24-bit mantissa bounds the agreement: 1e-5
// relative leaves a wide margin over the ~1e-7 rounding of each sample.
func TestRawCaptureReplaysToTheLoggedPoints(t *testing.T) {
	dir := t.TempDir()
	out, raw := filepath.Join(dir, "run.csv"), filepath.Join(dir, "run.wav")
	s, err := rig.Open("demo", rig.Options{Virtual: true, RecordPath: out, RecordEager: true, RawPath: raw,
		Override: rig.Override{StartHz: 36.0, StopHz: 36.4, StepHz: 0.1, Direction: "up"}, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if _, err := sweep.Run(context.Background(), s.Source, s.Drive, s.Bench, sweep.Options{}); err != nil {
		t.Fatal(err)
	}
	rec, err := acquire.ReadRecord(out)
	if err != nil {
		t.Fatal(err)
	}
	if rec.Meta == nil || rec.Meta.Raw == nil || len(rec.Meta.Raw.Points) != len(rec.Points) || len(rec.Points) != 5 {
		t.Fatalf("sidecar raw capture info: %+v (points %d)", rec.Meta, len(rec.Points))
	}
	f, err := os.Open(raw)
	if err != nil {
		t.Fatal(err)
	}
	w, err := acquire.ReadWAV(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	cal, off := rec.Meta.VoltsPerUnit, rec.Meta.OffsetV
	var hs []lockin.Harmonic
	for _, l := range rec.Columns.Harmonics {
		h, err := lockin.ParseHarmonic(l)
		if err != nil {
			t.Fatal(err)
		}
		hs = append(hs, h)
	}
	for i, rp := range rec.Meta.Raw.Points {
		p := rec.Points[rp.Point]
		var x, ph []float64
		prev, un := math.NaN(), 0.0
		for k := rp.FirstFrame; k < rp.FirstFrame+rp.Frames; k++ {
			row := w.Data[int(k)*w.Channels:]
			x = append(x, (float64(row[0])-off)/cal)
			frac := float64(row[1])
			if !math.IsNaN(prev) {
				d := frac - prev
				un += d - math.Round(d)
			} else {
				un = frac
			}
			prev = frac
			ph = append(ph, un)
		}
		l, err := lockin.New(lockin.Config{Harmonics: hs, Cycles: p.MeasureCycles, RateHz: w.RateHz})
		if err != nil {
			t.Fatal(err)
		}
		var z complex128
		got := false
		for len(ph) > 0 && !got {
			n, done := l.Push(x, nil, ph)
			if done {
				z, got = l.Result().At(0, 0), true
			}
			x, ph = x[n:], ph[n:]
		}
		if !got {
			t.Fatalf("point %d: the captured frames hold no whole block of %d cycles", i, p.MeasureCycles)
		}
		want := cmplx.Rect(p.Amp[0], p.PhaseDeg[0]*math.Pi/180)
		if e := cmplx.Abs(z-want) / cmplx.Abs(want); e > 1e-5 {
			t.Errorf("point %d at %.4f Hz: replayed %v, logged %v (relative error %.2g)", i, p.FreqSetHz, z, want, e)
		}
	}

	// The replay source hands the capture back block by block.
	rp, err := acquire.OpenReplay(raw, rec.Meta.Raw.Channels[:1], 80)
	if err != nil {
		t.Fatal(err)
	}
	if err := rp.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	frames := 0
	for b := range rp.Blocks() {
		for i := 0; i < b.Frames; i++ {
			if b.Data[i] != float64(w.Data[(frames+i)*w.Channels]) {
				t.Fatalf("replayed frame %d differs", frames+i)
			}
		}
		// The drive starts a block or two after the capture does.
		if b.PhaseCyc == nil || (b.Seq > 4 && b.DriveHz <= 0) {
			t.Fatalf("replayed block %d lacks the drive (phase %v, %g Hz)", b.Seq, b.PhaseCyc != nil, b.DriveHz)
		}
		frames += b.Frames
		rp.Release(b)
	}
	rp.Close()
	if frames != w.Frames {
		t.Errorf("replayed %d frames of %d", frames, w.Frames)
	}
}
