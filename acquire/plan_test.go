package acquire

import (
	"math"
	"testing"
	"time"
)

func basePlan() Plan {
	return Plan{StartHz: 35, StopHz: 39, StepHz: 0.05, Direction: UpDown, MaxDwell: time.Second,
		MeasureCycles: 20, SettleTol: 0.002}
}

func TestPlanSteps(t *testing.T) {
	p := basePlan()
	s := p.Steps()
	if len(s) != 81+80 {
		t.Fatalf("up-down 35..39 by 0.05: %d steps, want 161 (the top point once)", len(s))
	}
	if s[0].FreqHz != 35 || s[80].FreqHz != 39 || s[81].Direction != Down || math.Abs(s[81].FreqHz-38.95) > 1e-9 || s[160].FreqHz != 35 {
		t.Errorf("steps: first %v, top %v, first down %v, last %v", s[0], s[80], s[81], s[160])
	}
	p.Spacing, p.StepHz, p.Points, p.Direction = Log, 0, 5, Up
	s = p.Steps()
	for i := 1; i < len(s); i++ {
		// equal ratios: the defining property of logarithmic spacing
		if r := s[i].FreqHz / s[i-1].FreqHz; math.Abs(r-math.Pow(39.0/35, 0.25)) > 1e-12 {
			t.Errorf("log step %d ratio %v", i, r)
		}
	}
}

func TestPlanValidate(t *testing.T) {
	bad := map[string]func(*Plan){
		"negative step":     func(p *Plan) { p.StepHz = -0.1 },
		"start above stop":  func(p *Plan) { p.Direction, p.StartHz = Up, 40 },
		"down from below":   func(p *Plan) { p.Direction = Down },
		"no max dwell":      func(p *Plan) { p.MaxDwell = 0 },
		"tolerance too big": func(p *Plan) { p.SettleTol = 0.7 },
		"no points":         func(p *Plan) { p.StepHz, p.Points = 0, 1 },
	}
	for name, mod := range bad {
		p := basePlan()
		mod(&p)
		if err := p.Validate(); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
	if err := basePlan().Validate(); err != nil {
		t.Errorf("good plan refused: %v", err)
	}
}

// CoherentFreq returns a frequency at which a block of whole cycles spans
// whole samples exactly: f = k·fs/n (coherent sampling, IEEE Std 1241).
func TestCoherentFreq(t *testing.T) {
	for _, target := range []float64{12.345, 37.1, 1000.37, 4321.9} {
		f, k, n := CoherentFreq(target, 48000, 20, 200, 1, 1e-3)
		if f != float64(k)*48000/float64(n) {
			t.Errorf("%g: f=%v is not k·fs/n (%d, %d)", target, f, k, n)
		}
		// Against a plain search of every cycle count: within the tolerance
		// when any count reaches it, else the closest there is.
		best := math.Inf(1)
		for kk := 20; kk <= 200; kk++ {
			nn := math.Round(float64(kk) * 48000 / target)
			best = math.Min(best, math.Abs(float64(kk)*48000/nn-target))
		}
		e := math.Abs(f - target)
		if k < 20 || (best <= 1e-3 && e > 1e-3) || (best > 1e-3 && e != best) {
			t.Errorf("%g: got %v with %d cycles (error %g, best possible %g)", target, f, k, e, best)
		}
		// With a 1/6 subharmonic the cycle count must be a multiple of 6.
		if f6, k6, n6 := CoherentFreq(target, 48000, 20, 200, 6, 1e-3); k6%6 != 0 || f6 != float64(k6)*48000/float64(n6) {
			t.Errorf("%g with multiples of 6: %v Hz, %d cycles, %d samples", target, f6, k6, n6)
		}
	}
}
