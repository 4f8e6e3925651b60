package soundcard

import "math"

// twoTo64 is 2⁶⁴, the phase accumulator's modulus (one cycle).
const twoTo64 = 18446744073709551616.0

// phaseInc returns the phase accumulator's step per frame for freqHz at
// rateHz: round(f/fs·2⁶⁴), so the frequency actually made is
// inc·fs/2⁶⁴ (a relative error below 2⁻⁵³ for f/fs ≥ 2⁻¹¹, and of at most
// fs·2⁻⁶⁴ hertz always). Callers keep 0 ≤ f < fs/2.
func phaseInc(freqHz, rateHz float64) uint64 {
	return uint64(math.Round(freqHz / rateHz * twoTo64))
}

// generator is the drive's sine oscillator: a phase accumulator in cycles,
// as a direct digital synthesiser (DDS) has, and an amplitude ramp.
//
// The phase is an integer count of whole cycles plus a 64-bit fraction of
// a cycle; each frame adds inc to the fraction, carrying into the count.
// The sample at a frame is
//
//	x = a·cos(2π·frac/2⁶⁴)
//
// so a frequency change (a new inc) keeps the phase — and the signal —
// continuous; only the slope changes. The amplitude moves from a0 to a1
// over n frames along a raised cosine,
//
//	a(k) = a0 + (a1−a0)·(1 − cos(πk/n))/2,  k = 0…n,
//
// whose slope is zero at both ends, so the force on the resonator has no
// step and no kink; its largest rate is (π/2)·|a1−a0|/n per frame.
// (Phase accumulators and raised-cosine ramps are common practice.)
//
// A generator is owned by the audio callback; it never allocates.
type generator struct {
	frac   uint64  // phase, fraction of a cycle in units of 2⁻⁶⁴
	whole  int64   // phase, whole cycles
	inc    uint64  // phase step per frame
	freqHz float64 // frequency that inc stands for

	amp        float64 // amplitude at the next frame
	from, to   float64 // ramp end points
	k, n       int     // ramp progress: frame k of n (k == n: not ramping)
	rampFrames int     // frames every ramp takes
	maxAmp     float64 // clamp on every amplitude
}

func newGenerator(rampFrames int, maxAmp float64) generator {
	return generator{rampFrames: max(rampFrames, 1), maxAmp: maxAmp}
}

// retune sets the frequency from the next frame on, keeping the phase.
func (g *generator) retune(inc uint64, freqHz float64) {
	g.inc = inc
	g.freqHz = freqHz
}

// target starts a ramp from the present amplitude to amp (clamped to
// [0, maxAmp]). A new target during a ramp starts a new ramp from where the
// old one had got to.
func (g *generator) target(amp float64) {
	amp = min(max(amp, 0), g.maxAmp)
	if amp == g.amp && g.k == g.n {
		return
	}
	g.from, g.to = g.amp, amp
	g.k, g.n = 0, g.rampFrames
}

// phaseCyc returns the unwrapped phase in cycles at the next frame.
func (g *generator) phaseCyc() float64 {
	return float64(g.whole) + float64(g.frac)/twoTo64
}

// next returns the sample and the amplitude at the next frame and moves on
// by one frame.
func (g *generator) next() (x, amp float64) {
	amp = g.amp
	x = amp * math.Cos(2*math.Pi*(float64(g.frac)/twoTo64))
	f := g.frac + g.inc
	if f < g.frac {
		g.whole++
	}
	g.frac = f
	if g.k < g.n {
		g.k++
		if g.k == g.n {
			g.amp = g.to
		} else {
			g.amp = g.from + (g.to-g.from)*0.5*(1-math.Cos(math.Pi*float64(g.k)/float64(g.n)))
		}
	}
	return x, amp
}

// ramping reports whether a ramp is under way.
func (g *generator) ramping() bool { return g.k < g.n }
