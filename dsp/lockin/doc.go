// Package lockin measures, sample by sample, the complex amplitudes of the
// drive frequency's harmonics and subharmonics in one or more channels: a
// streaming multi-harmonic lock-in demodulator.
//
// # Conventions
//
// The drive is u(t) = A·cos(2πφ(t)), φ its phase in cycles, unwrapped (it
// grows by f/f_s per sample). The caller passes φ at every frame: exactly,
// from the tool's own phase accumulator, or from a sine fit of a reference
// channel. Frame times are seconds and may be unevenly spaced. The
// response is modelled as
//
//	x(t) ≈ c + Σ_h Re{Z_h·e^{j2π(Num_h/Den_h)φ(t)}},
//
// so |Z_h| is the peak amplitude of harmonic h and arg Z_h its phase
// relative to the drive's cosine at that multiple: a linear resonator reads
// about 0 well below resonance, −π/2 at resonance and −π well above.
//
// # Modes
//
// Sync (the default) gives one result per block of Config.Cycles whole
// drive cycles, the block boundaries found from φ. Each result is the
// weighted least-squares fit of c and every Z_h over the block, weighted by
// the trapezoid rule in φ. It is exact (to rounding) for a signal made of
// the configured harmonics whatever the sampling — coherent, not coherent,
// jittered — and with uniform coherent sampling it is the plain
// demodulation sum (2/N)·Σ x_n·e^{−jθ_n}. In white noise it is the
// maximum-likelihood estimate: its variance meets the Cramér–Rao bound.
// Along a linear phase (the usual case) it costs one multiplication and two
// additions per sample and harmonic (a Goertzel recurrence); unevenly
// spaced phases take a slower per-sample path. Nothing depends on the
// drive frequency, which may change from sample to sample (keep its phase
// continuous).
//
// LowPass mixes each harmonic down and smooths it with Config.Order
// cascaded first-order stages of time constant Config.TimeConstant,
// discretised exactly for every sample interval; NoiseBandwidthHz and
// SettleTime give the filter's published noise bandwidth and settling.
//
// # What it must not do
//
// lockin is pure computation: no I/O, no goroutines, no global state, and
// it imports nothing from acquire or tui. After New it allocates nothing:
// Push runs in the acquisition path, and Result hands out storage that the
// next Push reuses.
package lockin
