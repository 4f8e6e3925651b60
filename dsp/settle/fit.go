package settle

import "math"

// fitAR2 fits the recurrence y_j = p1·y_{j−1} + p2·y_{j−2} + b (p1, p2 real,
// b complex) to y by least squares. ok is false when the normal equations
// are singular (fewer than 5 values, or no variation).
//
// The intercept b = (1 − p1 − p2)·z∞ is removed by centring each of the
// three lagged series on its own mean, which leaves a 2×2 real system:
// the complex data enter through Re(u·conj(v)) inner products. This is the
// linear-prediction (Prony) estimate of damped exponentials (Kumaresan and
// Tufts, "Estimating the parameters of exponentially damped sinusoids and
// pole-zero modeling in noise", IEEE Trans. ASSP 30(6):833–840, 1982), with
// the coefficients constrained real as the Cayley–Hamilton argument in the
// package comment requires. Its decay factor is pulled towards zero once
// the block-to-block changes are comparable with the noise, so it serves
// only as a starting point for refine.
func fitAR2(y []complex128) (p1, p2 float64, ok bool) {
	n := len(y)
	if n < 5 {
		return 0, 0, false
	}
	m := float64(n - 2)
	var m0, m1, m2 complex128
	for j := 2; j < n; j++ {
		m0 += y[j]
		m1 += y[j-1]
		m2 += y[j-2]
	}
	m0 /= complex(m, 0)
	m1 /= complex(m, 0)
	m2 /= complex(m, 0)
	var s11, s22, s12, r1, r2 float64
	for j := 2; j < n; j++ {
		v := y[j] - m0
		u1 := y[j-1] - m1
		u2 := y[j-2] - m2
		s11 += real(u1)*real(u1) + imag(u1)*imag(u1)
		s22 += real(u2)*real(u2) + imag(u2)*imag(u2)
		s12 += real(u1)*real(u2) + imag(u1)*imag(u2)
		r1 += real(v)*real(u1) + imag(v)*imag(u1)
		r2 += real(v)*real(u2) + imag(v)*imag(u2)
	}
	det := s11*s22 - s12*s12
	if !(det > 1e-13*s11*s22) {
		return 0, 0, false
	}
	return (r1*s22 - r2*s12) / det, (s11*r2 - s12*r1) / det, true
}

// dominant returns the largest modulus of the roots of x² − p1·x − p2, the
// slowest block-to-block decay factor of the recurrence.
func dominant(p1, p2 float64) float64 {
	disc := p1*p1 + 4*p2
	if disc < 0 {
		return math.Sqrt(-p2)
	}
	s := math.Sqrt(disc)
	return math.Max(math.Abs(p1+s), math.Abs(p1-s)) / 2
}

// levelFit is the outcome of fitting the levels of the window.
type levelFit struct {
	final complex128 // estimated z∞
	now   complex128 // estimated error of the newest block, e_{W−1}
	// varNow is the variance factor of now: E|now − true|² = sigma2·varNow.
	varNow float64
	sigma2 float64 // residual variance per block, E|noise|², complex
	sse    float64 // residual sum of squares Σ|r_j|²
	ok     bool
}

// fitLevels fits y_j = z∞ + A·g_j + B·h_j by least squares, where g and h
// are the two real solutions of e_j = p1·e_{j−1} + p2·e_{j−2} started from
// (1, 0) and (0, 1) at the oldest block; z∞, A, B are complex. With the
// recurrence fixed the model is linear in z∞, A and B (the separable
// structure of Golub and Pereyra, "The differentiation of pseudo-inverses
// and nonlinear least squares problems whose variables separate", SIAM J.
// Numer. Anal. 10(2):413–432, 1973). Centring g, h and y on their means
// eliminates z∞ and leaves a 2×2 real Gram matrix G shared by the real and
// imaginary parts; cov(A, B) = σ²·G⁻¹ per component, so the error of the
// newest block, now = A·g_L + B·h_L, has E|now − true|² = σ²·uᵀG⁻¹u with
// u = (g_L, h_L) and σ² = SSE/(W − 3), the complex residual variance.
//
// g and h are written into the scratch slices, which must be as long as y;
// when res is not nil the residuals r_j are written into it too.
func fitLevels(y []complex128, p1, p2 float64, g, h []float64, res []complex128) levelFit {
	n := len(y)
	if n < 4 {
		return levelFit{}
	}
	g, h = g[:n], h[:n]
	g[0], g[1], h[0], h[1] = 1, 0, 0, 1
	gm, hm := 1.0, 1.0
	yr, yi := real(y[0])+real(y[1]), imag(y[0])+imag(y[1])
	for j := 2; j < n; j++ {
		g[j] = p1*g[j-1] + p2*g[j-2]
		h[j] = p1*h[j-1] + p2*h[j-2]
		gm += g[j]
		hm += h[j]
		yr += real(y[j])
		yi += imag(y[j])
	}
	fn := float64(n)
	gm /= fn
	hm /= fn
	yr /= fn
	yi /= fn
	// Real arithmetic throughout: the basis is real, and complex products
	// with a real factor would cost four multiplications.
	var a, b, c, ugr, ugi, uhr, uhi float64
	for j := 0; j < n; j++ {
		gc, hc := g[j]-gm, h[j]-hm
		cr, ci := real(y[j])-yr, imag(y[j])-yi
		a += gc * gc
		b += gc * hc
		c += hc * hc
		ugr += gc * cr
		ugi += gc * ci
		uhr += hc * cr
		uhi += hc * ci
	}
	det := a*c - b*b
	if !(det > 1e-12*a*c) {
		return levelFit{}
	}
	inv := 1 / det
	ar, ai := (c*ugr-b*uhr)*inv, (c*ugi-b*uhi)*inv
	br, bi := (a*uhr-b*ugr)*inv, (a*uhi-b*ugi)*inv
	var sse float64
	for j := 0; j < n; j++ {
		gc, hc := g[j]-gm, h[j]-hm
		rr := real(y[j]) - yr - ar*gc - br*hc
		ri := imag(y[j]) - yi - ai*gc - bi*hc
		sse += rr*rr + ri*ri
		if res != nil {
			res[j] = complex(rr, ri)
		}
	}
	gl, hl := g[n-1], h[n-1]
	return levelFit{
		final:  complex(yr-ar*gm-br*hm, yi-ai*gm-bi*hm),
		now:    complex(ar*gl+br*hl, ai*gl+bi*hl),
		varNow: (c*gl*gl - 2*b*gl*hl + a*hl*hl) * inv,
		sigma2: sse / float64(n-3),
		sse:    sse,
		ok:     true,
	}
}
