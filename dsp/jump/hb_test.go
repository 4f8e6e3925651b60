package jump

import (
	"math"
	"sort"
)

// This file holds the outside reference for the Duffing checks: the
// first-order harmonic-balance response of
//
//	y'' + 2ζy' + y + γy³ = cos Ωτ,
//
// [(1 − Ω² + ¾γY²)² + (2ζΩ)²]·Y² = 1 (REFERENCES.md §5), a cubic in p = Y²:
//
//	(9γ²/16)p³ + (3γk/2)p² + (k² + 4ζ²Ω²)p − 1 = 0,  k = 1 − Ω²,
//
// solved here in closed form (the trigonometric form of Cardano's method
// for three real roots, Cardano's radicals for one), each root polished by
// Newton's method on the cubic. TestHBReference checks the roots against
// the eigenvalues of the companion matrix computed by gonum and the fold
// frequencies against REFERENCES.md §5.

// cubicRoots returns the real roots of a·x³ + b·x² + c·x + d (a ≠ 0) in
// increasing order.
func cubicRoots(a, b, c, d float64) []float64 {
	B, C, D := b/a, c/a, d/a
	p := C - B*B/3
	q := 2*B*B*B/27 - B*C/3 + D
	shift := -B / 3
	var ts []float64
	disc := q*q/4 + p*p*p/27
	switch {
	case disc < 0: // three real roots
		r := math.Sqrt(-p / 3)
		phi := math.Acos(math.Max(-1, math.Min(1, -q/(2*r*r*r))))
		for k := 0; k < 3; k++ {
			ts = append(ts, 2*r*math.Cos((phi-2*math.Pi*float64(k))/3))
		}
	default:
		sq := math.Sqrt(disc)
		ts = append(ts, math.Cbrt(-q/2+sq)+math.Cbrt(-q/2-sq))
	}
	roots := make([]float64, 0, 3)
	for _, t := range ts {
		x := t + shift
		for i := 0; i < 3; i++ { // Newton polish
			f := ((a*x+b)*x+c)*x + d
			fp := (3*a*x+2*b)*x + c
			if fp == 0 {
				break
			}
			x -= f / fp
		}
		roots = append(roots, x)
	}
	sort.Float64s(roots)
	return roots
}

// hbAmplitudes returns the amplitudes Y > 0 of the HB1 response at Ω in
// increasing order: one, or three inside a hysteresis band. For softening
// (γ < 0) roots with Y ≥ 1/√|γ|, beyond the escape amplitude where the
// restoring force turns over, are spurious and dropped.
func hbAmplitudes(zeta, gamma, om float64) []float64 {
	k := 1 - om*om
	ps := cubicRoots(9*gamma*gamma/16, 3*gamma*k/2, k*k+4*zeta*zeta*om*om, -1)
	var ys []float64
	for _, p := range ps {
		if p <= 0 {
			continue
		}
		y := math.Sqrt(p)
		if gamma < 0 && y >= 1/math.Sqrt(-gamma) {
			continue
		}
		ys = append(ys, y)
	}
	return ys
}

// hbSweep returns the amplitudes a stepped sweep over oms follows: it
// starts on the only branch, keeps to the stable branch nearest its
// previous amplitude (the smallest or largest of three roots; the middle
// one is unstable), and when its branch ends takes the one that remains.
func hbSweep(zeta, gamma float64, oms []float64) []float64 {
	out := make([]float64, len(oms))
	prev := math.NaN()
	for i, om := range oms {
		ys := hbAmplitudes(zeta, gamma, om)
		var y float64
		switch {
		case len(ys) == 1 || math.IsNaN(prev):
			y = ys[len(ys)-1]
			if len(ys) > 1 {
				panic("hbSweep: sweep starts inside the hysteresis band")
			}
		default:
			lo, hi := ys[0], ys[len(ys)-1]
			y = lo
			if math.Abs(hi-prev) < math.Abs(lo-prev) {
				y = hi
			}
		}
		out[i] = y
		prev = y
	}
	return out
}
