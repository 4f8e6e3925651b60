// Package duffing is the model of a driven resonator with cubic stiffness
// (the Duffing oscillator) by first-order harmonic balance, and the fit of
// that model to a stepped-sine record of both sweep directions.
//
// The equation is
//
//	x'' + 2ζω0 x' + ω0² x + β x³ = F(ω) cos ωt,
//
// with x in the record's display unit (for example mm), ω0 = 2π·F0Hz in
// rad/s, β in 1/(unit²·s²) and F in unit/s². F(ω) = F for a force (or coil)
// drive; in the base-excitation form (Params.Base) the forcing grows with the
// square of the drive frequency, F(ω) = F·(ω/ω0)², which is what a shaker
// table of constant displacement amplitude X_b gives the relative motion
// (F = X_b·ω0²).
//
// The scaled form used by the tests and by the published check values is
//
//	y'' + 2ζ y' + y + γ y³ = Ω^m cos Ωτ,   y = x ω0²/F, Ω = ω/ω0, τ = ω0 t,
//	γ = β F²/ω0⁶, m = 0 (force) or m = 2 (base),
//
// (type Nondim). Its first-order harmonic balance y ≈ Y cos(Ωτ + φ) gives
//
//	[(1 − Ω² + ¾γY²)² + (2ζΩ)²]·Y² = Ω^(2m),
//
// a cubic in Y², solved here by bracketing each root between the turning
// points of the cubic and polishing it with a safeguarded Newton iteration.
//
// The package computes amplitudes, phases and stability of the one or three
// steady states at a drive frequency, the backbone, the peak, the fold
// (jump) frequencies and the bistable band, the onset of hysteresis, closed
// form approximations of the jumps, an estimate of the third harmonic and of
// the superharmonic resonance near ω0/3, and fits ω0, ζ, β and F to measured
// amplitudes by Levenberg–Marquardt with standard uncertainties.
//
// For a softening spring (β < 0) first-order harmonic balance also returns
// roots of large amplitude that belong to no motion of the oscillator: the
// potential ½ω0²x² + ¼βx⁴ has its rim at the escape amplitude ω0/√|β|
// (Y = 1/√|γ|), and beyond it the motion is unbounded. Those roots lie on a
// branch of the harmonic-balance curve separated from the main resonance by a
// gap in amplitude; this package drops that branch, and when the gap has
// closed (the drive is strong enough for the resonator to escape) it drops
// every root beyond the escape amplitude.
//
// duffing is pure computation. It must never do I/O, start goroutines or
// import the acquisition or screen packages.
package duffing
