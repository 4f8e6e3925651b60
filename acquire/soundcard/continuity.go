package soundcard

import "math"

// Thresholds of the continuity check (see slipDetector).
const (
	// slipRel scales the tone's own bound: a residual above
	// slipRel·2A·sin(ω/2) counts as a slip. Legitimate residuals stay far
	// below it: a phase-continuous frequency step Δω leaves A·|Δω| once
	// (under the threshold while Δω < slipRel·ω, i.e. steps under 10 %), a
	// 1 % third harmonic leaves about 0.08·A·ω², an amplitude ramp
	// 2|a'|·ω per frame², all for ω ≪ 1.
	slipRel = 0.1
	// slipNoise: a residual above slipNoise times the window's mean
	// residual counts (white noise of sd σ gives a mean |e| near 2σ, so
	// this is about 20σ: no false alarms from noise).
	slipNoise = 10
	// slipFloor: residuals below this never count (16-bit rounding leaves
	// at most 2 LSB = 6e−5 in e).
	slipFloor = 1e-4
	// slipMinAmp: below this amplitude (full-scale units) there is no tone
	// to check.
	slipMinAmp = 1e-3
	// slipOld is how many earlier frequencies stay candidates.
	slipOld = 3
)

// slipDetector finds audio lost or repeated in the sound path by checking
// that the reference input — the drive coming back — stays one continuous
// sinusoid.
//
// Every sampled sinusoid x[n] = A·cos(ωn + φ) obeys exactly
//
//	x[n] = 2cos ω · x[n−1] − x[n−2]
//
// (from cos(a+b) + cos(a−b) = 2 cos a cos b; the recurrence of a digital
// resonator, common practice), whatever its amplitude and phase. The
// residual e[n] = x[n] − 2cos ω·x[n−1] + x[n−2] is therefore zero up to
// noise on a steady tone. If k frames go missing (or repeat) before frame
// n, the two residuals after the break are
//
//	e[n] = −2A sin(ωk/2) sin(α),  e[n+1] = 2A sin(ωk/2) sin(α − ω)
//
// for some α, so the larger is at least 2A·|sin(ωk/2)|·sin(ω/2) (derived
// here). A residual above max(slipRel·2A·sin(ω/2), slipNoise·mean|e|,
// slipFloor) marks a slip: every break with |sin(ωk/2)| > slipRel is
// caught wherever it falls; a break by a whole number of cycles is not
// seen (and does not disturb the tone).
//
// The reference lags the generator by the path delay, so after a
// frequency change the earlier frequencies stay candidates for a while
// (hold frames); e is the smallest residual over the candidates.
//
// A slipDetector is owned by the audio callback; it never allocates.
type slipDetector struct {
	x1, x2  float64 // the last two samples
	primed  int     // samples seen since the last reset, up to 2
	frames  uint64  // samples seen in all
	hold    uint64  // frames an earlier frequency stays a candidate
	cur     float64 // 2cos ω of the frequency being made
	sinHalf float64 // sin(ω/2) of the frequency being made
	old     [slipOld]struct {
		c2    float64
		until uint64 // frames count after which it stops being a candidate
	}
	scratch []float64 // residuals of one window
}

func newSlipDetector(window int, holdFrames uint64) slipDetector {
	return slipDetector{hold: holdFrames, cur: 2, scratch: make([]float64, window)}
}

// retune tells the detector the generator's new frequency (ω rad per frame).
func (d *slipDetector) retune(omega float64) {
	c2 := 2 * math.Cos(omega)
	if c2 == d.cur {
		return
	}
	// Keep the frequency being left as a candidate, in the stalest slot.
	k := 0
	for i := range d.old {
		if d.old[i].until < d.old[k].until {
			k = i
		}
	}
	d.old[k].c2, d.old[k].until = d.cur, d.frames+d.hold
	d.cur = c2
	d.sinHalf = math.Sin(omega / 2)
}

// reset forgets the last samples (after a gap the recurrence restarts).
func (d *slipDetector) reset() { d.primed = 0 }

// scan checks one window of samples: x[off], x[off+stride], ... for n
// samples (n ≤ the window it was made for). It reports whether the window
// holds a slip.
func (d *slipDetector) scan(x []float32, off, stride, n int) bool {
	n = min(n, len(d.scratch))
	var sumSq, sumE float64
	for i := range n {
		v := float64(x[off+i*stride])
		e := 0.0
		if d.primed >= 2 {
			e = math.Abs(v - d.cur*d.x1 + d.x2)
			for j := range d.old {
				if d.old[j].until > d.frames {
					e = min(e, math.Abs(v-d.old[j].c2*d.x1+d.x2))
				}
			}
		} else {
			d.primed++
		}
		d.scratch[i] = e
		sumE += e
		sumSq += v * v
		d.x2, d.x1 = d.x1, v
		d.frames++
	}
	if n == 0 {
		return false
	}
	a := math.Sqrt(2 * sumSq / float64(n))
	if a < slipMinAmp {
		return false
	}
	thr := max(slipRel*2*a*d.sinHalf, slipNoise*sumE/float64(n), slipFloor)
	for _, e := range d.scratch[:n] {
		if e > thr {
			return true
		}
	}
	return false
}
