package dsp

import (
	"fmt"
	"math"
)

// Range is the span a source can represent, in the units of its samples:
// [-1, 1] for a normalised sound-card stream, [0, 3.3] V for a unipolar
// microcontroller ADC, [-10, 10] V for a bipolar data-acquisition input.
// A sample at or beyond either edge may have been clipped, and any harmonic
// measured on a block holding one is suspect.
type Range struct {
	Min, Max float64
}

// Symmetric returns the range [-fullScale, fullScale].
func Symmetric(fullScale float64) Range { return Range{Min: -fullScale, Max: fullScale} }

// Clipped counts the samples of x at or near each edge of r: low counts
// x ≤ Min + m and high counts x ≥ Max - m, where the margin
// m = margin·(Max-Min)/2 is a fraction of the half-span (margin 0.001 is
// "within 0.1 % of full scale" for a symmetric range, and about 2 codes of a
// 12-bit ADC). NaN samples count in neither. Counting samples within a
// small margin of the rails is common practice for clip detection, because
// a converter driven past its range returns its extreme code (or, after
// an analog stage that saturates softly, values just short of it).
// It allocates nothing and panics if Max <= Min or margin is negative.
func (r Range) Clipped(x []float64, margin float64) (low, high int) {
	if !(r.Max > r.Min) {
		panic(fmt.Sprintf("dsp: Range.Clipped needs Max > Min, got [%g, %g]", r.Min, r.Max))
	}
	if !(margin >= 0) {
		panic(fmt.Sprintf("dsp: Range.Clipped needs a margin >= 0, got %g", margin))
	}
	m := margin * (r.Max - r.Min) / 2
	lo, hi := r.Min+m, r.Max-m
	for _, v := range x {
		if v <= lo {
			low++
		} else if v >= hi {
			high++
		}
	}
	return low, high
}

// Overloaded returns how many samples of x have |x| ≥ fullScale·(1-margin):
// Range.Clipped for the symmetric range ±fullScale, both edges together.
// It allocates nothing and panics if fullScale is not positive or margin is
// negative.
func Overloaded(x []float64, fullScale, margin float64) int {
	if !(fullScale > 0) {
		panic(fmt.Sprintf("dsp: Overloaded needs a positive full scale, got %g", fullScale))
	}
	lo, hi := Symmetric(fullScale).Clipped(x, margin)
	return lo + hi
}

// FlatRuns returns how many samples of x lie in runs of at least minRun
// consecutive identical values equal to the block's maximum or minimum:
// the flat tops a clipped stage leaves when its limit is not known (an
// amplifier saturating before the converter). A clean sine sampled far
// above its frequency also repeats its peak code, about
// (2/ω)·√(2·q/A) seconds for code step q and amplitude A (from
// cos ωt ≈ 1 - (ωt)²/2), so choose minRun above that many samples. NaN
// samples break runs. It allocates nothing and panics if minRun < 2.
func FlatRuns(x []float64, minRun int) int {
	if minRun < 2 {
		panic(fmt.Sprintf("dsp: FlatRuns needs minRun >= 2, got %d", minRun))
	}
	if len(x) == 0 {
		return 0
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range x {
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
	}
	count, run := 0, 1
	for i := 1; i <= len(x); i++ {
		if i < len(x) && x[i] == x[i-1] {
			run++
			continue
		}
		if v := x[i-1]; run >= minRun && (v == lo || v == hi) {
			count += run
		}
		run = 1
	}
	return count
}
