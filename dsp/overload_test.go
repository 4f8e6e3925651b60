package dsp

import (
	"math"
	"testing"
)

// clippedSine returns offset + amp·sin(2π·f·n/fs + φ), clamped to [lo, hi]
// as a converter or saturating stage does.
func clippedSine(n int, fs, f, amp, offset, phase, lo, hi float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = math.Min(hi, math.Max(lo, offset+amp*math.Sin(2*math.Pi*f*float64(i)/fs+phase)))
	}
	return x
}

// fracAbove is the exact fraction of time that sin θ ≥ s for θ uniform
// over a period: ½ - asin(s)/π (0 for s ≥ 1, 1 for s ≤ -1).
func fracAbove(s float64) float64 {
	if s >= 1 {
		return 0
	}
	if s <= -1 {
		return 1
	}
	return 0.5 - math.Asin(s)/math.Pi
}

// TestClippedCounts checks the counts on clipped synthetic sines against
// the exact time fraction the sine spends beyond the threshold, over a whole
// number of cycles (a partial cycle would weight part of the waveform
// twice). Sampling turns each excursion beyond the threshold (one per cycle
// per edge) into a whole number of samples, off by at most one, plus one at
// each end of the block: the tolerance is the number of cycles + 2.
func TestClippedCounts(t *testing.T) {
	const n, fs, f = 48000, 48000.0, 50.0 // 50 whole cycles
	cycles := f * n / fs
	for _, tc := range []struct {
		name                    string
		r                       Range
		amp, offset, margin     float64
		wantLowFrac, wantHiFrac float64
	}{
		{
			name: "sound card ±1, amp 1.5", r: Symmetric(1), amp: 1.5, margin: 0.001,
			wantLowFrac: fracAbove(0.999 / 1.5), wantHiFrac: fracAbove(0.999 / 1.5),
		},
		{
			name: "no clip, amp 0.9", r: Symmetric(1), amp: 0.9, margin: 0.001,
			wantLowFrac: 0, wantHiFrac: 0,
		},
		{
			// 3.3 V unipolar ADC, margin 0.001 of the 1.65 V half-span.
			name: "unipolar 0..3.3 V, centred, amp 2", r: Range{0, 3.3}, amp: 2, offset: 1.65, margin: 0.001,
			wantLowFrac: fracAbove((1.65 - 0.00165) / 2), wantHiFrac: fracAbove((1.65 - 0.00165) / 2),
		},
		{
			name: "unipolar 0..3.3 V, low bias, amp 1.5", r: Range{0, 3.3}, amp: 1.5, offset: 1.2, margin: 0.001,
			wantLowFrac: fracAbove((1.2 - 0.00165) / 1.5), wantHiFrac: 0,
		},
	} {
		t.Run(tc.name, func(t *testing.T) {
			x := clippedSine(n, fs, f, tc.amp, tc.offset, 0.4, tc.r.Min, tc.r.Max)
			lo, hi := tc.r.Clipped(x, tc.margin)
			tol := cycles + 2
			if math.Abs(float64(lo)-tc.wantLowFrac*n) > tol || math.Abs(float64(hi)-tc.wantHiFrac*n) > tol {
				t.Errorf("Clipped = %d low, %d high; want %.1f, %.1f ± %.0f", lo, hi, tc.wantLowFrac*n, tc.wantHiFrac*n, tol)
			}
			if tc.r.Min == -tc.r.Max {
				if got := Overloaded(x, tc.r.Max, tc.margin); got != lo+hi {
					t.Errorf("Overloaded = %d, want Clipped's %d+%d", got, lo, hi)
				}
			}
		})
	}
}

// TestOverloadedMargin checks the margin's meaning on single values:
// within margin·fullScale of ±fullScale counts, just outside does not.
func TestOverloadedMargin(t *testing.T) {
	x := []float64{0.9989, 0.9991, -0.9991, -0.9989, 1, -1, 1.2, 0, math.NaN()}
	if got := Overloaded(x, 1, 0.001); got != 5 {
		t.Errorf("Overloaded = %d, want 5 (0.9991, -0.9991, 1, -1, 1.2)", got)
	}
	if got := Overloaded(x, 1, 0); got != 3 {
		t.Errorf("Overloaded with no margin = %d, want 3 (1, -1, 1.2)", got)
	}
	lo, hi := Range{0, 3.3}.Clipped([]float64{0, 0.0016, 0.0017, 3.2984, 3.2983, 3.3, 1}, 0.001)
	if lo != 2 || hi != 2 {
		t.Errorf("unipolar Clipped = %d, %d; want 2, 2 (margin 1.65 mV)", lo, hi)
	}
}

// TestFlatRuns checks the run detector on a sine clipped by a stage whose
// limit (±0.8) is unknown to the caller, and on clean 16-bit sines.
func TestFlatRuns(t *testing.T) {
	const n, fs, f = 48000, 48000.0, 1000.0 // whole cycles
	x := clippedSine(n, fs, f, 1, 0, 0.2, -0.8, 0.8)
	// Every clipped sample sits in a run of about 0.41·24 ≈ 10 samples.
	want := fracAbove(0.8) * 2 * n // both rails
	tol := 2*f*n/fs + 2            // one sample per excursion, two per cycle
	if got := FlatRuns(x, 4); math.Abs(float64(got)-want) > tol {
		t.Errorf("FlatRuns(clipped at 0.8) = %d, want %.0f ± %.0f", got, want, tol)
	}
	// A clean sine quantised to 16 bits at 1 kHz / 48 kHz stays on its peak
	// code for about (2/ω)·√(2q/A) = 0.12 sample (q = 2^-15, A = 0.9), so
	// no run of 4 appears.
	for i := range x {
		x[i] = math.Round(0.9*math.Sin(2*math.Pi*f*float64(i)/fs)*32768) / 32768
	}
	if got := FlatRuns(x, 4); got != 0 {
		t.Errorf("FlatRuns(clean 16-bit sine) = %d, want 0", got)
	}
	// NaN neither poisons the extremes nor joins a run.
	y := []float64{0, 1, 1, 1, math.NaN(), 1, 1, -1, -1, -1, -1, 0.5}
	if got := FlatRuns(y, 3); got != 7 {
		t.Errorf("FlatRuns with NaN = %d, want 7 (three 1s, four -1s)", got)
	}
	if got := FlatRuns(nil, 2); got != 0 {
		t.Errorf("FlatRuns(nil) = %d, want 0", got)
	}
}

func TestOverloadAllocsAndPanics(t *testing.T) {
	x := clippedSine(4096, 48000, 440, 1.2, 0, 0, -1, 1)
	for name, f := range map[string]func(){
		"Overloaded": func() { Overloaded(x, 1, 0.001) },
		"Clipped":    func() { Range{-1, 1}.Clipped(x, 0.001) },
		"FlatRuns":   func() { FlatRuns(x, 3) },
	} {
		if a := testing.AllocsPerRun(10, f); a != 0 {
			t.Errorf("%s allocates %v times per call, want 0", name, a)
		}
	}
	for name, f := range map[string]func(){
		"empty range":     func() { Range{1, 1}.Clipped(x, 0) },
		"negative margin": func() { Overloaded(x, 1, -0.1) },
		"zero full scale": func() { Overloaded(x, 0, 0.1) },
		"minRun 1":        func() { FlatRuns(x, 1) },
	} {
		t.Run(name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Errorf("%s did not panic", name)
				}
			}()
			f()
		})
	}
}
