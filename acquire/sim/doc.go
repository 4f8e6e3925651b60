// Package sim is sweeplock's built-in simulated rig: a Duffing resonator
// driven through the tool's own phase-accumulator drive and read by a
// simulated sensor and ADC. It is the program's default source and what the
// tests, the screen and the headless sweep run on when no bench is wired.
//
// The resonator obeys
//
//	x'' + 2ζω0 x' + ω0² x + β x³ = g·u(t),   u(t) = A(t)·cos(2π·φ(t)),
//
// with x the tip displacement in metres, ω0 = 2π·NaturalHz, ζ = 1/(2Q),
// β in 1/(m²·s²) (β > 0 hardening, β < 0 softening), g in m/s² per drive
// unit and A(t) the drive amplitude in drive units (amperes of coil current
// in the demos). It is integrated by the classical fourth-order Runge–Kutta
// method with Substeps fixed steps per sample period; the drive is evaluated
// at every Runge–Kutta stage time from the phase accumulator and the
// amplitude ramp, so the force seen by the integrator is continuous.
//
// A Rig offers two faces: Source (blocks of ADC samples, one or two channels)
// and Drive (Set, Off, Amp), because one Go type cannot carry both Info
// methods. Time is either paced to the wall clock (for the live screen) or
// virtual: as fast as the CPU allows and deterministic, block k+1 being made
// only after block k has been released (see Options).
//
// What this package must never do: touch real hardware, draw on a screen,
// keep package-level mutable state, or let the simulated force step: every
// amplitude change, Off and every stop ramps the drive.
package sim
