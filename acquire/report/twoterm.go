package report

import (
	"math"
	"math/cmplx"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// twoTerm is a steady state of the two-term harmonic balance
//
//	x ≈ Re(A e^{iωt} + C e^{3iωt})
//
// of x” + 2ζω0 x' + ω0² x + β x³ = F(ω) cos ωt. Amp = |A| is what a
// lock-in reads as the fundamental; Third = |C| the third harmonic.
type twoTerm struct {
	A, C       complex128
	Amp, Third float64
	PhaseRad   float64 // arg A, relative to the forcing cosine
}

// solveTwoTerm returns the two-term steady state that continues the
// first-order state start at freqHz (found by Newton's method from it).
//
// Balancing e^{iωt} and e^{3iωt} in βx³ (the products of three of
// A e, A* e⁻¹, C e³, C* e⁻³ whose exponents add up to 1 and to 3) gives
//
//	L1·A + (β/4)(3|A|²A + 3A*²C + 6|C|²A) = F(ω),
//	L3·C + (β/4)(A³ + 3|C|²C + 6|A|²C)   = 0,
//	L1 = ω0² − ω² + 2iζω0ω,   L3 = ω0² − 9ω² + 6iζω0ω,
//
// the form of the two-term ansatz in the euphonics.org treatment of the
// Duffing oscillator (§8.2.2, cited in REFERENCES.md §5; the coefficients
// are derived here, and in the scaled form the second line is the relation
// (1 − 9Ω²)a3 + γ(a1³/4 + (3/2)a1²a3 + (3/4)a3³) = 0 listed there). Dropping
// C gives first-order harmonic balance, whose error in the fundamental is of
// the order of |C|/|A| ≈ βA²/(32ω0²) near resonance; the two-term balance
// leaves an error of the order of (|C|/|A|)².
//
// The unknowns (Re A, Im A, Re C, Im C) are solved by Newton's method with
// the analytic Jacobian (Wirtinger derivatives: ∂G/∂x = G_z + G_z*,
// ∂G/∂y = i(G_z − G_z*) for z = x + iy), starting from A = start and
// C = −(β/4)A³/(L3 + (3/2)β|A|²). ok is false when Newton does not
// converge, or converges to a state more than 20 % away from start (the
// first-order branch has no two-term continuation there, as just past a
// fold). It does not allocate.
func solveTwoTerm(p duffing.Params, freqHz float64, start duffing.Root) (twoTerm, bool) {
	if start.Amp == 0 || p.Force == 0 {
		return twoTerm{}, p.Force == 0
	}
	w := 2 * math.Pi * freqHz
	w0 := p.Omega0()
	l3 := complex(w0*w0-9*w*w, 6*p.Zeta*w0*w)
	b := complex(p.Beta/4, 0)
	a := cmplx.Rect(start.Amp, start.PhaseRad)
	c := -b * a * a * a / (l3 + 6*b*complex(start.Amp*start.Amp, 0))
	s, ok := newtonTwoTerm(p, freqHz, a, c)
	if !ok || math.Abs(s.Amp-start.Amp) > 0.2*start.Amp {
		return twoTerm{}, false
	}
	return s, true
}

// newtonTwoTerm solves the two-term balance at freqHz by Newton's method
// from (a, c) (see solveTwoTerm); ok is false when it does not converge
// within 40 steps to a relative step of 1e-13, or the Jacobian is
// singular. It does not allocate.
func newtonTwoTerm(p duffing.Params, freqHz float64, a, c complex128) (twoTerm, bool) {
	w0 := p.Omega0()
	w := 2 * math.Pi * freqHz
	f := p.Force
	if p.Base {
		f *= (w / w0) * (w / w0)
	}
	l1 := complex(w0*w0-w*w, 2*p.Zeta*w0*w)
	l3 := complex(w0*w0-9*w*w, 6*p.Zeta*w0*w)
	b := complex(p.Beta/4, 0)
	const (
		maxIter = 40
		tol     = 1e-13 // relative size of the last Newton step
	)
	for it := 0; it < maxIter; it++ {
		ac, cc := cmplx.Conj(a), cmplx.Conj(c)
		aa, ccm := real(a*ac), real(c*cc)
		g1 := l1*a + b*(3*a*a*ac+3*ac*ac*c+complex(6*ccm, 0)*a) - complex(f, 0)
		g2 := l3*c + b*(a*a*a+3*c*c*cc+complex(6*aa, 0)*c)
		g1A := l1 + b*complex(6*aa+6*ccm, 0)
		g1Ac := b * (3*a*a + 6*ac*c)
		g1C := b * (3*ac*ac + 6*cc*a)
		g1Cc := b * 6 * c * a
		g2A := b * (3*a*a + 6*ac*c)
		g2Ac := b * 6 * a * c
		g2C := l3 + b*complex(6*ccm+6*aa, 0)
		g2Cc := b * 3 * c * c
		cols := [4][2]complex128{
			{g1A + g1Ac, g2A + g2Ac},
			{1i * (g1A - g1Ac), 1i * (g2A - g2Ac)},
			{g1C + g1Cc, g2C + g2Cc},
			{1i * (g1C - g1Cc), 1i * (g2C - g2Cc)},
		}
		var m [4][5]float64
		for k := 0; k < 4; k++ {
			m[0][k], m[1][k] = real(cols[k][0]), imag(cols[k][0])
			m[2][k], m[3][k] = real(cols[k][1]), imag(cols[k][1])
		}
		m[0][4], m[1][4], m[2][4], m[3][4] = -real(g1), -imag(g1), -real(g2), -imag(g2)
		dx, ok := solve4(&m)
		if !ok {
			return twoTerm{}, false
		}
		da := complex(dx[0], dx[1])
		a += da
		c += complex(dx[2], dx[3])
		if !(cmplx.Abs(a) > 0) || cmplx.IsNaN(a) || cmplx.IsNaN(c) {
			return twoTerm{}, false
		}
		if cmplx.Abs(da) <= tol*cmplx.Abs(a) {
			return twoTerm{A: a, C: c, Amp: cmplx.Abs(a), Third: cmplx.Abs(c), PhaseRad: cmplx.Phase(a)}, true
		}
	}
	return twoTerm{}, false
}

// solve4 solves the 4×4 system in the first four columns of m with the
// right-hand side in the fifth, by Gaussian elimination with partial
// pivoting; ok is false for a singular matrix.
func solve4(m *[4][5]float64) (x [4]float64, ok bool) {
	for col := 0; col < 4; col++ {
		piv := col
		for r := col + 1; r < 4; r++ {
			if math.Abs(m[r][col]) > math.Abs(m[piv][col]) {
				piv = r
			}
		}
		if m[piv][col] == 0 || math.IsNaN(m[piv][col]) {
			return x, false
		}
		m[col], m[piv] = m[piv], m[col]
		for r := col + 1; r < 4; r++ {
			k := m[r][col] / m[col][col]
			for j := col; j < 5; j++ {
				m[r][j] -= k * m[col][j]
			}
		}
	}
	for r := 3; r >= 0; r-- {
		s := m[r][4]
		for j := r + 1; j < 4; j++ {
			s -= m[r][j] * x[j]
		}
		x[r] = s / m[r][r]
	}
	return x, true
}

// twoTermNearest returns the two-term steady state at freqHz whose
// fundamental is nearest to amp: each stable first-order state (buf is
// scratch of capacity ≥ 3) continued by solveTwoTerm, and, where freqHz
// lies just past a first-order fold (within 0.5ζf0 of it, folds being the
// first-order folds of p), the branch that ends there followed by
// continueBranch, since the two-term branch may reach a little further
// than the first-order one. ok is false when none continues.
func twoTermNearest(p duffing.Params, folds []duffing.Fold, freqHz, amp float64, buf []duffing.Root) (twoTerm, bool) {
	best, found := twoTerm{}, false
	d := math.Inf(1)
	try := func(s twoTerm) {
		if math.Abs(s.Amp-amp) < d {
			best, d, found = s, math.Abs(s.Amp-amp), true
		}
	}
	for _, r := range p.Roots(buf[:0], freqHz) {
		if !r.Stable {
			continue
		}
		if s, ok := solveTwoTerm(p, freqHz, r); ok {
			try(s)
		}
	}
	for _, fd := range folds {
		past := freqHz > fd.FreqHz
		if !fd.UpSweep {
			past = freqHz < fd.FreqHz
		}
		if past && math.Abs(freqHz-fd.FreqHz) <= 0.5*p.Zeta*p.F0Hz {
			if s, ok := continueBranch(p, fd, freqHz, buf); ok {
				try(s)
			}
		}
	}
	return best, found
}

// startBranch returns the two-term state 0.2ζf0 inside the first-order
// fold fd on the branch that ends there (from the stable first-order
// state nearest the fold's amplitude), its frequency and the direction
// (+1 or −1) towards the fold.
func startBranch(p duffing.Params, fd duffing.Fold, buf []duffing.Root) (twoTerm, float64, float64, bool) {
	dir := 1.0
	if !fd.UpSweep {
		dir = -1
	}
	f := fd.FreqHz - dir*0.2*p.Zeta*p.F0Hz
	start, d := duffing.Root{}, math.Inf(1)
	for _, r := range p.Roots(buf[:0], f) {
		if r.Stable && math.Abs(r.Amp-fd.Amp) < d {
			start, d = r, math.Abs(r.Amp-fd.Amp)
		}
	}
	if math.IsInf(d, 1) {
		return twoTerm{}, 0, 0, false
	}
	s, ok := solveTwoTerm(p, f, start)
	return s, f, dir, ok
}

// continueBranch follows the two-term branch that ends near the
// first-order fold fd (startBranch) to the frequency target beyond that
// fold, by the continuation of twoTermFold; ok is false when the branch
// ends first.
func continueBranch(p duffing.Params, fd duffing.Fold, target float64, buf []duffing.Root) (twoTerm, bool) {
	s, f, dir, ok := startBranch(p, fd, buf)
	if !ok {
		return twoTerm{}, false
	}
	h := 0.05 * p.Zeta * p.F0Hz
	for i := 0; i < 400 && h > 1e-9*p.F0Hz; i++ {
		if dir*(target-f) <= h {
			next, ok := newtonTwoTerm(p, target, s.A, s.C)
			if ok && math.Abs(next.Amp-s.Amp) <= 0.1*s.Amp {
				return next, true
			}
			h = dir * (target - f) / 2
			continue
		}
		next, ok := newtonTwoTerm(p, f+dir*h, s.A, s.C)
		if ok && math.Abs(next.Amp-s.Amp) <= 0.1*s.Amp {
			f += dir * h
			s = next
			continue
		}
		h /= 2
	}
	return twoTerm{}, false
}
