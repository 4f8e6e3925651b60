package sim

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/sweeplock/sweeplock/acquire"
)

// TestADC checks the converter: outputs on the code grid lo + k·Q with
// Q = FSR/2^N (IEEE Std 1241 code width; REFERENCES.md §2 [DOC]), rounding
// to the nearest code inside the range (error ≤ Q/2), clipping at the
// rails with the overload mark exactly on the end codes, and an rms
// rounding error of Q/√12 for inputs spread over many codes (the uniform
// quantisation-noise model, Bennett, Bell Syst. Tech. J. 27, 1948; the same
// Q/√12 as in IEEE 1241's ENOB, REFERENCES.md §2).
func TestADC(t *testing.T) {
	// gridTol: codes; rounding of (v−lo)/Q for 24-bit codes.
	const gridTol = 1e-6
	// rmsTol: relative; 200000 uniform inputs give the rms of the error
	// to ±0.1 % (1 σ: half of (2/√5)/√N, 2/√5 being the relative sd of e²
	// for e uniform on ±Q/2); 1.5 % also covers the 1-bit-wide edges.
	const rmsTol = 0.015
	rng := rand.New(rand.NewPCG(7, 8))
	for _, c := range []struct {
		bits   int
		lo, hi float64
	}{{12, 0, 3.3}, {16, -1, 1}, {8, -5, 5}, {1, 0, 1}, {24, -1, 1}} {
		t.Run(fmt.Sprintf("%dbit[%g,%g]", c.bits, c.lo, c.hi), func(t *testing.T) {
			a := newADC(c.bits, c.lo, c.hi)
			Q := (c.hi - c.lo) / math.Ldexp(1, c.bits)
			top := math.Ldexp(1, c.bits) - 1
			var se float64
			const n = 200000
			for range n {
				// Inputs from half the range below lo to half above hi.
				v := c.lo - 0.5*(c.hi-c.lo) + 2*(c.hi-c.lo)*rng.Float64()
				got, over := a.convert(v)
				k := (got - c.lo) / Q
				if math.Abs(k-math.Round(k)) > gridTol || k < -gridTol || k > top+gridTol {
					t.Fatalf("convert(%g) = %g: code %g is not on the grid 0 … %g", v, got, k, top)
				}
				k = math.Round(k)
				if wantOver := k == 0 || k == top; over != wantOver {
					t.Fatalf("convert(%g) = code %g, overload %v, want %v", v, k, over, wantOver)
				}
				switch {
				case v <= c.lo:
					if k != 0 {
						t.Fatalf("convert(%g) below the rail gave code %g, want 0", v, k)
					}
				case v >= c.lo+(top+0.5)*Q:
					if k != top {
						t.Fatalf("convert(%g) above the top code gave code %g, want %g", v, k, top)
					}
				default:
					if e := got - v; math.Abs(e) > Q/2*(1+1e-9) {
						t.Fatalf("convert(%g) = %g: error %g exceeds Q/2 = %g", v, got, e, Q/2)
					}
				}
			}
			// rms rounding error over inputs inside the range, many codes.
			if c.bits >= 8 {
				for range n {
					v := c.lo + Q + (c.hi-c.lo-3*Q)*rng.Float64()
					got, _ := a.convert(v)
					se += (got - v) * (got - v)
				}
				if rms, want := math.Sqrt(se/n), Q/math.Sqrt(12); math.Abs(rms/want-1) > rmsTol {
					t.Errorf("rms rounding error %.4g, want Q/√12 = %.4g", rms, want)
				}
			}
		})
	}
	t.Run("ideal", func(t *testing.T) {
		a := newADC(0, -1, 1)
		for _, c := range []struct {
			v, want float64
			over    bool
		}{{0.123456789, 0.123456789, false}, {-0.999, -0.999, false}, {1, 1, true}, {-3, -1, true}, {7, 1, true}} {
			if got, over := a.convert(c.v); got != c.want || over != c.over {
				t.Errorf("ideal convert(%g) = %g, %v; want %g, %v", c.v, got, over, c.want, c.over)
			}
		}
	})
}

// TestOverloadFlag drives the demo rig hard at resonance with too sensitive
// a probe: the ADC clips, the blocks carry FlagOverload, the stats count
// them and the clipped samples sit on the rails.
func TestOverloadFlag(t *testing.T) {
	cfg := Demo()
	cfg.SensVPerM = 30000 // 30 V/mm: even the lower branch (0.15 mm) swings ±4.5 V
	b := startRig(t, cfg, Options{Virtual: true})
	b.set(36.9, DemoDriveAmp)
	b.skipS(3)
	over, atRail := 0, 0
	top := cfg.ADCMaxV - cfg.ADCMaxV/4096
	for range 50 {
		blk := b.next()
		if blk.Flags&acquire.FlagOverload != 0 {
			over++
		}
		for _, v := range blk.Data {
			if v == 0 || v == top {
				atRail++
			}
			if v < 0 || v > top {
				t.Fatalf("sample %g V outside the converter's codes [0, %g]", v, top)
			}
		}
		b.src.Release(blk)
	}
	if over == 0 || atRail == 0 {
		t.Errorf("overloaded blocks %d, samples at a rail %d; want both > 0", over, atRail)
	}
	if s := b.src.Stats(); s.Overloads == 0 {
		t.Errorf("Stats().Overloads = 0 after %d overloaded blocks", over)
	}
}

// TestHighPass checks the AC coupling against the first-order RC high-pass
// H = jf/(fc + jf): gain f/√(f² + fc²), phase lead atan(fc/f) (standard
// result). At fc the pre-warped bilinear filter is exact; elsewhere the
// bilinear frequency warping, tan(πf/fs) against πf/fs, shifts it.
func TestHighPass(t *testing.T) {
	// gainTol, phaseTol: the warping changes f/fc by (π/fs)²(f²−fc²)/3,
	// at most 5e-5 relative here, which moves gain and phase by less than
	// that; 1e-4 also absorbs the 10 s start transient (e^{−2π·3·8} ≈ 0).
	const gainTol, phaseTol = 1e-4, 1e-4
	const fs, fc = 8000.0, 3.0
	for _, f := range []float64{1, 3, 10, 30, 120} {
		t.Run(fmt.Sprintf("%gHz", f), func(t *testing.T) {
			h := newHighPass(fc, fs)
			var i, q float64
			n := int(10 * fs) // 10 s, whole cycles of f
			m := int(fs)      // measure over the last second
			for k := range n {
				ph := 2 * math.Pi * f * float64(k) / fs
				y := h.step(1.65 + math.Cos(ph)) // with a DC bias to remove
				if k >= n-m {
					s, c := math.Sincos(ph)
					i, q = i+y*c, q+y*s
				}
			}
			gain := 2 * math.Hypot(i, q) / float64(m)
			phase := math.Atan2(-q, i)
			if want := f / math.Hypot(f, fc); math.Abs(gain-want) > gainTol {
				t.Errorf("gain %.6f, RC high-pass %.6f", gain, want)
			}
			if want := math.Atan(fc / f); math.Abs(phase-want) > phaseTol {
				t.Errorf("phase %.6f rad, RC high-pass lead %.6f rad", phase, want)
			}
		})
	}
}

// TestSensorPickup checks the sensor's additions on an undriven rig: the
// offset reaches the samples (DC-coupled) or is removed (AC-coupled), the
// white noise has the configured rms, and the hum has its amplitude at
// 50 or 60 Hz.
func TestSensorPickup(t *testing.T) {
	// noiseTol: relative; 40000 Gaussian samples give the rms to ±0.35 %
	// (1 σ = 1/√(2N)); 2 % is 5.7 σ.
	const noiseTol = 0.02
	// humTol: volts; the hum is read by demodulating 10 whole cycles with
	// no noise: exact to rounding.
	const humTol = 1e-12
	// dcTol: volts; a 3 Hz coupling has decayed a 1.65 V step by e^{−2π·3·8}
	// after 8 s; the filter starts charged, so it is ~0 from the start.
	const dcTol = 1e-9
	t.Run("noise", func(t *testing.T) {
		cfg := quiet(Demo())
		cfg.NoiseV, cfg.OffsetV = 0.002, 0.5
		b := startRig(t, cfg, Options{Virtual: true})
		var s, ss float64
		n := 0
		for range 500 {
			blk := b.next()
			for _, v := range blk.Data {
				s, ss, n = s+v, ss+(v-0.5)*(v-0.5), n+1
			}
			b.src.Release(blk)
		}
		if rms := math.Sqrt(ss / float64(n)); math.Abs(rms/cfg.NoiseV-1) > noiseTol {
			t.Errorf("noise rms %.5g V, want %.5g V", rms, cfg.NoiseV)
		}
		if mean := s / float64(n); math.Abs(mean-0.5) > 5*cfg.NoiseV/math.Sqrt(float64(n)) {
			t.Errorf("mean %.6g V, want the 0.5 V offset", mean)
		}
	})
	for _, hz := range []float64{50, 60} {
		t.Run(fmt.Sprintf("hum%g", hz), func(t *testing.T) {
			cfg := quiet(Demo())
			cfg.HumHz, cfg.HumV = hz, 0.004
			b := startRig(t, cfg, Options{Virtual: true})
			var i, q float64
			n := 0
			for range 10 { // 0.2 s: 10 or 12 whole cycles
				blk := b.next()
				for k, v := range blk.Data {
					s, c := math.Sincos(2 * math.Pi * hz * blk.Frame(k))
					i, q, n = i+v*c, q+v*s, n+1
				}
				b.src.Release(blk)
			}
			// Hum is HumV·sin(2π·f·t): all in the sine term.
			if amp := 2 * q / float64(n); math.Abs(amp-cfg.HumV) > humTol || math.Abs(2*i/float64(n)) > humTol {
				t.Errorf("hum: sine part %.6g V, cosine part %.3g V; want %.6g V and 0", amp, 2*i/float64(n), cfg.HumV)
			}
		})
	}
	t.Run("ac-coupled", func(t *testing.T) {
		cfg := quiet(Demo())
		cfg.OffsetV, cfg.HighPassHz = 1.65, 3
		b := startRig(t, cfg, Options{Virtual: true})
		for range 400 { // 8 s
			blk := b.next()
			for _, v := range blk.Data {
				if math.Abs(v) > dcTol {
					t.Fatalf("AC-coupled sample %g V at block %d; the 1.65 V offset should not pass", v, blk.Seq)
				}
			}
			b.src.Release(blk)
		}
	})
}
