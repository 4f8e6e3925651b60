package soundcard

import (
	"math"
	"math/big"
	"testing"
)

// bigPhase returns n·inc/2⁶⁴ in cycles, exactly (math/big), as whole and
// fraction: the phase a 64-bit accumulator must hold after n steps.
func bigPhase(n, inc uint64) (whole int64, frac uint64) {
	p := new(big.Int).Mul(new(big.Int).SetUint64(n), new(big.Int).SetUint64(inc))
	mod := new(big.Int).Lsh(big.NewInt(1), 64)
	q, r := new(big.Int).QuoRem(p, mod, new(big.Int))
	return q.Int64(), r.Uint64()
}

// TestGeneratorPhase checks the phase accumulator against exact integer
// arithmetic, and its samples against A·cos(2π·n·f/fs): the accumulator has
// no drift (exact arithmetic; the DDS principle is common practice).
func TestGeneratorPhase(t *testing.T) {
	// roundTol: cos of the same phase in [0,1) computed by two routes.
	const roundTol = 1e-13
	for _, tc := range []struct {
		name   string
		fs, f  float64
		frames uint64
	}{
		{"1kHz at 48k", 48000, 1000, 1_000_000},
		{"irrational-ish", 44100, 1234.56789, 1_000_000},
		{"near Nyquist", 192000, 95999.5, 300_000},
		{"low", 96000, 0.37, 1_000_000},
	} {
		t.Run(tc.name, func(t *testing.T) {
			const amp = 0.5
			g := newGenerator(1, 1)
			inc := phaseInc(tc.f, tc.fs)
			// The step stands for f/fs to 2⁻⁵³ relative (float64 division)
			// plus half a unit of 2⁻⁶⁴; over n frames the phase then drifts
			// from n·f/fs by n times that, which sets the sample tolerance.
			made := new(big.Float).SetPrec(200).Quo(new(big.Float).SetUint64(inc), big.NewFloat(twoTo64))
			ratio := new(big.Float).SetPrec(200).Quo(big.NewFloat(tc.f), big.NewFloat(tc.fs))
			errCyc, _ := new(big.Float).Sub(made, ratio).Float64()
			rel, _ := ratio.Float64()
			if math.Abs(errCyc) > rel*0x1p-53+0x1p-65 {
				t.Fatalf("step %d stands for %g cycles/frame off f/fs, more than 2⁻⁵³ relative", inc, errCyc)
			}
			sampleTol := 2*math.Pi*amp*float64(tc.frames)*math.Abs(errCyc) + roundTol
			g.retune(inc, tc.f)
			g.target(amp)
			g.next() // the one-frame ramp: amplitude is amp from frame 1 on
			for n := uint64(1); n < tc.frames; n++ {
				if n%99991 == 1 || n == tc.frames-1 {
					w, fr := bigPhase(n, inc)
					if g.whole != w || g.frac != fr {
						t.Fatalf("frame %d: accumulator %d+%d/2⁶⁴, exact %d+%d/2⁶⁴", n, g.whole, g.frac, w, fr)
					}
					// n·f/fs computed in big.Float: the ideal phase.
					ideal := new(big.Float).SetPrec(200).Quo(
						new(big.Float).SetPrec(200).Mul(new(big.Float).SetUint64(n), big.NewFloat(tc.f)),
						big.NewFloat(tc.fs))
					whole, _ := ideal.Int(nil)
					fracPart, _ := new(big.Float).Sub(ideal, new(big.Float).SetInt(whole)).Float64()
					want := amp * math.Cos(2*math.Pi*fracPart)
					x, a := g.next()
					if a != amp || math.Abs(x-want) > sampleTol {
						t.Fatalf("frame %d: x=%.15g a=%g, want %.15g", n, x, a, want)
					}
					continue
				}
				g.next()
			}
		})
	}
}

// maxStep is the largest |x[n+1]−x[n]| a sine of amplitude a and
// frequency f may make at rate fs: by the mean value theorem, at most one
// sample period times the largest slope 2πfa (exact analytic bound).
func maxStep(f, a, fs float64) float64 { return 2 * math.Pi * f * a / fs }

// TestGeneratorRetune checks that a frequency change keeps the phase: the
// accumulator carries on from where it was (exact), so no sample step
// exceeds the sine's own largest slope. A generator that restarts its phase
// at the change breaks that bound (checked too, so the check can fail).
func TestGeneratorRetune(t *testing.T) {
	// slopeTol: rounding in cos and in float32-free float64 arithmetic only.
	const slopeTol = 1e-12
	const fs, a = 48000.0, 0.4
	for _, tc := range []struct {
		name     string
		f1, f2   float64
		switchAt uint64
	}{
		{"up 1000 to 1500 Hz", 1000, 1500, 12}, // 12 frames: phase 0.25 cycles, the worst place to restart
		{"down 2000 to 300 Hz", 2000, 300, 7_777},
		{"small step", 1000, 1000.01, 24_000},
	} {
		t.Run(tc.name, func(t *testing.T) {
			g := newGenerator(1, 1)
			i1, i2 := phaseInc(tc.f1, fs), phaseInc(tc.f2, fs)
			g.retune(i1, tc.f1)
			g.target(a)
			g.next()
			prev, _ := g.next()
			n := uint64(2)
			bound := maxStep(max(tc.f1, tc.f2), a, fs) * (1 + slopeTol)
			var naivePrev float64
			for ; n < tc.switchAt+2000; n++ {
				if n == tc.switchAt {
					g.retune(i2, tc.f2)
					naivePrev = prev
				}
				x, _ := g.next()
				if d := math.Abs(x - prev); d > bound {
					t.Fatalf("frame %d: step %g > largest slope step %g", n, d, bound)
				}
				if n == tc.switchAt+1000 {
					// Exact phase: switchAt steps of i1, then 1000 of i2.
					w1, f1 := bigPhase(tc.switchAt, i1)
					w2, f2 := bigPhase(1000, i2)
					// g has made frame n, so it holds the phase of frame n+1.
					w3, f3 := bigPhase(1, i2)
					sum := new(big.Int).Add(new(big.Int).SetUint64(f1), new(big.Int).SetUint64(f2))
					sum.Add(sum, new(big.Int).SetUint64(f3))
					mod := new(big.Int).Lsh(big.NewInt(1), 64)
					carry, frac := new(big.Int).QuoRem(sum, mod, new(big.Int))
					if g.whole != w1+w2+w3+carry.Int64() || g.frac != frac.Uint64() {
						t.Fatalf("after the change the phase is %d+%d/2⁶⁴, want %d+%s/2⁶⁴",
							g.whole, g.frac, w1+w2+w3+carry.Int64(), frac)
					}
				}
				prev = x
			}
			if tc.switchAt == 12 {
				// A restart at phase 0 after frame 11 (phase 11/48 cycles, x≈0.1):
				// the first restarted sample is a·cos(0) = 0.4, a step of ~0.3,
				// far above the bound (~0.08): the slope check catches it.
				if d := math.Abs(a - naivePrev); d <= bound {
					t.Fatalf("a phase restart steps by %g, within the bound %g: the check could not fail", d, bound)
				}
			}
		})
	}
}

// TestGeneratorRamp checks the raised-cosine ramp a(k) = a0 + (a1−a0)·
// (1−cos(πk/n))/2 (common practice), its largest step (π/2)|a1−a0|/n
// (its derivative's maximum, exact), the clamp at the limit and a new
// target in the middle of a ramp.
func TestGeneratorRamp(t *testing.T) {
	// ampTol: the ramp formula evaluated twice the same way; rounding only.
	const ampTol = 1e-15
	const n = 4800
	t.Run("formula", func(t *testing.T) {
		g := newGenerator(n, 1)
		g.retune(phaseInc(100, 48000), 100)
		g.target(0.5)
		for k := 0; k <= n+10; k++ {
			want := 0.5
			if k < n {
				want = 0.5 * 0.5 * (1 - math.Cos(math.Pi*float64(k)/n))
			}
			if _, a := g.next(); math.Abs(a-want) > ampTol {
				t.Fatalf("k=%d: a=%.17g, want %.17g", k, a, want)
			}
		}
		if g.ramping() {
			t.Fatal("still ramping after n frames")
		}
	})
	t.Run("largest step", func(t *testing.T) {
		g := newGenerator(n, 1)
		g.target(0.8)
		bound := math.Pi / 2 * 0.8 / n * (1 + 1e-9)
		_, prev := g.next()
		biggest := 0.0
		for range n + 5 {
			_, a := g.next()
			biggest = max(biggest, math.Abs(a-prev))
			prev = a
		}
		if biggest > bound {
			t.Fatalf("largest amplitude step %g > (π/2)·Δa/n = %g", biggest, bound)
		}
		// The bound is attained near mid-ramp to within the discretisation.
		if biggest < 0.999*bound {
			t.Fatalf("largest amplitude step %g well below the derivative's maximum %g: not a raised cosine", biggest, bound)
		}
	})
	t.Run("clamp", func(t *testing.T) {
		g := newGenerator(10, 0.3)
		g.target(5)
		for range 20 {
			if _, a := g.next(); a > 0.3 {
				t.Fatalf("amplitude %g above the limit 0.3", a)
			}
		}
		if g.amp != 0.3 {
			t.Fatalf("ended at %g, want the limit 0.3", g.amp)
		}
		g.target(-1)
		for range 20 {
			g.next()
		}
		if g.amp != 0 {
			t.Fatalf("negative target ended at %g, want 0", g.amp)
		}
	})
	t.Run("retarget mid-ramp", func(t *testing.T) {
		g := newGenerator(n, 1)
		g.target(0.8)
		_, prev := g.next()
		for range n / 2 {
			_, prev = g.next()
		}
		g.target(0.1) // down from about 0.4
		bound := math.Pi / 2 * 0.8 / n * (1 + 1e-9)
		for k := range n + 5 {
			_, a := g.next()
			if d := math.Abs(a - prev); d > bound {
				t.Fatalf("frame %d after the new target: amplitude step %g > %g", k, d, bound)
			}
			prev = a
		}
		if g.amp != 0.1 {
			t.Fatalf("ended at %g, want 0.1", g.amp)
		}
	})
}

// TestGeneratorNoDC checks that a whole burst — ramp up, hold, ramp down —
// carries almost no DC, as an AC-coupled output needs: integrating by parts
// twice, with a and a' zero at both ends,
//
//	|∫ a(t)·cos ωt dt| = |∫ a''(t)·cos ωt dt|/ω² ≤ ∫|a''| dt/ω² = 2πA/(ω²·T_ramp)
//
// for two raised-cosine ramps of height A (derived here; the sum over frames
// equals the integral to O(h⁴) by Euler–Maclaurin since the ends are flat).
// The same burst switched on and off without a ramp exceeds the bound
// tenfold, so the check can fail.
func TestGeneratorNoDC(t *testing.T) {
	const fs, f, a = 48000.0, 50.0, 0.5
	const rampS = 0.2
	w := 2 * math.Pi * f
	bound := 2 * math.Pi * a / (w * w * rampS)
	burst := func(rampFrames int) float64 {
		g := newGenerator(rampFrames, 1)
		g.retune(phaseInc(f, fs), f)
		g.target(a)
		sum := 0.0
		// Hold 10.25 cycles past the ramp: the worst case for a hard switch.
		hold := rampFrames + int(10.25*fs/f)
		for range hold {
			x, _ := g.next()
			sum += x
		}
		g.target(0)
		for range rampFrames + 10 {
			x, _ := g.next()
			sum += x
		}
		return sum / fs
	}
	if dc := burst(int(rampS * fs)); math.Abs(dc) > bound {
		t.Fatalf("ramped burst: ∫x dt = %g V·s, bound 2πA/(ω²T) = %g", dc, bound)
	}
	if dc := burst(1); math.Abs(dc) < 5*bound {
		t.Fatalf("hard-switched burst: ∫x dt = %g V·s, not above 5× the bound %g: the check cannot tell", dc, bound)
	}
}
