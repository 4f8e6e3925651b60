// Package jump finds the jumps of a stepped frequency sweep: places where
// the amplitude changes between neighbouring logged points far more than
// the local trend of the sweep allows, as when a hardening (Duffing)
// resonator drops off its upper branch on an up-sweep or climbs onto it on
// a down-sweep.
//
// The input is the points of ONE sweep direction in sweep order; a jump
// is reported with the frequency interval between the two points it lies
// between, which brackets the fold of the branch the sweep was following.
// The steep flanks of an ordinary (linear) resonance are not jumps: the
// test is on the step in log amplitude against a robust estimate of the
// local trend of those steps, and on the amplitude ratio across the step.
//
// The package is pure computation on []Point: no I/O, no clock. It never
// reorders the points, and never mixes points of two sweep directions
// (going back across a hysteresis band changes the branch).
package jump
