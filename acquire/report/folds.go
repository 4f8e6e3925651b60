package report

import (
	"math"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// twoTermFold returns the drive frequency at which the branch of the
// two-term balance (solveTwoTerm) that ends near the first-order fold fd
// of p ends: where a sweep on that branch jumps.
//
// Method: natural-parameter continuation. The branch is taken up a short
// way (0.2ζf0) inside the side on which it exists — below the fold for a
// fold an up-sweep reaches, above it otherwise — from the stable
// first-order state nearest the fold's amplitude, then followed towards
// the fold by Newton's method from the last state, the step halving
// whenever Newton fails or the state moves by more than 10 %, until the
// step is below 10⁻⁹·f0. A fold of a smooth one-parameter family of
// solutions is where the Jacobian is singular and the branch turns back,
// so no state continues past it. ok is false when the branch cannot be
// started.
func twoTermFold(p duffing.Params, fd duffing.Fold) (float64, bool) {
	var buf [3]duffing.Root
	s, f, dir, ok := startBranch(p, fd, buf[:])
	if !ok {
		return math.NaN(), false
	}
	h := 0.05 * p.Zeta * p.F0Hz
	for i := 0; i < 400 && h > 1e-9*p.F0Hz; i++ {
		next, ok := newtonTwoTerm(p, f+dir*h, s.A, s.C)
		if ok && math.Abs(next.Amp-s.Amp) <= 0.1*s.Amp {
			f += dir * h
			s = next
			continue
		}
		h /= 2
	}
	return f + dir*h, true
}

// Predicted holds the jumps and the bistable band of a model.
type Predicted struct {
	UpHz, UpStdHz     float64 // where an up-sweep jumps, NaN if none
	DownHz, DownStdHz float64
	UpKind, DownKind  duffing.Jump
	Bistable          bool
	BandLoHz          float64
	BandHiHz          float64
}

// twoTermJumps returns the jumps of the two-term model p (the folds of
// the first-order model of the same parameters, each refined by
// twoTermFold), with standard uncertainties from cov (the covariance of
// F0Hz, Zeta, Beta, Force) by the delta method: σ² = gᵀ·Cov·g, g the
// gradient of the fold frequency by central differences of 10⁻⁴ of each
// parameter. The uncertainties are NaN when cov is not known.
func twoTermJumps(p duffing.Params, cov [4][4]float64) Predicted {
	nan := math.NaN()
	pj := Predicted{UpHz: nan, UpStdHz: nan, DownHz: nan, DownStdHz: nan}
	folds := p.Folds()
	at := func(q duffing.Params, up bool) float64 {
		for _, fd := range q.Folds() {
			if fd.UpSweep == up {
				if f, ok := twoTermFold(q, fd); ok {
					return f
				}
			}
		}
		return nan
	}
	for _, fd := range folds {
		f, ok := twoTermFold(p, fd)
		if !ok {
			continue
		}
		std := nan
		if !math.IsNaN(cov[0][0]) {
			var g [4]float64
			v := [4]float64{p.F0Hz, p.Zeta, p.Beta, p.Force}
			for k := range g {
				h := 1e-4 * math.Abs(v[k])
				ph, pl := v, v
				ph[k] += h
				pl[k] -= h
				mk := func(x [4]float64) duffing.Params {
					return duffing.Params{F0Hz: x[0], Zeta: x[1], Beta: x[2], Force: x[3], Base: p.Base}
				}
				g[k] = (at(mk(ph), fd.UpSweep) - at(mk(pl), fd.UpSweep)) / (2 * h)
			}
			s := 0.0
			for a := 0; a < 4; a++ {
				for b := 0; b < 4; b++ {
					s += g[a] * cov[a][b] * g[b]
				}
			}
			std = math.Sqrt(s)
		}
		if fd.UpSweep {
			pj.UpHz, pj.UpStdHz, pj.UpKind = f, std, fd.Jump
		} else {
			pj.DownHz, pj.DownStdHz, pj.DownKind = f, std, fd.Jump
		}
	}
	if !math.IsNaN(pj.UpHz) && !math.IsNaN(pj.DownHz) {
		pj.Bistable = true
		pj.BandLoHz, pj.BandHiHz = math.Min(pj.UpHz, pj.DownHz), math.Max(pj.UpHz, pj.DownHz)
	}
	return pj
}
