package report

import (
	"math"
	"slices"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// Superharmonic is what the record's third-harmonic column shows around
// one third of the natural frequency, where a Duffing resonator has its
// superharmonic resonance: driven at ω ≈ ω0/3, the cubic term's cos 3ωt
// part drives the resonator at its own frequency, and the third harmonic
// of the response peaks (A. H. Nayfeh, D. T. Mook, Nonlinear Oscillations,
// Wiley 1979, §4.1.3 — from memory; see REFERENCES.md §5).
type Superharmonic struct {
	Checked  bool    // the record has a third-harmonic column and settled points near f0/3
	Found    bool    // the ratio rises to a peak there
	CenterHz float64 // where the model puts the superharmonic peak (≈ f0/3)
	PeakHz   float64 // drive frequency of the largest ratio in the window
	PeakPct  float64 // that ratio, % of the fundamental
	BasePct  float64 // the ratio around the window, %
	Points   int     // settled points in the window
}

// superharmonicSeen looks at the ratio A3/A1 of the settled points within
// ±max(3 %, 6ζ) of the model's superharmonic peak (duffing's
// SuperharmonicPeak, ≈ f0/3). The resonance is "found" when at least three
// points lie there, the largest ratio is not at the window's edge, and it
// is at least three times the ratio around the window (the median of the
// settled points from 0.6 to 1.5 times the peak frequency outside the
// window; without three of those, the smaller of the ratios at the
// window's two ends). The factor of three is a plain choice of ours: the
// off-resonance third harmonic changes slowly with frequency, the
// superharmonic peak by the resonator's Q.
func superharmonicSeen(run *Run, p duffing.Params) Superharmonic {
	var s Superharmonic
	h3 := slices.Index(run.Record.Columns.Harmonics, "3")
	if h3 < 0 || p.Validate() != nil {
		return s
	}
	fc, _ := p.SuperharmonicPeak()
	if !(fc > 0) {
		fc = p.F0Hz / 3
	}
	s.CenterHz = fc
	half := fc * math.Max(0.03, 6*p.Zeta)
	type fr struct{ f, r float64 }
	var in []fr
	var around []float64
	for k, pt := range run.Points {
		if !pt.Settled || !(pt.Amp > 0) {
			continue
		}
		amps := run.Record.Points[run.Index[k]].Amp
		if h3 >= len(amps) || !(amps[h3] >= 0) {
			continue
		}
		ratio := amps[h3] / pt.Amp
		switch {
		case math.Abs(pt.FreqHz-fc) <= half:
			in = append(in, fr{pt.FreqHz, ratio})
		case pt.FreqHz >= 0.6*fc && pt.FreqHz <= 1.5*fc:
			around = append(around, ratio)
		}
	}
	s.Points = len(in)
	if len(in) < 3 {
		return s
	}
	s.Checked = true
	slices.SortFunc(in, func(a, b fr) int {
		switch {
		case a.f < b.f:
			return -1
		case a.f > b.f:
			return 1
		}
		return 0
	})
	pk := 0
	for i, x := range in {
		if x.r > in[pk].r {
			pk = i
		}
	}
	s.PeakHz, s.PeakPct = in[pk].f, 100*in[pk].r
	base := math.Min(in[0].r, in[len(in)-1].r)
	if len(around) >= 3 {
		slices.Sort(around)
		base = median(around)
	}
	s.BasePct = 100 * base
	edge := in[pk].f == in[0].f || in[pk].f == in[len(in)-1].f
	s.Found = !edge && in[pk].r >= 3*base
	return s
}
