// Package settle decides when the response of a driven resonator has
// settled after a change of the drive, so that a point may be logged.
//
// After each drive change the sweep runner calls Reset with the duration of
// one block (M whole drive cycles) and then feeds Update one complex
// amplitude per block: the fundamental's lock-in output, z = peak
// amplitude·e^{j·phase} relative to the drive. At every block Update says
// whether the point is still settling (with progress and an estimate of the
// time left), has settled, is approaching far more slowly than the rig's
// expected time constant (a jump may be near), or has reached the maximum
// dwell without settling, in which case the point must be logged as not
// settled.
//
// The model behind the decision: for a linear resonator, or for any
// resonator close to a stable steady state, the error of the block phasor
// z_k − z∞ is the output of a two-dimensional linear map iterated once per
// block, so by the Cayley–Hamilton theorem it obeys a second-order
// recurrence with real coefficients,
//
//	e_{k+2} = p1·e_{k+1} + p2·e_k,  e_k = z_k − z∞,
//
// whose roots are the block-to-block decay factors. For the linear
// resonator ẍ + 2ζω0ẋ + ω0²x = F cos ωt with blocks of whole drive
// cycles the roots are exactly e^{(−ζω0 ± jωd)T_block}, so the model is
// exact there, beat, counter-rotating term and all. The detector fits the
// levels z∞ + A·g_k + B·h_k of the recent blocks, g and h solutions of the
// recurrence, by least squares in all five complex and real unknowns, and
// compares an upper bound on the remaining error (estimate plus a multiple
// of its standard error) with the tolerance. See Detector for the rules
// that keep noise, a short window and a non-exponential start from
// producing a false "settled".
//
// The package is pure computation: no I/O, no goroutines, no clock. It
// must never call a point settled that it cannot show to be settled, and
// never report Settled after the maximum dwell has been reached without it.
package settle
