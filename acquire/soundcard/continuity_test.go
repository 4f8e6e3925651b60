package soundcard

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/sweeplock/sweeplock/acquire"
)

// q16 rounds to 16 bits, as a 16-bit sound path does.
func q16(x float64) float32 { return float32(math.Round(x*32768) / 32768) }

// tone makes n frames of a·cos(2π·f·(i+shift)/fs), rounded to 16 bits.
func tone(n int, f, a, fs float64, shift int) []float32 {
	x := make([]float32, n)
	for i := range x {
		x[i] = q16(a * math.Cos(2*math.Pi*f*float64(i+shift)/fs))
	}
	return x
}

// scanAll runs x through d in windows of w and returns the windows that
// reported a slip.
func scanAll(d *slipDetector, x []float32, w int) []int {
	var hits []int
	for s, k := 0, 0; s < len(x); s, k = s+w, k+1 {
		if d.scan(x, s, 1, min(w, len(x)-s)) {
			hits = append(hits, k)
		}
	}
	return hits
}

// TestSlipDetectorCatches checks the guarantee derived in slipDetector: a
// break of k frames with |sin(ωk/2)| > slipRel is caught wherever it falls
// (the residual on one of the two samples after it is at least
// 2A·|sin(ωk/2)|·sin(ω/2)), through 16-bit rounding.
func TestSlipDetectorCatches(t *testing.T) {
	const fs, a, w = 48000.0, 0.4, 2048
	rng := rand.New(rand.NewPCG(3, 5))
	for _, f := range []float64{1000, 97.3, 5000, 15000} {
		omega := 2 * math.Pi * f / fs
		for _, k := range []int{1, 2, 3, 7, 17, 100, 1000, -1, -5, -300} { // negative: frames repeated
			if math.Abs(math.Sin(omega*float64(k)/2)) <= 1.2*slipRel {
				continue // too near a whole number of cycles: not guaranteed
			}
			for trial := range 8 {
				p := w + rng.IntN(3*w) // where the break falls
				head := tone(p, f, a, fs, 0)
				tail := tone(4*w, f, a, fs, p+k)
				x := append(head, tail...)
				d := newSlipDetector(w, 0)
				d.retune(omega)
				hits := scanAll(&d, x, w)
				win := p / w
				if p%w == w-1 {
					win = -1 // the second residual falls in the next window: either
				}
				ok := len(hits) == 1 && (hits[0] == p/w || (win == -1 && hits[0] == p/w+1))
				if !ok {
					t.Fatalf("f %g Hz, break of %d frames at %d (trial %d): windows %v flagged, want only %d",
						f, k, p, trial, hits, p/w)
				}
			}
		}
	}
}

// TestSlipDetectorQuiet checks that nothing legitimate counts as a slip:
// noise, a raised-cosine ramp from silence, a phase-continuous frequency
// change of 5 % heard a path delay after the generator changed, a tone
// with a DC offset and a third harmonic, and silence; and that a break by
// a whole number of cycles is (as derived) invisible.
func TestSlipDetectorQuiet(t *testing.T) {
	const fs, w = 48000.0, 2048
	rng := rand.New(rand.NewPCG(9, 1))
	gen := func(f1, f2 float64, a float64, rampFrames, switchAt, n int) []float32 {
		g := newGenerator(rampFrames, 1)
		g.retune(phaseInc(f1, fs), f1)
		g.target(a)
		x := make([]float32, n)
		for i := range x {
			if i == switchAt {
				g.retune(phaseInc(f2, fs), f2)
			}
			v, _ := g.next()
			x[i] = q16(v)
		}
		return x
	}
	for _, tc := range []struct {
		name     string
		x        []float32
		f        float64 // frequency the detector is told before
		f2       float64 // ... and after retuneAt
		retuneAt int     // frame at which the detector is told (-1: never)
	}{
		{"noise on a tone", func() []float32 {
			x := tone(40*w, 1000, 0.3, fs, 0)
			for i := range x {
				x[i] += float32(rng.NormFloat64() * 1e-3)
			}
			return x
		}(), 1000, 0, -1},
		{"ramp from silence", gen(440, 440, 0.5, 9600, -1, 20*w), 440, 0, -1},
		{"5% step, heard 0.3 s late", gen(1000, 1050, 0.4, 480, 10*w+14400, 20*w), 1000, 1050, 10 * w},
		{"low tone, 5% step", gen(40, 42, 0.4, 4800, 10*w+500, 30*w), 40, 42, 10 * w},
		// At 8 kHz an 8 % step leaves the stale frequency's residual above
		// the threshold, so only the hold keeps it quiet (see below).
		{"8 kHz, 8% step, heard 0.3 s late", gen(8000, 8640, 0.4, 480, 10*w+14400, 20*w), 8000, 8640, 10 * w},
		{"DC and harmonic", func() []float32 {
			x := make([]float32, 20*w)
			for i := range x {
				ph := 2 * math.Pi * 300 * float64(i) / fs
				x[i] = q16(0.02 + 0.4*math.Cos(ph) + 0.004*math.Cos(3*ph+1))
			}
			return x
		}(), 300, 0, -1},
		{"silence", make([]float32, 10*w), 1000, 0, -1},
		{"whole-cycle break", append(tone(3*w+100, 1000, 0.4, fs, 0), tone(3*w, 1000, 0.4, fs, 3*w+100+48)...), 1000, 0, -1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			d := newSlipDetector(w, uint64(fs)) // candidates kept 1 s
			d.retune(2 * math.Pi * tc.f / fs)
			var hits []int
			for s, k := 0, 0; s < len(tc.x); s, k = s+w, k+1 {
				if s == tc.retuneAt {
					d.retune(2 * math.Pi * tc.f2 / fs)
				}
				if d.scan(tc.x, s, 1, min(w, len(tc.x)-s)) {
					hits = append(hits, k)
				}
			}
			if len(hits) > 0 {
				t.Fatalf("windows %v flagged", hits)
			}
		})
	}
	t.Run("break during the path delay", func(t *testing.T) {
		// The generator has changed frequency (8 %) but the input still
		// carries the old one for 0.3 s (the path delay). The old frequency
		// is held as a candidate, so a 1-frame break in that stretch is
		// caught, and the change itself, when it arrives, is not flagged.
		const f1, f2 = 8000.0, 8640.0
		x := gen(f1, f2, 0.4, 480, 10*w+14400, 20*w)
		brk := append(append([]float32(nil), x[:12*w+99]...), x[12*w+100:]...)
		d := newSlipDetector(w, uint64(fs))
		d.retune(2 * math.Pi * f1 / fs)
		var hits []int
		for s := 0; s < len(brk); s += w {
			if s == 10*w {
				d.retune(2 * math.Pi * f2 / fs)
			}
			if d.scan(brk, s, 1, min(w, len(brk)-s)) {
				hits = append(hits, s/w)
			}
		}
		if len(hits) != 1 || hits[0] != 12 {
			t.Fatalf("windows %v flagged, want only 12 (the break)", hits)
		}
	})
}

// TestEngineSlip checks the engine's use of the detector: a break in the
// reference input marks that callback's block FlagGap and counts a slip;
// the response channel is not checked.
func TestEngineSlip(t *testing.T) {
	cfg := testConfig()
	e := newEngine(cfg, 8)
	e.deliver.Store(true)
	const f = 1000.0
	e.sp.Store(&setpoint{freqHz: f, inc: phaseInc(f, cfg.RateHz), amp: 0.4})
	n := cfg.FramesPerBuffer
	in := make([]float32, 2*n)
	out := make([]float32, 2*n)
	pos := 0
	for k := range 6 {
		if k == 3 {
			pos += 5 // 5 frames lost before this callback's input
		}
		for i := range n {
			v := q16(0.4 * math.Cos(2*math.Pi*f*float64(pos+i)/cfg.RateHz))
			in[2*i+cfg.ReferenceChannel] = v
			in[2*i+cfg.ResponseChannel] = v
			if k == 1 && i == 10 {
				in[2*i+cfg.ResponseChannel] = 0.9 // a spike on the response: not checked
			}
		}
		pos += n
		e.process(in, out, 0)
		b := <-e.blocks
		want := acquire.Flags(0)
		if k == 3 {
			want = acquire.FlagGap
		}
		if b.Flags != want {
			t.Fatalf("block %d: flags %v, want %v", k, b.Flags, want)
		}
		e.recycle(b)
	}
	if e.nSlips.Load() != 1 || e.nGaps.Load() != 1 {
		t.Fatalf("slips %d gaps %d, want 1 and 1", e.nSlips.Load(), e.nGaps.Load())
	}
}
