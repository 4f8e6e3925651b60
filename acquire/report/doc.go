// Package report reads a sweep record, fits the Duffing model to it and
// says what the fit found, as a plain table for a person or as JSON for a
// script.
//
// The fit is first-order harmonic balance (package dsp/duffing) of both
// sweep directions at once, with the jumps the record saw; it is then
// refitted with the third harmonic (two-term harmonic balance), which
// removes the bias first-order balance leaves in f0, ζ, β and F when the
// response is large. The report compares the predicted jumps and bistable
// band with the measured ones, looks for a superharmonic peak near f0/3 in
// the record's third harmonic, and puts into plain words where the model
// does not explain the data. When the record comes from the simulated rig,
// whose true parameters the sidecar holds, they are shown beside the fit.
//
// report reads files and formats text; it never writes files, starts
// goroutines, or draws (package tui/figure draws records and fits).
package report
