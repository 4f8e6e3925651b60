// Package dsp holds the signal computations sweeplock applies to blocks of
// samples: window functions and their figures of merit, a windowed
// single-sided amplitude and noise-density spectrum with between-bin peak
// refinement, the IEEE Std 1057/1241 three- and four-parameter sine fits
// (non-uniform sample times allowed), harmonic ratios and total harmonic
// distortion, and a clipping (overload) counter.
//
// Everything works on []float64 plus a sample rate in hertz; amplitudes are in
// the caller's signal units (volts, metres, normalised sound-card units) and
// each function's doc comment says which scaling it returns.
//
// What this package must never do: no I/O of any kind (files, terminals,
// devices, logging), no goroutines it does not own (it starts none), no
// package-level mutable state, and it never imports sweeplock's acquire or
// tui packages. Hot paths (Window.Weights, Spectrum.Amplitude,
// Spectrum.Density, Spectrum.Peak, Overloaded, Range.Clipped, FlatRuns)
// allocate nothing when handed destination slices of the right size; a size
// mismatch is a caller's bug and panics with a "dsp: " message. A Spectrum
// keeps scratch buffers and is not safe for concurrent use; make one per
// goroutine.
//
// The subpackages dsp/lockin, dsp/settle, dsp/jump and dsp/duffing build on
// the same rules.
package dsp
