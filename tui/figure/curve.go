package figure

import (
	"math"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// curvePoint is one point of the first-order response curve.
type curvePoint struct {
	FreqHz, Amp float64
	PhaseDeg    float64 // phase against the forcing, (−180, 0]
	Stable      bool
}

// responseCurve returns the first-order harmonic-balance response curve
// of p as one or two polylines in order along the curve (two when the
// curve does not close: a base-excited hardening resonator), sampled by
// amplitude so that it runs through the folds: at fixed p = Y² the
// relation [(k + ¾γp)² + (2ζΩ)²]p = Ω^(2m) (duffing's package comment) is a
// quadratic in s = Ω²,
//
//	force: s² − 2(κ − 2ζ²)s + κ² − 1/p = 0,
//	base:  (1 − 1/p)s² − 2(κ − 2ζ²)s + κ² = 0,    κ = 1 + ¾γp,
//
// (as in duffing's discQuad), whose two roots are the two sides of the
// resonance at that amplitude. Amplitudes run up to the peak (Params.Peak)
// or, for a curve that does not close, to ampCap. A point is stable when
// (k + ¾γp)(k + 9/4·γp) + (2ζΩ)² > 0 (the criterion duffing.Nondim.Roots
// documents). The phase is −atan2(2ζΩ, k + ¾γp).
func responseCurve(p duffing.Params, ampCap float64) [][]curvePoint {
	if p.Validate() != nil || p.Force == 0 {
		return nil
	}
	n := p.Nondim()
	xs := p.Static()
	z2 := n.Zeta * n.Zeta
	closed := true
	_, yTop, ok := n.Peak()
	if !ok {
		closed = false
		yTop = ampCap / xs
	}
	if !(yTop > 0) || math.IsInf(yTop, 0) {
		return nil
	}
	pTop := yTop * yTop
	// Samples of p: geometric from 1e-6·pTop to pTop/2, then
	// p = pTop(1 − w²) so that the frequency, which goes as √(pTop − p)
	// near the peak, is sampled evenly.
	const nGeo, nTop = 240, 240
	var ps []float64
	for i := 0; i < nGeo; i++ {
		ps = append(ps, pTop*1e-6*math.Pow(0.5e6, float64(i)/nGeo))
	}
	for i := 0; i <= nTop; i++ {
		w := math.Sqrt(0.5) * (1 - float64(i)/nTop)
		ps = append(ps, pTop*(1-w*w))
	}
	var left, right []curvePoint
	for _, pp := range ps {
		kappa := 1 + 0.75*n.Gamma*pp
		b := kappa - 2*z2
		var s1, s2 float64
		if n.Base {
			a := 1 - 1/pp
			d := b*b - a*kappa*kappa
			if d < 0 {
				d = 0
			}
			if math.Abs(a) < 1e-12 {
				s1, s2 = math.NaN(), kappa*kappa/(2*b)
			} else {
				s1, s2 = (b-math.Sqrt(d))/a, (b+math.Sqrt(d))/a
			}
		} else {
			d := 1/pp - 4*z2*kappa + 4*z2*z2
			if d < 0 {
				d = 0
			}
			s1, s2 = b-math.Sqrt(d), b+math.Sqrt(d)
		}
		if s1 > s2 {
			s1, s2 = s2, s1
		}
		for side, s := range [2]float64{s1, s2} {
			if !(s > 0) {
				continue
			}
			om := math.Sqrt(s)
			k := 1 - s
			w := k + 0.75*n.Gamma*pp
			cp := curvePoint{
				FreqHz:   om * p.F0Hz,
				Amp:      math.Sqrt(pp) * xs,
				PhaseDeg: -math.Atan2(2*n.Zeta*om, w) * 180 / math.Pi,
				Stable:   w*(k+2.25*n.Gamma*pp)+4*z2*s > 0,
			}
			if side == 0 {
				left = append(left, cp)
			} else {
				right = append(right, cp)
			}
		}
	}
	// Right side runs from the top back down.
	for i, j := 0, len(right)-1; i < j; i, j = i+1, j-1 {
		right[i], right[j] = right[j], right[i]
	}
	if closed {
		return [][]curvePoint{append(left, right...)}
	}
	return [][]curvePoint{left, right}
}

// splitStable cuts a polyline into runs of equal stability; each run
// after the first starts with the last point of the one before, so that
// the runs join.
func splitStable(c []curvePoint) [][]curvePoint {
	var out [][]curvePoint
	start := 0
	for i := 1; i <= len(c); i++ {
		if i == len(c) || c[i].Stable != c[start].Stable {
			run := c[start:i]
			if start > 0 {
				run = c[start-1 : i]
			}
			out = append(out, run)
			start = i
		}
	}
	return out
}
