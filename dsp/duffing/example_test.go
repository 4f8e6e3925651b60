package duffing_test

import (
	"fmt"
	"math"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// The steady states of a hardening resonator inside its bistable band.
func ExampleParams_Roots() {
	// f0 = 100 Hz, ζ = 0.05, static deflection 1 µm, γ = 0.018 (amplitudes in µm).
	p := duffing.FromNondim(duffing.Nondim{Zeta: 0.05, Gamma: 0.018}, 100, 1)
	for _, r := range p.Roots(nil, 125) {
		fmt.Printf("%.4f µm at %+.3f rad, stable %v\n", r.Amp, r.PhaseRad, r.Stable)
	}
	// Output:
	// 1.8894 µm at -2.903 rad, stable true
	// 5.7071 µm at -2.347 rad, stable false
	// 6.8697 µm at -1.033 rad, stable true
}

// Where an up-sweep and a down-sweep jump.
func ExampleParams_Folds() {
	p := duffing.FromNondim(duffing.Nondim{Zeta: 0.05, Gamma: 0.018}, 100, 1)
	for _, f := range p.Folds() {
		dir := "down-sweep"
		if f.UpSweep {
			dir = "up-sweep"
		}
		fmt.Printf("%s: %s at %.3f Hz, %.3f → %.3f µm\n", dir, f.Jump, f.FreqHz, f.Amp, f.LandAmp)
	}
	lo, hi, _ := p.Band()
	fmt.Printf("bistable %.3f–%.3f Hz\n", lo, hi)
	// Output:
	// down-sweep: jump up at 119.366 Hz, 3.437 → 6.269 µm
	// up-sweep: jump down at 133.003 Hz, 7.489 → 1.321 µm
	// bistable 119.366–133.003 Hz
}

// The scaled form and the onset of hysteresis.
func ExampleHysteresisOnset() {
	g, om := duffing.HysteresisOnset(0.05, false)
	fmt.Printf("γ_c = %.5g at Ω_c = %.5f\n", g, om)
	fmt.Println(len(duffing.Nondim{Zeta: 0.05, Gamma: 0.9 * g}.Folds()), "folds below the onset")
	fmt.Println(len(duffing.Nondim{Zeta: 0.05, Gamma: 1.1 * g}.Folds()), "folds above it")
	// Output:
	// γ_c = 0.002661 at Ω_c = 1.09035
	// 0 folds below the onset
	// 2 folds above it
}

// The third harmonic and the superharmonic resonance near f0/3.
func ExampleParams_ThirdHarmonic() {
	p := duffing.FromNondim(duffing.Nondim{Zeta: 0.05, Gamma: 0.018}, 100, 1)
	fmt.Printf("A3/A1 = %.4f at 130 Hz on the upper branch\n", p.ThirdHarmonic(130, 7.2943))
	f, a3 := p.SuperharmonicPeak()
	fmt.Printf("superharmonic peak at %.2f Hz, A3 = %.3f µm\n", f, a3)
	// Output:
	// A3/A1 = 0.0187 at 130 Hz on the upper branch
	// superharmonic peak at 33.89 Hz, A3 = 0.061 µm
}

// Fitting both sweep directions of a record.
func ExampleFit() {
	truth := duffing.FromNondim(duffing.Nondim{Zeta: 0.05, Gamma: 0.018}, 100, 1)
	// A noise-free stepped sweep of the model, up then down, each point on
	// the branch the sweep follows.
	var pts []duffing.Point
	prev := 0.0
	step := func(f float64, up bool) {
		best := math.Inf(1)
		for _, r := range truth.Roots(nil, f) {
			if r.Stable && math.Abs(r.Amp-prev) < math.Abs(best-prev) {
				best = r.Amp
			}
		}
		prev = best
		pts = append(pts, duffing.Point{FreqHz: f, Amp: best, Up: up, Settled: true})
	}
	for f := 80.0; f <= 160; f++ {
		step(f, true)
	}
	for f := 160.0; f >= 80; f-- {
		step(f, false)
	}
	res, err := duffing.Fit(pts, duffing.FitOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	p := res.Params
	fmt.Printf("f0 %.3f Hz, zeta %.4f, Q %.2f, beta %.1f µm⁻²s⁻², %s\n", p.F0Hz, p.Zeta, res.Q, p.Beta, res.Stiffness)
	fmt.Printf("jumps: up-sweep %.2f Hz, down-sweep %.2f Hz; %d points used\n", res.UpJumpHz, res.DownJumpHz, res.Used)
	// Output:
	// f0 100.000 Hz, zeta 0.0500, Q 10.00, beta 7106.1 µm⁻²s⁻², hardening
	// jumps: up-sweep 133.00 Hz, down-sweep 119.37 Hz; 162 points used
}
