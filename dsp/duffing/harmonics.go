package duffing

import (
	"math"
	"math/cmplx"
)

// ThirdHarmonic returns the estimated ratio A3/A1 of the third harmonic to
// the fundamental for a response of fundamental amplitude amp at freqHz
// (Nondim.ThirdHarmonic with γY1² = βA1²/ω0²).
func (p Params) ThirdHarmonic(freqHz, amp float64) float64 {
	w0 := p.Omega0()
	return thirdRatio(p.Zeta, freqHz/p.F0Hz, p.Beta*amp*amp/(w0*w0))
}

// ThirdHarmonic returns the estimated ratio a3/a1 of the third harmonic
// to the fundamental of a response with fundamental amplitude y1 at Ω.
//
// Formula (two-term harmonic balance y ≈ a1 cos Ωτ + a3 cos 3Ωτ, the ansatz
// of the euphonics.org treatment of the Duffing oscillator, §8.2.2, with
// the coefficients derived here): balancing cos 3Ωτ to first order in a3,
//
//	(1 − 9Ω² + j6ζΩ)a3 + γ(a1³/4 + (3/2)a1²a3) = 0,
//	a3/a1 ≈ γa1² / (4·|9Ω² − 1 − (3/2)γa1² − j6ζΩ|).
//
// Near Ω ≈ 1 with small γa1² it is ≈ γa1²/32. It is the magnitude only.
func (n Nondim) ThirdHarmonic(omega, y1 float64) float64 {
	return thirdRatio(n.Zeta, omega, n.Gamma*y1*y1)
}

func thirdRatio(zeta, omega, g float64) float64 {
	d := complex(9*omega*omega-1-1.5*g, -6*zeta*omega)
	return math.Abs(g) / (4 * cmplx.Abs(d))
}

// Superharmonic returns the amplitude (amplitude unit) of the response at
// three times the drive frequency freqHz when the drive is near f0/3
// (Nondim.Superharmonic).
func (p Params) Superharmonic(freqHz float64) float64 {
	if p.Validate() != nil {
		return math.NaN()
	}
	return p.Nondim().Superharmonic(freqHz/p.F0Hz) * p.Static()
}

// SuperharmonicPeak returns the drive frequency (Hz) at which the
// superharmonic resonance near f0/3 peaks and the amplitude of the 3ω
// response there (amplitude unit); see Nondim.SuperharmonicPeak.
func (p Params) SuperharmonicPeak() (freqHz, amp3 float64) {
	if p.Validate() != nil {
		return math.NaN(), math.NaN()
	}
	om, a := p.Nondim().SuperharmonicPeak()
	return om * p.F0Hz, a * p.Static()
}

// Superharmonic returns the amplitude of the 3Ω component of the response
// when Ω is near 1/3, from the slow flow of the superharmonic resonance in
// the form of A. H. Nayfeh, D. T. Mook, Nonlinear Oscillations (Wiley
// 1979) §4.1.3 (form from memory; the coefficients are re-derived here).
// With X1 the primary (first-order harmonic-balance) amplitude at Ω, the
// term γX1³/4·cos 3Ωτ of γy³ drives the free oscillation at 1; with
// 3Ω = 1 + σ and y ≈ X1 cos Ωτ + a cos(3Ωτ − ψ) the slow flow
//
//	a' = −ζa − (γX1³/8) sin ψ,
//	aψ' = (σ − ¾γX1²)a − (3/8)γa³ − (γX1³/8) cos ψ
//
// has the steady states [ζ² + (σ − ¾γX1² − (3/8)γa²)²]a² = (γX1³/8)², a
// cubic in a² of the same shape as the primary relation. The largest
// stable one is returned. Only meaningful near Ω = 1/3.
func (n Nondim) Superharmonic(omega float64) float64 {
	x1 := n.primaryAmp(omega)
	sigma := 3*omega - 1
	f := n.Gamma * x1 * x1 * x1 / 8
	c := hbCubic{k: -(sigma - 0.75*n.Gamma*x1*x1), e: 3 * n.Gamma / 8, c2: n.Zeta * n.Zeta, phi: f * f}
	ps, cnt := c.roots()
	best := 0.0
	for i := 0; i < cnt; i++ {
		if _, dh := c.eval(ps[i]); dh > 0 && ps[i] > best*best {
			best = math.Sqrt(ps[i])
		}
	}
	return best
}

// SuperharmonicPeak returns the scaled drive frequency of the peak of the
// superharmonic resonance and the 3Ω amplitude there. At the peak the
// slow-flow detuning vanishes, σ = ¾γX1² + (3/8)γa², and a = |γ|X1³/(8ζ);
// since X1 depends on Ω the two are iterated to a fixed point from
// Ω = 1/3. To first order this is 3Ω ≈ √(1 + (3/2)γX1²).
func (n Nondim) SuperharmonicPeak() (omega, amp3 float64) {
	omega = 1.0 / 3
	for i := 0; i < 100; i++ {
		x1 := n.primaryAmp(omega)
		amp3 = math.Abs(n.Gamma) * x1 * x1 * x1 / (8 * n.Zeta)
		next := (1 + 0.75*n.Gamma*x1*x1 + 0.375*n.Gamma*amp3*amp3) / 3
		if math.Abs(next-omega) <= 1e-15 {
			omega = next
			break
		}
		omega = next
	}
	return omega, amp3
}

// primaryAmp returns the largest stable first-order amplitude at Ω.
func (n Nondim) primaryAmp(omega float64) float64 {
	var buf [3]Root
	best := 0.0
	for _, r := range n.Roots(buf[:0], omega) {
		if r.Stable && r.Amp > best {
			best = r.Amp
		}
	}
	return best
}
