package duffing

import "math"

// hbCubic is the harmonic-balance relation written as a cubic in p = Y²,
//
//	h(p) = p·((k + e·p)² + c2) − phi,
//	h'(p) = (k + e·p)(k + 3e·p) + c2,
//
// with k = 1 − Ω², e = ¾γ, c2 = (2ζΩ)² and phi = Ω^(2m) the squared
// forcing. h(0) = −phi < 0 and h(p) < 0 for every p < 0, so every real root
// is positive. The same shape describes the slow-flow steady state of the
// superharmonic resonance (harmonics.go).
type hbCubic struct {
	k, e, c2, phi float64
}

// eval returns h(p) and h'(p).
func (c hbCubic) eval(p float64) (h, dh float64) {
	w := c.k + c.e*p
	return p*(w*w+c.c2) - c.phi, w*(w+2*c.e*p) + c.c2
}

// roots returns the real roots of h in ascending order, n of them (0 to 3).
//
// Method: the turning points of h solve h'(p) = 0, that is, with
// w = k + e·p, 3w² − 2kw + c2 = 0, so w = (k ± √(k² − 3c2))/3 and
// p = (w − k)/e. They cut (0, ∞) into at most three intervals on each of
// which h is monotone; a root lies in an interval exactly when h changes
// sign across it. Each root is found by Newton's method safeguarded by
// bisection inside its bracket (Press, Teukolsky, Vetterling, Flannery,
// Numerical Recipes, 3rd ed. 2007, §9.4 "rtsafe"), to full precision.
func (c hbCubic) roots() (p [3]float64, n int) {
	if c.phi == 0 {
		// No forcing: the only steady state is rest.
		return p, 1
	}
	if c.e == 0 {
		d := c.k*c.k + c.c2
		if d <= 0 || math.IsInf(d, 0) {
			return p, 0
		}
		p[0] = c.phi / d
		return p, 1
	}
	var turn [2]float64
	nt := 0
	if disc := c.k*c.k - 3*c.c2; disc > 0 {
		r := math.Sqrt(disc)
		for _, w := range [2]float64{(c.k - r) / 3, (c.k + r) / 3} {
			if t := (w - c.k) / c.e; t > 0 {
				turn[nt] = t
				nt++
			}
		}
		if nt == 2 && turn[0] > turn[1] {
			turn[0], turn[1] = turn[1], turn[0]
		}
	}
	lo, hlo := 0.0, -c.phi
	for i := 0; i < nt; i++ {
		hi := turn[i]
		hhi, _ := c.eval(hi)
		if (hlo < 0) != (hhi < 0) && hhi != 0 {
			p[n] = c.solve(lo, hi, hlo)
			n++
		} else if hhi == 0 {
			p[n] = hi
			n++
		}
		lo, hlo = hi, hhi
	}
	if hlo >= 0 {
		return p, n
	}
	// Last interval (lo, ∞). Every root has p ≤ phi/c2 (h ≥ c2·p − phi),
	// and once |e|p ≥ 2|k|, |k + ep| ≥ |e|p/2 so h ≥ e²p³/4 − phi: every
	// root also has p ≤ max(2|k/e|, ∛(4phi/e²)).
	hi := math.Max(2*math.Abs(c.k/c.e), math.Cbrt(4*c.phi/(c.e*c.e)))
	if c.c2 > 0 {
		hi = math.Min(hi, c.phi/c.c2)
	}
	hi = math.Max(hi, 2*lo)
	for i := 0; i < 2100; i++ {
		if h, _ := c.eval(hi); h > 0 {
			break
		}
		hi = 2*hi + 1e-300 // rounding guard; the bound above holds
	}
	p[n] = c.solve(lo, hi, hlo)
	n++
	return p, n
}

// solve finds the root of h in the bracket [a, b], where h(a) = ha and h(b)
// has the other sign, by Newton steps kept inside the bracket and bisection
// when a Newton step would leave it or converge too slowly.
func (c hbCubic) solve(a, b, ha float64) float64 {
	xl, xh := a, b // h(xl) < 0 < h(xh)
	if ha > 0 {
		xl, xh = b, a
	}
	// Start from the root of the linear relation, phi/(k² + c2), when it
	// lies in the bracket: off resonance it is within a little of the root.
	x := 0.5 * (a + b)
	if d := c.k*c.k + c.c2; d > 0 {
		if pl := c.phi / d; pl > math.Min(a, b) && pl < math.Max(a, b) {
			x = pl
		}
	}
	dxOld := math.Abs(b - a)
	dx := dxOld
	f, df := c.eval(x)
	for i := 0; i < 200 && f != 0; i++ {
		if ((x-xh)*df-f)*((x-xl)*df-f) > 0 || math.Abs(2*f) > math.Abs(dxOld*df) {
			dxOld = dx
			dx = 0.5 * (xh - xl)
			x = xl + dx
		} else {
			dxOld = dx
			dx = f / df
			x -= dx
		}
		if math.Abs(dx) <= 1e-15*math.Abs(x) {
			break
		}
		f, df = c.eval(x)
		if f < 0 {
			xl = x
		} else {
			xh = x
		}
	}
	return x
}
