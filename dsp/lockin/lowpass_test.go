package lockin

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/mathext"
)

// rcTable holds the published properties of n identical first-order
// stages (REFERENCES.md §4, rows [CALC] from the formulas
// ENBW = (1/(4τ))·(2n−3)!!/(2n−2)!! and y(t) = 1 − e^{−x}Σ_{k<n}x^k/k!;
// the 6 and 12 dB/oct ENBW 1/(4τ), 1/(8τ) are [DOC] from a lock-in
// instrument manual, and the 99 % times 4.605, 6.638, 8.406, 10.045 τ are
// [DOC] from an online lock-in filter calculator).
var rcTable = []struct {
	n         int
	enbwTau   float64 // ENBW·τ
	t99, t999 float64 // settling to 99 % and 99.9 %, in τ
}{
	{1, 1.0 / 4, 4.605, 6.908},
	{2, 1.0 / 8, 6.638, 9.233},
	{3, 3.0 / 32, 8.406, 11.229},
	{4, 5.0 / 64, 10.045, 13.062},
}

// TestRCNoiseBandwidth checks the closed form against the table.
func TestRCNoiseBandwidth(t *testing.T) {
	tau := 20 * time.Millisecond
	for _, row := range rcTable {
		got := RCNoiseBandwidthHz(row.n, tau)
		want := row.enbwTau / tau.Seconds()
		// Exact fractions: only rounding separates them.
		if math.Abs(got-want) > 1e-12*want {
			t.Errorf("n=%d: ENBW %.15g Hz, want %.15g", row.n, got, want)
		}
	}
	if RCNoiseBandwidthHz(0, tau) != 0 || RCNoiseBandwidthHz(1, 0) != 0 {
		t.Error("ENBW of a bad filter is not 0")
	}
}

// TestRCSettleTime checks the step-response solver against the table
// (3 decimals, so ±5e−4 τ) and against gonum's inverse of the regularised
// lower incomplete gamma function, which the step response is.
func TestRCSettleTime(t *testing.T) {
	tau := time.Second
	for _, row := range rcTable {
		for _, fr := range []struct{ frac, want float64 }{{0.99, row.t99}, {0.999, row.t999}} {
			got := RCSettleTime(row.n, tau, fr.frac).Seconds()
			if math.Abs(got-fr.want) > 5e-4 {
				t.Errorf("n=%d %g: %.6f τ, table %.3f τ", row.n, fr.frac, got, fr.want)
			}
			ref := mathext.GammaIncRegInv(float64(row.n), fr.frac)
			// 1e−9 relative: both solve the same equation to near
			// machine precision; a Duration has 1 ns resolution.
			if math.Abs(got-ref) > 1e-9*ref {
				t.Errorf("n=%d %g: %.12f τ, gonum %.12f τ", row.n, fr.frac, got, ref)
			}
		}
	}
	if RCSettleTime(1, tau, 0) != 0 || RCSettleTime(1, tau, 1) != time.Duration(math.MaxInt64) {
		t.Error("settle time at frac 0 or 1 wrong")
	}
}

// lowPassAtDC returns a one-harmonic LowPass LockIn whose drive phase the
// test holds at 0: the mixer is then the identity (times 2), so Value is
// twice the filter's response to x.
func lowPassAtDC(t *testing.T, order int, tau time.Duration, rate float64) *LockIn {
	l, err := New(Config{Harmonics: []Harmonic{{1, 1}}, Mode: LowPass, Order: order, TimeConstant: tau, RateHz: rate})
	if err != nil {
		t.Fatal(err)
	}
	return l
}

// TestLowPassNoiseBandwidth measures the implemented filter's equivalent
// noise bandwidth from its impulse response h_n (fed one frame at a time),
// ENBW = f_s·Σh²/(2(Σh)²) (Parseval), against the table.
func TestLowPassNoiseBandwidth(t *testing.T) {
	// tol: relative. The filter is discretised exactly per stage for a
	// held input, but each stage sees the previous stage's sampled
	// output, an O(Δt/τ) = 1e−3 approximation of the continuous cascade;
	// the measured differences are below 5e−4.
	const tol = 1e-3
	const rate = 10000.0
	tau := 100 * time.Millisecond // 1000 samples
	x := []float64{0}
	ph := []float64{0}
	for _, row := range rcTable {
		l := lowPassAtDC(t, row.n, tau, rate)
		var s1, s2 float64
		for i := 0; i < 60*1000; i++ {
			x[0] = 0
			if i == 0 {
				x[0] = 1
			}
			l.Push(x, nil, ph)
			h := real(l.Value(0, 0)) / 2
			s1 += h
			s2 += h * h
		}
		got := rate * s2 / (2 * s1 * s1)
		want := row.enbwTau / tau.Seconds()
		if e := math.Abs(got-want) / want; e > tol {
			t.Errorf("n=%d: measured ENBW %.6f Hz, table %.6f Hz (rel err %.2e)", row.n, got, want, e)
		}
		if e := math.Abs(l.NoiseBandwidthHz()-want) / want; e > 1e-12 {
			t.Errorf("n=%d: NoiseBandwidthHz %.6f, want %.6f", row.n, l.NoiseBandwidthHz(), want)
		}
		t.Logf("n=%d: measured ENBW·τ = %.6f (table %.6f)", row.n, got*tau.Seconds(), row.enbwTau)
	}
}

// TestLowPassSettling measures when the implemented filter's step response
// reaches 99 % and 99.9 %, against the table and against SettleTime.
func TestLowPassSettling(t *testing.T) {
	// tol: in τ. The table has 3 decimals (±5e−4 τ); the discrete
	// cascade leads the continuous one by O(nΔt) = up to 4e−4 τ at
	// Δt = τ/10⁴.
	const tol = 1e-3
	const rate = 10000.0
	tau := time.Second  // 10⁴ samples
	x := []float64{0.5} // Value → 2·0.5 = 1
	ph := []float64{0}
	for _, row := range rcTable {
		l := lowPassAtDC(t, row.n, tau, rate)
		fracs := []float64{0.99, 0.999}
		want := []float64{row.t99, row.t999}
		got := make([]float64, 2)
		prev := 0.0
		for i := 0; got[1] == 0; i++ {
			l.Push(x, nil, ph)
			v := real(l.Value(0, 0))
			for k, fr := range fracs {
				if got[k] == 0 && v >= fr {
					// Frame i holds the response at (i+1)Δt after the
					// step; interpolate the crossing.
					got[k] = (float64(i) + (fr-prev)/(v-prev)) / rate
				}
			}
			prev = v
			if i > 20*int(rate) {
				t.Fatalf("n=%d: never settled (at %g)", row.n, v)
			}
		}
		for k := range fracs {
			if math.Abs(got[k]-want[k]) > tol {
				t.Errorf("n=%d: %g reached at %.5f τ, table %.3f τ", row.n, fracs[k], got[k], want[k])
			}
			if st := l.SettleTime(fracs[k]).Seconds(); math.Abs(st-want[k]) > 5e-4 {
				t.Errorf("n=%d: SettleTime(%g) = %.5f τ, table %.3f τ", row.n, fracs[k], st, want[k])
			}
		}
		t.Logf("n=%d: 99%% at %.5f τ, 99.9%% at %.5f τ", row.n, got[0], got[1])
	}
}

// TestLowPassNonUniformTimes checks that with jittered sample times the
// step response follows the continuous one, 1 − e^{−x}Σ_{k<n}x^k/k! at
// x = t/τ (the regularised incomplete gamma function, from gonum): α is
// computed from each frame's actual interval.
func TestLowPassNonUniformTimes(t *testing.T) {
	// tol: absolute on a unit step. The per-stage discretisation is
	// exact for the first stage; later stages see a sampled input, an
	// O(Δt/τ) = 1e−3 error times the response's slope (below 0.4/τ).
	const tol = 1e-3
	const rate = 1000.0
	tau := time.Second
	rng := rand.New(rand.NewPCG(4, 4))
	for _, row := range rcTable {
		l := lowPassAtDC(t, row.n, tau, rate)
		tt := []float64{0}
		x := []float64{0.5}
		ph := []float64{0}
		tn := 0.0
		worst := 0.0
		for i := 0; i < 15*int(rate); i++ {
			if i > 0 {
				tn += (1 + 0.8*(rng.Float64()-0.5)) / rate
			}
			tt[0] = tn
			l.Push(x, tt, ph)
			// The first frame is taken 1/RateHz after the step.
			want := mathext.GammaIncReg(float64(row.n), (tn+1/rate)/tau.Seconds())
			worst = math.Max(worst, math.Abs(real(l.Value(0, 0))-want))
		}
		if worst > tol {
			t.Errorf("n=%d: worst deviation from the continuous step response %.2e", row.n, worst)
		}
		t.Logf("n=%d: worst deviation %.2e", row.n, worst)
	}
}

// TestLowPassTone checks that the smoothed values of a steady signal made
// of the configured harmonics converge to their exact complex amplitudes.
// After 30τ the step response of a 4th-order filter is within 5e−10 of 1
// (REFERENCES.md §4 formula); the mixing products nearest DC are at half
// the drive frequency (harmonics 1/2 and 1), attenuated by
// |H(500 Hz)| = (1+(2π·500·0.05)²)^{−2} ≈ 2e−9 here.
//
// With jittered frame times the mixing products also alias into the
// output: the first stage integrates the mix as linear between frames, and
// over uneven intervals that quadrature of a product oscillating at ω
// leaves about (ωΔ)²/4·(σ_Δ/Δ)·√(Δ/τ) of its amplitude (Δ the mean
// interval, σ_Δ its spread; derived here, not from a source). The worst
// product at 1 kHz is the 5th harmonic's own mirror at 10 kHz, 4.8 frames
// per cycle: (1.31)²/4·0.20·0.020 = 1.8e−3 of the 5th harmonic; at 100 Hz
// (480 frames per cycle) it is 1.8e−5. These are rms values of a random
// error (the seeded jitter fixes one draw of it), so the tolerances are
// 5.5 times them.
func TestLowPassTone(t *testing.T) {
	const rate = 48000.0
	cases := []struct {
		f, jitter float64
		tol       float64 // relative per harmonic
	}{ // τ is 50 drive cycles
		// Uniform: ripple 2e−9 of the fundamental is 4e−8 of the
		// smallest harmonic (0.05).
		{1000, 0, 1e-7},
		// Jittered (±25 % of a frame): 5.5× the aliasing estimate.
		{1000, 0.5, 1e-2},
		{100, 0.5, 1e-4},
	}
	for _, tc := range cases {
		f, jitter, tol := tc.f, tc.jitter, tc.tol
		tau := time.Duration(50 / f * float64(time.Second))
		n := int(30 * tau.Seconds() * rate)
		s := makeStream(2, n, rate, f, 0.25, jitter, 0, 0, jitter != 0, 8)
		l, err := New(Config{Harmonics: testHarmonics, Channels: 2, Mode: LowPass, Order: 4, TimeConstant: tau, RateHz: rate})
		if err != nil {
			t.Fatal(err)
		}
		for a := 0; a < n; a += 1000 {
			b := min(n, a+1000)
			var tt []float64
			if s.t != nil {
				tt = s.t[a:b]
			}
			if k, done := l.Push(s.x[2*a:2*b], tt, s.ph[a:b]); k != b-a || done {
				t.Fatalf("LowPass Push returned (%d, %v), want (%d, false)", k, done, b-a)
			}
		}
		r := l.Result()
		worst := 0.0
		for ch := 0; ch < 2; ch++ {
			off, cs := testSignal(ch)
			for h, c := range cs {
				e := relErr(l.Value(ch, h), c.z)
				if e > tol {
					t.Errorf("f %g jitter %g ch %d harmonic %v: %v, want %v (rel err %.2e)", f, jitter, ch, c.h, l.Value(ch, h), c.z, e)
				}
				worst = math.Max(worst, e)
				if r.At(ch, h) != l.Value(ch, h) {
					t.Errorf("Result.At and Value differ")
				}
			}
			if e := math.Abs(l.Offset(ch) - off); e > tol {
				t.Errorf("jitter %g ch %d offset %v, want %v", jitter, ch, l.Offset(ch), off)
			}
		}
		if !r.OK || r.Samples != n {
			t.Errorf("Result: OK %v, Samples %d (want %d)", r.OK, r.Samples, n)
		}
		t.Logf("f %g jitter %g: worst relative error %.2e", f, jitter, worst)
	}
}
