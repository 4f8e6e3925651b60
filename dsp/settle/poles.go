package settle

import "math"

// poleFit is a recurrence fitted to the levels of the window.
type poleFit struct {
	p1, p2 float64
	sse    float64
	// c11, c12, c22 is the covariance of (p1, p2).
	c11, c12, c22 float64
	// lev is the level fit at (p1, p2).
	lev levelFit
	// lag1 is the lag-one autocorrelation of the residuals,
	// Re Σ r_j·conj(r_{j−1}) / Σ|r_j|²: near 0 when the model explains the
	// window and the residual is noise, near 1 when it leaves structure.
	lag1 float64
	// varP is the part of E|now − true|² that comes from the uncertainty
	// of (p1, p2): ∇now·cov·∇nowᵀ summed over the real and imaginary
	// parts. The recurrence basis at the newest block is a polynomial in
	// (p1, p2), so this stays finite where the roots merge.
	varP float64
	ok   bool
}

// work holds the scratch buffers of one fit, sized by New.
type work struct {
	g, h       []float64
	r0, r1, r2 []complex128
}

func newWork(n int) work {
	return work{
		g:  make([]float64, n),
		h:  make([]float64, n),
		r0: make([]complex128, n),
		r1: make([]complex128, n),
		r2: make([]complex128, n),
	}
}

// refineIters bounds the Levenberg–Marquardt iterations per block; the
// start is the previous block's solution, so a few suffice.
const refineIters = 6

// refine minimises the residual of fitLevels over (p1, p2) — the variable
// projection functional of Golub and Pereyra (1973) — by Levenberg–
// Marquardt (K. Levenberg, Quart. Appl. Math. 2:164–168, 1944; D. W.
// Marquardt, J. SIAM 11(2):431–441, 1963) from the given start. The
// Jacobian of the projected residual is taken by forward differences.
// Unlike the linear-prediction estimate of fitAR2, whose decay factor is
// pulled towards zero (too fast a decay) once the block-to-block changes
// are comparable with the noise, this least-squares fit of the levels is
// the maximum-likelihood estimate for white Gaussian noise.
//
// The covariance returned is the Gauss–Newton one, (σ²/2)·(JᵀJ)⁻¹ with
// JᵀJ = Re Σ conj(J_i)·J_k and σ² the complex residual variance.
func refine(y []complex128, p1, p2 float64, wk *work) poleFit {
	n := len(y)
	r0, r1, r2 := wk.r0[:n], wk.r1[:n], wk.r2[:n]
	f := fitLevels(y, p1, p2, wk.g, wk.h, r0)
	if !f.ok {
		return poleFit{}
	}
	lambda := 1e-3
	var a11, a12, a22 float64
	var e1, e2 complex128 // ∂now/∂p1, ∂now/∂p2
	for it := 0; it <= refineIters; it++ {
		const d = 1e-6
		f1 := fitLevels(y, p1+d, p2, wk.g, wk.h, r1)
		f2 := fitLevels(y, p1, p2+d, wk.g, wk.h, r2)
		if !f1.ok || !f2.ok {
			return poleFit{}
		}
		e1, e2 = (f1.now-f.now)/d, (f2.now-f.now)/d
		var b1, b2 float64
		a11, a12, a22 = 0, 0, 0
		for j := 0; j < n; j++ {
			j1 := (r1[j] - r0[j]) / d
			j2 := (r2[j] - r0[j]) / d
			a11 += real(j1)*real(j1) + imag(j1)*imag(j1)
			a12 += real(j1)*real(j2) + imag(j1)*imag(j2)
			a22 += real(j2)*real(j2) + imag(j2)*imag(j2)
			b1 += real(j1)*real(r0[j]) + imag(j1)*imag(r0[j])
			b2 += real(j2)*real(r0[j]) + imag(j2)*imag(r0[j])
		}
		if it == refineIters {
			break // the last pass only refreshes the Jacobian
		}
		moved := false
		for try := 0; try < 8; try++ {
			m11, m22 := a11*(1+lambda), a22*(1+lambda)
			det := m11*m22 - a12*a12
			if !(det > 0) {
				lambda *= 10
				continue
			}
			dp1 := -(m22*b1 - a12*b2) / det
			dp2 := -(m11*b2 - a12*b1) / det
			ft := fitLevels(y, p1+dp1, p2+dp2, wk.g, wk.h, r1)
			if ft.ok && ft.sse < f.sse {
				p1, p2 = p1+dp1, p2+dp2
				r0, r1 = r1, r0
				gain := f.sse - ft.sse
				f = ft
				lambda = math.Max(lambda/10, 1e-9)
				moved = gain > 1e-12*f.sse
				break
			}
			lambda *= 10
		}
		if !moved {
			break
		}
	}
	det := a11*a22 - a12*a12
	if !(det > 0) {
		return poleFit{p1: p1, p2: p2, sse: f.sse, lev: f}
	}
	s := f.sigma2 / 2
	pf := poleFit{
		p1: p1, p2: p2, sse: f.sse,
		c11: s * a22 / det, c12: -s * a12 / det, c22: s * a11 / det,
		lev: f,
		ok:  true,
	}
	var num, den float64
	for j := 1; j < n; j++ {
		num += real(r0[j])*real(r0[j-1]) + imag(r0[j])*imag(r0[j-1])
	}
	for j := 0; j < n; j++ {
		den += real(r0[j])*real(r0[j]) + imag(r0[j])*imag(r0[j])
	}
	if den > 0 {
		pf.lag1 = num / den
	}
	quad := func(x1, x2 float64) float64 {
		return x1*x1*pf.c11 + 2*x1*x2*pf.c12 + x2*x2*pf.c22
	}
	pf.varP = quad(real(e1), real(e2)) + quad(imag(e1), imag(e2))
	return pf
}

// rhoRange returns the smallest and largest slowest-root modulus
// dominant(p) over the k-standard-error ellipse of pf, sampled at its
// centre and at 24 points of its boundary. hi is a conservative decay
// factor for the tail; lo ≥ 1 says the window does not decay.
func rhoRange(pf poleFit, k float64) (lo, hi float64) {
	rho := dominant(pf.p1, pf.p2)
	lo, hi = rho, rho
	// Cholesky factor of the covariance.
	l11 := math.Sqrt(pf.c11)
	if !(l11 > 0) {
		return lo, hi
	}
	l21 := pf.c12 / l11
	l22 := math.Sqrt(math.Max(pf.c22-l21*l21, 0))
	for i := 0; i < 24; i++ {
		s, c := math.Sincos(2 * math.Pi * float64(i) / 24)
		r := dominant(pf.p1+k*l11*c, pf.p2+k*(l21*c+l22*s))
		lo, hi = math.Min(lo, r), math.Max(hi, r)
	}
	return lo, hi
}
