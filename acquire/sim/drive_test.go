package sim

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// refRig is a quiet rig whose second channel is the drive u(t) itself
// (1 V per drive unit, no offset).
func refRig() Config {
	c := quiet(Demo())
	c.RefChannel, c.RefVPerUnit, c.RefOffsetV = true, 1, 0
	return c
}

// lockedBuffer is a bytes.Buffer safe to write from the rig's goroutine.
type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// logLine is one parsed drive log line.
type logLine struct{ t, hz, amp float64 }

func parseDriveLog(t *testing.T, s string) []logLine {
	t.Helper()
	lines := strings.Split(strings.TrimSuffix(s, "\n"), "\n")
	if len(lines) == 0 || lines[0] != strings.TrimSuffix(driveLogHeader, "\n") {
		t.Fatalf("drive log header %q, want %q", lines[0], driveLogHeader)
	}
	var out []logLine
	for i, l := range lines[1:] {
		f := strings.Split(l, ",")
		if len(f) != 3 {
			t.Fatalf("drive log line %d %q: want 3 fields", i+2, l)
		}
		var v [3]float64
		for j := range f {
			x, err := strconv.ParseFloat(f[j], 64)
			if err != nil {
				t.Fatalf("drive log line %d %q: %v", i+2, l, err)
			}
			v[j] = x
		}
		out = append(out, logLine{v[0], v[1], v[2]})
	}
	return out
}

// TestPhaseContinuity changes the drive frequency between two blocks and
// checks that the drive's phase, and so the drive signal itself, does not
// jump: the accumulator steps by the old f/fs into the new block and by the
// new f/fs after it; the measured drive equals DriveAmp·cos(2π·PhaseCyc)
// (acquire.Block's contract); and no sample-to-sample change of the drive
// exceeds its largest possible slope 2π·f·A per second times 1/fs (mean
// value theorem on A·cos(2πft + φ); common practice) — a phase jump of even
// 0.01 cycle at these frequencies would exceed it several times over.
func TestPhaseContinuity(t *testing.T) {
	// phaseTol: cycles; the phase is ~50 cycles, rounding ~1e-14.
	const phaseTol = 1e-12
	// sigTol: drive units; the measured drive and A·cos(2πφ) are the same
	// arithmetic up to rounding of 2πφ (~1e-14 rad on 300 rad).
	const sigTol = 1e-11
	cfg := refRig()
	const A = 0.3
	for _, c := range []struct{ f1, f2 float64 }{
		{30, 45}, {45, 30.5}, {37.123, 37.173}, {12.5, 150}, {150, 0},
	} {
		t.Run(fmt.Sprintf("%g-to-%gHz", c.f1, c.f2), func(t *testing.T) {
			b := startRig(t, cfg, Options{Virtual: true})
			b.set(c.f1, A)
			b.skipS(1) // past the 0.5 s ramp
			old := b.next()
			b.set(c.f2, A) // before the release: takes effect from the next block
			lastPh := old.PhaseCyc[old.Frames-1]
			lastU := old.Data[2*(old.Frames-1)+1]
			checkBlock := func(blk *acquire.Block, f float64) {
				for i := 0; i < blk.Frames; i++ {
					u := blk.Data[2*i+1]
					if want := A * math.Cos(2*math.Pi*blk.PhaseCyc[i]); math.Abs(u-want) > sigTol {
						t.Fatalf("block %d frame %d: drive %.15g, A·cos(2πφ) %.15g", blk.Seq, i, u, want)
					}
					if i > 0 {
						if d := blk.PhaseCyc[i] - blk.PhaseCyc[i-1]; math.Abs(d-f/cfg.RateHz) > phaseTol {
							t.Fatalf("block %d frame %d: phase step %.15g, want f/fs = %.15g", blk.Seq, i, d, f/cfg.RateHz)
						}
					}
				}
			}
			checkBlock(old, c.f1)
			if old.DriveHz != c.f1 {
				t.Errorf("old block DriveHz %g, want %g", old.DriveHz, c.f1)
			}
			b.src.Release(old)
			nb := b.next()
			defer b.src.Release(nb)
			if nb.Seq != old.Seq+1 || nb.Flags != 0 {
				t.Fatalf("new block seq %d flags %v after %d", nb.Seq, nb.Flags, old.Seq)
			}
			if nb.DriveHz != c.f2 || nb.DriveAmp != A {
				t.Errorf("new block drive %g Hz %g, want %g Hz %g", nb.DriveHz, nb.DriveAmp, c.f2, A)
			}
			checkBlock(nb, c.f2)
			if d := nb.PhaseCyc[0] - lastPh; math.Abs(d-c.f1/cfg.RateHz) > phaseTol {
				t.Errorf("phase step across the change %.15g cycles, want the old f/fs = %.15g", d, c.f1/cfg.RateHz)
			}
			maxStep := 2 * math.Pi * math.Max(c.f1, c.f2) * A / cfg.RateHz
			if d := math.Abs(nb.Data[1] - lastU); d > maxStep*(1+1e-9) {
				t.Errorf("drive changed by %.4g across the frequency change, more than its largest slope allows (%.4g)", d, maxStep)
			}
		})
	}
}

// TestRamp turns the drive on and off and checks the amplitude ramp: the
// measured drive follows A(t)·cos(2πφ) with A(t) the documented ramp
// (raised cosine a + (b−a)(1−cos(πτ/T))/2, or linear), the amplitude never
// changes by more than the ramp's largest slope allows (π(b−a)/(2T) or
// (b−a)/T), and Off, called while the consumer holds a block and reads
// nothing, still completes in virtual time with the amplitude at zero.
func TestRamp(t *testing.T) {
	// sigTol: drive units, rounding of the same arithmetic.
	const sigTol = 1e-12
	const A = 0.25
	for _, shape := range []RampShape{RaisedCosine, Linear} {
		t.Run(shape.String(), func(t *testing.T) {
			cfg := refRig()
			cfg.Ramp = 200 * time.Millisecond
			cfg.RampShape = shape
			T := cfg.Ramp.Seconds()
			s := func(r float64) float64 { // ramp shape on [0, 1]
				r = math.Min(math.Max(r, 0), 1)
				if shape == Linear {
					return r
				}
				return (1 - math.Cos(math.Pi*r)) / 2
			}
			slope := A / T // largest |dA/dt|
			if shape == RaisedCosine {
				slope = math.Pi * A / (2 * T)
			}
			var log lockedBuffer
			b := startRig(t, cfg, Options{Virtual: true, DriveLog: &log})
			first := b.next() // made at Start, before any Set: drive off
			if first.DriveAmp != 0 {
				t.Fatalf("first block amplitude %g before any Set", first.DriveAmp)
			}
			b.set(40, A)
			b.src.Release(first)
			var t0 float64 // the ramp starts at the first frame of the next block
			prevA := 0.0
			for k := 0; k < 20; k++ { // 0.4 s: ramp and beyond
				blk := b.next()
				if k == 0 {
					t0 = blk.StartS
				}
				for i := 0; i < blk.Frames; i++ {
					want := A * s((blk.Frame(i)-t0)/T) * math.Cos(2*math.Pi*blk.PhaseCyc[i])
					if u := blk.Data[2*i+1]; math.Abs(u-want) > sigTol {
						t.Fatalf("t = %.5f s: drive %.15g, ramp formula %.15g", blk.Frame(i), u, want)
					}
				}
				if want := A * s((blk.Frame(blk.Frames-1)-t0)/T); math.Abs(blk.DriveAmp-want) > sigTol {
					t.Errorf("block %d DriveAmp %.15g, ramp formula %.15g", blk.Seq, blk.DriveAmp, want)
				}
				if d := blk.DriveAmp - prevA; d < 0 || d > slope*0.02*(1+1e-9) {
					t.Errorf("block %d: amplitude rose by %.4g in 20 ms, the ramp allows 0 … %.4g", blk.Seq, d, slope*0.02)
				}
				prevA = blk.DriveAmp
				b.src.Release(blk)
			}
			if got := b.drv.Amp(); got != A {
				t.Fatalf("Amp() = %g after the ramp, want %g", got, A)
			}

			// Off while holding a block and reading nothing.
			held := b.next()
			ctx, cancel := context.WithTimeout(context.Background(), watchdog)
			defer cancel()
			if err := b.drv.Off(ctx); err != nil {
				t.Fatalf("Off: %v", err)
			}
			if got := b.drv.Amp(); got != 0 {
				t.Errorf("Amp() = %g after Off, want 0", got)
			}
			if err := b.drv.Off(ctx); err != nil { // already off: at once
				t.Errorf("second Off: %v", err)
			}
			b.src.Release(held)
			if err := b.rig.Close(); err != nil {
				t.Fatal(err)
			}
			lines := parseDriveLog(t, log.String())
			// From the Off on, the logged amplitude falls to zero without a
			// step and stays there.
			offFrom := -1
			for i, l := range lines {
				if l.t > held.StartS && l.amp < A && offFrom < 0 {
					offFrom = i
				}
			}
			if offFrom < 0 {
				t.Fatal("no ramp down in the drive log")
			}
			prev := A
			for _, l := range lines[offFrom:] {
				if d := prev - l.amp; d < 0 || d > slope*0.02*(1+1e-9) {
					t.Errorf("t = %.3f s: amplitude fell by %.4g in a block, the ramp allows 0 … %.4g", l.t, d, slope*0.02)
				}
				prev = l.amp
			}
			if prev != 0 {
				t.Errorf("drive log ends at amplitude %g, want 0", prev)
			}
			if n := len(lines) - offFrom; n < int(T/0.02) {
				t.Errorf("ramp down over %d blocks, want at least %d (%.1f s)", n, int(T/0.02), T)
			}
		})
	}
}

// TestDriveLimits checks that Set refuses what the rig cannot do and, when
// it does, changes nothing.
func TestDriveLimits(t *testing.T) {
	cfg := refRig()
	b := startRig(t, cfg, Options{Virtual: true})
	b.set(37, 0.1)
	b.skipS(1)
	for _, c := range []struct {
		f, amp float64
		want   error
	}{
		{37, cfg.MaxAmp * 1.0001, acquire.ErrDriveLimit},
		{37, math.Inf(1), acquire.ErrDriveLimit},
		{37, -0.1, ErrAmplitude},
		{37, math.NaN(), ErrAmplitude},
		{-1, 0.1, ErrFrequency},
		{cfg.RateHz / 2, 0.1, ErrFrequency},
		{math.NaN(), 0.1, ErrFrequency},
		{math.Inf(1), 0.1, ErrFrequency},
	} {
		err := b.drv.Set(c.f, c.amp)
		if !errors.Is(err, c.want) {
			t.Errorf("Set(%g, %g) = %v, want %v", c.f, c.amp, err, c.want)
		}
	}
	blk := b.next()
	if blk.DriveHz != 37 || blk.DriveAmp != 0.1 {
		t.Errorf("after refused Sets the drive is %g Hz, %g; want 37 Hz, 0.1", blk.DriveHz, blk.DriveAmp)
	}
	b.src.Release(blk)
	if err := b.drv.Set(cfg.RateHz/2*0.999, cfg.MaxAmp); err != nil {
		t.Errorf("Set at the limits: %v", err)
	}
	if info := b.drv.Info(); info.MaxAmp != cfg.MaxAmp || !info.Coherent || info.Unit != "A" || info.Kind != "sim" {
		t.Errorf("Info() = %+v", info)
	}
}

// TestOffBeforeStart: Off on a rig that has not started returns at once
// and cancels an earlier Set.
func TestOffBeforeStart(t *testing.T) {
	r, err := New(refRig(), Options{Virtual: true})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if err := r.Drive().Set(30, 0.2); err != nil {
		t.Fatal(err)
	}
	if err := r.Drive().Off(context.Background()); err != nil {
		t.Fatalf("Off before Start: %v", err)
	}
	if err := r.Source().Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	for range 40 {
		blk := <-r.Source().Blocks()
		if blk.DriveAmp != 0 {
			t.Fatalf("block %d amplitude %g after Off", blk.Seq, blk.DriveAmp)
		}
		r.Source().Release(blk)
	}
}
