package duffing

import (
	"fmt"
	"math"
)

// Params is the dimensional model
//
//	x'' + 2ζω0 x' + ω0² x + β x³ = F(ω) cos ωt,  ω0 = 2π·F0Hz,
//
// with F(ω) = Force, or F(ω) = Force·(ω/ω0)² when Base is set (base
// excitation: Force = X_b·ω0² for a base displacement amplitude X_b).
// Amplitudes are in the record's display unit u (for example mm).
type Params struct {
	F0Hz  float64 // linear natural frequency f0 = ω0/2π, Hz
	Zeta  float64 // damping ratio ζ (dimensionless, > 0)
	Beta  float64 // cubic stiffness per unit mass β, 1/(u²·s²); > 0 hardening, < 0 softening
	Force float64 // forcing amplitude per unit mass F, u/s² (at ω = ω0 in the Base form)
	Base  bool    // forcing grows as (ω/ω0)² (base excitation)
}

// Root is one steady state of the harmonic-balance relation at a drive
// frequency: x ≈ Amp·cos(ωt + PhaseRad).
type Root struct {
	Amp      float64 // amplitude of the fundamental, in the caller's unit (u, or Y in the scaled form)
	PhaseRad float64 // phase of the response relative to the forcing cosine, in (−π, 0]: lagging is negative
	Stable   bool    // whether the steady state attracts nearby motions
}

// Nondim is the scaled Duffing equation
//
//	y'' + 2ζ y' + y + γ y³ = Ω^m cos Ωτ,
//
// with y = x ω0²/F, Ω = ω/ω0, τ = ω0 t, γ = β F²/ω0⁶, m = 0, or m = 2 when
// Base is set. It is the form in which the published check values are
// given (M. J. Brennan, I. Kovacic, A. Carrella, T. P. Waters, "On the
// jump-up and jump-down frequencies of the Duffing oscillator", J. Sound
// Vib. 318 (2008) 1250–1261, use this scaling).
type Nondim struct {
	Zeta  float64 // damping ratio ζ
	Gamma float64 // γ = βF²/ω0⁶
	Base  bool    // forcing Ω² cos Ωτ instead of cos Ωτ
}

// Validate reports ErrParams, with the offending value, if F0Hz ≤ 0,
// Zeta ≤ 0, Force < 0 or any field is not finite.
func (p Params) Validate() error {
	switch {
	case !(p.F0Hz > 0) || math.IsInf(p.F0Hz, 0):
		return fmt.Errorf("%w: F0Hz = %g; the natural frequency must be a positive number of Hz", ErrParams, p.F0Hz)
	case !(p.Zeta > 0) || math.IsInf(p.Zeta, 0):
		return fmt.Errorf("%w: Zeta = %g; the damping ratio must be positive", ErrParams, p.Zeta)
	case !(p.Force >= 0) || math.IsInf(p.Force, 0):
		return fmt.Errorf("%w: Force = %g; the forcing amplitude must be zero or positive", ErrParams, p.Force)
	case math.IsNaN(p.Beta) || math.IsInf(p.Beta, 0):
		return fmt.Errorf("%w: Beta = %g; the cubic stiffness must be finite", ErrParams, p.Beta)
	}
	return nil
}

// Omega0 returns ω0 = 2π·F0Hz in rad/s.
func (p Params) Omega0() float64 { return 2 * math.Pi * p.F0Hz }

// Static returns the static deflection x_s = F/ω0² in the amplitude unit:
// the scale that turns the scaled amplitude Y into an amplitude.
func (p Params) Static() float64 {
	w0 := p.Omega0()
	return p.Force / (w0 * w0)
}

// Nondim returns the scaled form: ζ, γ = β x_s²/ω0² = βF²/ω0⁶ and Base.
func (p Params) Nondim() Nondim {
	w0 := p.Omega0()
	xs := p.Static()
	return Nondim{Zeta: p.Zeta, Gamma: p.Beta * xs * xs / (w0 * w0), Base: p.Base}
}

// FromNondim returns the dimensional model with natural frequency f0Hz and
// static deflection xStatic = F/ω0² (amplitude unit) whose scaled form is n:
// Force = xStatic·ω0², Beta = γ·ω0²/xStatic².
func FromNondim(n Nondim, f0Hz, xStatic float64) Params {
	w0 := 2 * math.Pi * f0Hz
	return Params{F0Hz: f0Hz, Zeta: n.Zeta, Beta: n.Gamma * w0 * w0 / (xStatic * xStatic),
		Force: xStatic * w0 * w0, Base: n.Base}
}

// Q returns the quality factor of the linear resonance, Q = 1/(2ζ).
func (p Params) Q() float64 { return 1 / (2 * p.Zeta) }

// Roots appends to dst[:0] the physical steady states at the drive
// frequency freqHz, in ascending amplitude (one, or three of which the
// middle one is unstable), and returns it. It allocates only when dst has
// capacity below 3. It returns dst[:0] when p is invalid (see Validate).
//
// Formula: first-order harmonic balance x ≈ A cos(ωt + φ) gives
//
//	[(ω0² − ω² + ¾βA²)² + (2ζω0ω)²]·A² = F(ω)²,
//	φ = −atan2(2ζω0ω, ω0² − ω² + ¾βA²),
//
// (see Nondim.Roots for the method, stability and the softening escape).
func (p Params) Roots(dst []Root, freqHz float64) []Root {
	dst = dst[:0]
	if p.Validate() != nil || !(freqHz >= 0) {
		return dst
	}
	xs := p.Static()
	n := len(dst)
	dst = p.Nondim().Roots(dst, freqHz/p.F0Hz)
	for i := n; i < len(dst); i++ {
		dst[i].Amp *= xs
	}
	return dst
}

// Backbone returns the frequency of free oscillation at amplitude amp
// predicted by first-order harmonic balance, f = f0·√(1 + ¾βA²/ω0²), in Hz;
// NaN when a softening backbone has fallen to zero frequency before amp.
func (p Params) Backbone(amp float64) (freqHz float64) {
	w0 := p.Omega0()
	r := 1 + 0.75*p.Beta*amp*amp/(w0*w0)
	if r < 0 {
		return math.NaN()
	}
	return p.F0Hz * math.Sqrt(r)
}

// Peak returns the drive frequency (Hz) and amplitude of the largest
// physical steady state of the harmonic-balance curve; ok is false when the
// curve does not close (a hardening base-excited resonator with
// 3γ/(16ζ²) ≥ 1, or a softening one beyond escape). See Nondim.Peak.
func (p Params) Peak() (freqHz, amp float64, ok bool) {
	if p.Validate() != nil {
		return 0, 0, false
	}
	om, y, ok := p.Nondim().Peak()
	return om * p.F0Hz, y * p.Static(), ok
}

// Roots appends to dst[:0] the physical steady states at the scaled drive
// frequency omega = Ω, in ascending amplitude Y, and returns it.
//
// Method: with p = Y², k = 1 − Ω², the first-order harmonic balance
//
//	[(k + ¾γp)² + (2ζΩ)²]·p = Ω^(2m)
//
// is a cubic with one or three real roots, all positive; each is bracketed
// between the turning points of the cubic and polished by safeguarded
// Newton (cubic.go). The phase is φ = −atan2(2ζΩ, k + ¾γp).
//
// Stability: a root is stable when d(Ω^(2m))/dp > 0 along the curve at
// fixed Ω, that is (k + ¾γp)(k + 9/4·γp) + (2ζΩ)² > 0. This is the sign of
// the determinant of the Jacobian of the averaged (slow-flow) equations,
// whose trace −2ζ is negative; of three roots the middle one is unstable
// (A. H. Nayfeh, D. T. Mook, Nonlinear Oscillations, Wiley 1979, §4.1; the
// form here is derived from the cubic, the citation is from memory).
//
// Softening (γ < 0): the roots of the branch detached from the main
// resonance, beyond the escape amplitude Y = 1/√|γ|, are dropped (see the
// package comment and physicalLimit).
func (n Nondim) Roots(dst []Root, omega float64) []Root {
	dst = dst[:0]
	if !(n.Zeta >= 0) || math.IsNaN(n.Gamma) || !(omega >= 0) {
		return dst
	}
	c := n.cubic(omega)
	ps, cnt := c.roots()
	limit := n.physicalLimit()
	for i := 0; i < cnt; i++ {
		pp := ps[i]
		if pp >= limit {
			continue
		}
		w := c.k + c.e*pp
		_, dh := c.eval(pp)
		dst = append(dst, Root{
			Amp:      math.Sqrt(pp),
			PhaseRad: -math.Atan2(2*n.Zeta*omega, w),
			Stable:   dh > 0,
		})
	}
	return dst
}

// cubic returns the harmonic-balance cubic at Ω.
func (n Nondim) cubic(omega float64) hbCubic {
	o2 := omega * omega
	phi := 1.0
	if n.Base {
		phi = o2 * o2
	}
	return hbCubic{k: 1 - o2, e: 0.75 * n.Gamma, c2: 4 * n.Zeta * n.Zeta * o2, phi: phi}
}

// discQuad returns the coefficients of D(p) = a·p² + b·p + 1, whose sign
// says whether the curve has points at amplitude Y = √p: at fixed p the
// harmonic balance is a quadratic in s = Ω²,
//
//	force: s² − 2(κ − 2ζ²)s + κ² − 1/p = 0,
//	base:  (1 − 1/p)s² − 2(κ − 2ζ²)s + κ² = 0,    κ = 1 + ¾γp,
//
// with real roots exactly when D(p) ≥ 0, where p·(discriminant/4) = D(p):
//
//	force: a = −3ζ²γ,            b = −4ζ²(1 − ζ²),
//	base:  a = 9γ²/16 − 3ζ²γ,    b = 3γ/2 − 4ζ²(1 − ζ²).
//
// (Derived here from the harmonic-balance relation.)
func (n Nondim) discQuad() (a, b float64) {
	z2 := n.Zeta * n.Zeta
	if n.Base {
		return 9*n.Gamma*n.Gamma/16 - 3*z2*n.Gamma, 1.5*n.Gamma - 4*z2*(1-z2)
	}
	return -3 * z2 * n.Gamma, -4 * z2 * (1 - z2)
}

// discRoots returns the positive roots of D(p) = a p² + b p + 1 in
// ascending order.
func discRoots(a, b float64) (r [2]float64, n int) {
	if a == 0 {
		if b < 0 {
			r[0] = -1 / b
			return r, 1
		}
		return r, 0
	}
	d := b*b - 4*a
	if d < 0 {
		return r, 0
	}
	// Stable pair: q = −(b + sgn(b)√d)/2, roots q/a and 1/q.
	q := -0.5 * (b + math.Copysign(math.Sqrt(d), b))
	x1, x2 := q/a, 1/q
	if x1 > x2 {
		x1, x2 = x2, x1
	}
	for _, x := range [2]float64{x1, x2} {
		if x > 0 {
			r[n] = x
			n++
		}
	}
	return r, n
}

// physicalLimit returns the bound on p = Y² below which roots belong to
// the main resonance. Hardening: +Inf. Softening: when D(p) has two
// positive roots p1 < p2 the curve has no point with p1 < p < p2 and the
// branch p ≥ p2 is detached from the resonance, beyond the escape
// amplitude; the bound is their geometric mean √(p1p2) = 1/√a, safely
// inside the gap. When the gap has closed, the bound is the escape
// amplitude itself, p = 1/|γ| (the rim of the potential y²/2 + γy⁴/4).
func (n Nondim) physicalLimit() float64 {
	if n.Gamma >= 0 {
		return math.Inf(1)
	}
	a, b := n.discQuad()
	if r, cnt := discRoots(a, b); cnt == 2 {
		return math.Sqrt(r[0] * r[1])
	}
	return 1 / -n.Gamma
}

// Peak returns the scaled frequency Ω and amplitude Y of the largest
// physical steady state: the smallest positive root p of D(p) (discQuad),
// where the two frequencies that the curve has at amplitude √p merge, at
//
//	force: Ω² = κ − 2ζ²,   base: Ω² = (κ − 2ζ²)/(1 − 1/p),   κ = 1 + ¾γp.
//
// For the force form p solves 3ζ²γp² + 4ζ²(1 − ζ²)p − 1 = 0; with γ = 0 it
// gives the linear peak Y = 1/(2ζ√(1 − ζ²)) at Ω² = 1 − 2ζ² (standard
// textbook result). ok is false when the curve does not close. Derived
// here.
func (n Nondim) Peak() (omega, y float64, ok bool) {
	if !(n.Zeta > 0) {
		return 0, 0, false
	}
	r, cnt := discRoots(n.discQuad())
	if cnt == 0 {
		return 0, 0, false
	}
	pp := r[0]
	kappa := 1 + 0.75*n.Gamma*pp
	s := kappa - 2*n.Zeta*n.Zeta
	if n.Base {
		s /= 1 - 1/pp
	}
	if !(s > 0) {
		return 0, 0, false
	}
	return math.Sqrt(s), math.Sqrt(pp), true
}
