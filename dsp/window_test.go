package dsp

import (
	"errors"
	"math"
	"math/cmplx"
	"testing"

	"gonum.org/v1/gonum/dsp/window"
)

// publishedCoeffs are the cosine coefficients as printed (HFT95 unscaled):
// Harris, Proc. IEEE 66(1), 1978 (Hann, minimum 4-term Blackman–Harris) and
// Heinzel, Rüdiger, Schilling, "Spectrum and spectral density estimation by
// the DFT …", AEI Hannover 2002 (HFT95). Tests build windows from these
// independently of Window.coeffs.
func publishedCoeffs(w Window) []float64 {
	switch w {
	case Rect:
		return []float64{1}
	case Hann:
		return []float64{0.5, 0.5}
	case BlackmanHarris:
		return []float64{0.35875, 0.48829, 0.14128, 0.01168}
	case FlatTop:
		return []float64{1, 1.9383379, 1.3045202, 0.4028270, 0.0350665}
	}
	panic("no published coefficients")
}

// plainWeights is the textbook periodic sum-of-cosines window, written out
// without any of the package's code, scaled to unit peak.
func plainWeights(w Window, n int) []float64 {
	a := publishedCoeffs(w)
	var sum float64
	for _, v := range a {
		sum += v
	}
	out := make([]float64, n)
	for i := range out {
		var v float64
		for k, ak := range a {
			v += math.Pow(-1, float64(k)) * ak * math.Cos(2*math.Pi*float64(k)*float64(i)/float64(n))
		}
		out[i] = v / sum
	}
	return out
}

func TestWindowString(t *testing.T) {
	for _, tc := range []struct {
		w    Window
		want string
	}{
		{Rect, "rect"}, {Hann, "hann"}, {BlackmanHarris, "blackman-harris"}, {FlatTop, "flat-top"}, {Window(9), "Window(9)"},
	} {
		if got := tc.w.String(); got != tc.want {
			t.Errorf("Window(%d).String() = %q, want %q", int(tc.w), got, tc.want)
		}
	}
}

func TestParseWindow(t *testing.T) {
	for _, w := range []Window{Rect, Hann, BlackmanHarris, FlatTop} {
		got, err := ParseWindow(" " + w.String() + " ")
		if err != nil || got != w {
			t.Errorf("ParseWindow(%q) = %v, %v; want %v", w.String(), got, err, w)
		}
	}
	for name, want := range map[string]Window{"BH92": BlackmanHarris, "hft95": FlatTop, "Rectangular": Rect} {
		if got, err := ParseWindow(name); err != nil || got != want {
			t.Errorf("ParseWindow(%q) = %v, %v; want %v", name, got, err, want)
		}
	}
	if _, err := ParseWindow("kaiser"); !errors.Is(err, ErrUnknownWindow) {
		t.Errorf("ParseWindow(kaiser) error = %v, want ErrUnknownWindow", err)
	}
}

// TestWeightsMatchGonum checks the periodic weights against gonum's
// dsp/window, a general-purpose reference library. gonum gives the
// symmetric form w[n] = Σ(-1)^k a_k cos(2πkn/(M-1)); its first N values for
// M = N+1 are the periodic N-point window (the DFT-even form of Harris
// 1978). gonum's FlatTop is a different window (the 5-term one MATLAB's
// flattopwin uses), so HFT95 is checked against the written-out formula.
func TestWeightsMatchGonum(t *testing.T) {
	// Both sides evaluate a few cosines of the same arguments; 1e-14 is a
	// few tens of ulps of weights near 1.
	const tol = 1e-14
	for _, n := range []int{8, 101, 1024} {
		for _, tc := range []struct {
			w   Window
			ref func([]float64) []float64
		}{
			{Rect, window.Rectangular},
			{Hann, window.Hann},
			{BlackmanHarris, window.BlackmanHarris},
			{FlatTop, nil},
		} {
			got := tc.w.Weights(make([]float64, n))
			var want []float64
			if tc.ref != nil {
				sym := make([]float64, n+1)
				for i := range sym {
					sym[i] = 1
				}
				want = tc.ref(sym)[:n]
			} else {
				want = plainWeights(tc.w, n)
			}
			for i := range got {
				if math.Abs(got[i]-want[i]) > tol {
					t.Errorf("%v n=%d: w[%d] = %.17g, want %.17g", tc.w, n, i, got[i], want[i])
					break
				}
			}
			// Periodic form: symmetric about N/2 (w[i] = w[N-i]) and, for
			// even N, peak exactly 1 at N/2 after scaling by Σa_k.
			for i := 1; i < n; i++ {
				if math.Abs(got[i]-got[n-i]) > tol {
					t.Errorf("%v n=%d: w[%d]=%g but w[%d]=%g, want periodic symmetry", tc.w, n, i, got[i], n-i, got[n-i])
					break
				}
			}
			if n%2 == 0 && math.Abs(got[n/2]-1) > tol {
				t.Errorf("%v n=%d: w[N/2] = %.17g, want 1", tc.w, n, got[n/2])
			}
		}
	}
}

// TestKernelMatchesDirectSum checks the closed-form transform used by Props
// and Peak against the plain sum W(f) = Σ_n w[n] e^{-j2πfn/N}, including odd
// and tiny N where the shifted kernels alias.
func TestKernelMatchesDirectSum(t *testing.T) {
	// The direct sum of N terms of size ≤ 1 loses ~N·eps; 1e-12·N covers it.
	const tolPerN = 1e-12
	for _, n := range []int{3, 7, 16, 33, 256} {
		for _, w := range []Window{Rect, Hann, BlackmanHarris, FlatTop} {
			wt := plainWeights(w, n)
			for _, f := range []float64{0, 0.25, 0.5, 1, 1.5, 2, 3.7, 4, 5, 6.3, -2.2, float64(n) / 2} {
				var sum complex128
				for i, v := range wt {
					sum += complex(v, 0) * cmplx.Exp(complex(0, -2*math.Pi*f*float64(i)/float64(n)))
				}
				if got, want := w.kernel(n, f), cmplx.Abs(sum); math.Abs(got-want) > tolPerN*float64(n) {
					t.Errorf("%v n=%d f=%g: kernel = %.15g, direct sum %.15g", w, n, f, got, want)
				}
			}
		}
	}
}

// TestPropsHeinzel checks Props at N = 4096 against the summary table of
// Heinzel, Rüdiger and Schilling (2002) as transcribed in the LTPDA toolbox
// (REFERENCES.md §1, [DOC]): NENBW, 3 dB bandwidth (full width at -3.0 dB),
// flatness (max amplitude error over 0…½ bin) and highest sidelobe. The
// coherent gain is the exact result Σw/N = a_0/Σa_k (the cosine terms sum
// to zero over a period). Scalloping at ½ bin and the 6 dB width are
// [CALC] values (REFERENCES.md §1: computed from the same published
// definitions), as is the worst-case processing loss of Harris (1978).
func TestPropsHeinzel(t *testing.T) {
	// Published to 4 decimals: half a unit in the last place.
	const tol4 = 0.5e-4
	// HFT95's 3 dB width is printed to 3 decimals (3.759) in the table;
	// 3.7592 is [CALC]. Sidelobes are printed to 0.1 dB; WCPL to 0.01 dB.
	const tol3, tol1, tol2 = 0.5e-3, 0.05, 0.005
	type want struct {
		cg, nenbw, flat, sl, b3, b6, psll, wcpl float64
		b3tol                                   float64
	}
	for _, tc := range []struct {
		w Window
		want
	}{
		{Rect, want{1, 1.0, -3.9224, -3.9224, 0.8845, 1.2067, -13.3, 3.92, tol4}},
		{Hann, want{0.5, 1.5, -1.4236, -1.4236, 1.4382, 2.0000, -31.5, 3.18, tol4}},
		{BlackmanHarris, want{0.35875, 2.0044, -0.8256, -0.8256, 1.8962, 2.6664, -92.0, 3.85, tol4}},
		{FlatTop, want{1 / (1 + 1.9383379 + 1.3045202 + 0.4028270 + 0.0350665), 3.8112, 0.0044, -0.0039, 3.759, 4.6230, -95.0, 5.81, tol3}},
	} {
		t.Run(tc.w.String(), func(t *testing.T) {
			p := tc.w.Props(4096)
			check := func(name string, got, want, tol float64) {
				t.Helper()
				if math.Abs(got-want) > tol {
					t.Errorf("%s = %.6g, want %.6g ± %g", name, got, want, tol)
				}
			}
			check("CoherentGain", p.CoherentGain, tc.cg, 1e-12) // exact; rounding only
			check("NENBW", p.NENBW, tc.nenbw, tol4)
			check("MaxAmpErrorDB (flatness)", p.MaxAmpErrorDB, tc.flat, tol4)
			check("ScallopLossDB", p.ScallopLossDB, tc.sl, tol4)
			check("Width3dBBins", p.Width3dBBins, tc.want.b3, tc.b3tol)
			check("Width6dBBins", p.Width6dBBins, tc.b6, tol4)
			check("PeakSidelobeDB", p.PeakSidelobeDB, tc.psll, tol1)
			check("WorstCaseLossDB", p.WorstCaseLossDB, tc.wcpl, tol2)
		})
	}
}

// TestPropsHarris checks the entries of Harris, "On the use of windows for
// harmonic analysis with the discrete Fourier transform", Proc. IEEE 66(1),
// 1978, Table I that REFERENCES.md §1 marks confirmed: rectangle CG 1.00,
// 3.0-dB BW 0.89, WCPL 3.92, sidelobe -13 dB; minimum 4-term
// Blackman–Harris CG 0.36, 3.0-dB BW 1.90, sidelobe -92 dB. Harris's 3.0-dB
// bandwidth for the rectangle, 0.89, is the half-power width (0.8859 bins);
// the -3.0 dB width is 0.8845, which rounds to 0.88. The test pins that.
func TestPropsHarris(t *testing.T) {
	round := func(x float64, digits int) float64 {
		p := math.Pow(10, float64(digits))
		return math.Round(x*p) / p
	}
	r := Rect.Props(4096)
	bh := BlackmanHarris.Props(4096)
	for _, tc := range []struct {
		name      string
		got, want float64
		digits    int // Harris prints this many decimals
	}{
		{"rect CG", r.CoherentGain, 1.00, 2},
		{"rect half-power BW", r.WidthHalfPowerBins, 0.89, 2},
		{"rect -3.0 dB BW (Heinzel convention)", r.Width3dBBins, 0.88, 2},
		{"rect WCPL", r.WorstCaseLossDB, 3.92, 2},
		{"rect sidelobe", r.PeakSidelobeDB, -13, 0},
		{"BH92 CG", bh.CoherentGain, 0.36, 2},
		{"BH92 half-power BW", bh.WidthHalfPowerBins, 1.90, 2},
		{"BH92 sidelobe", bh.PeakSidelobeDB, -92, 0},
	} {
		if got := round(tc.got, tc.digits); got != tc.want {
			t.Errorf("%s = %.5g rounds to %g, Harris Table I gives %g", tc.name, tc.got, got, tc.want)
		}
	}
	// The two widths differ: half power is -3.0103 dB, below -3.0 dB.
	if !(r.WidthHalfPowerBins > r.Width3dBBins) {
		t.Errorf("rect half-power width %.5f should exceed the -3.0 dB width %.5f", r.WidthHalfPowerBins, r.Width3dBBins)
	}
}

// TestPropsSmallN checks that the figures are those of the n-point window,
// not its large-N limit, with exact results for the rectangle: the
// n-point Dirichlet kernel at ½ bin is 1/(n·sin(π/(2n))), so the scallop
// loss is 20·log10(1/(n·sin(π/(2n)))) (the Dirichlet kernel; common
// practice).
func TestPropsSmallN(t *testing.T) {
	const tol = 1e-10 // both sides are closed forms: rounding only
	for _, n := range []int{4, 16, 64} {
		got := Rect.Props(n).ScallopLossDB
		want := 20 * math.Log10(1/(float64(n)*math.Sin(math.Pi/(2*float64(n)))))
		if math.Abs(got-want) > tol {
			t.Errorf("rect n=%d: ScallopLossDB = %.12g, want %.12g", n, got, want)
		}
	}
}

func TestWindowPanics(t *testing.T) {
	for name, f := range map[string]func(){
		"empty dst":      func() { Hann.Weights(nil) },
		"unknown window": func() { Window(42).Weights(make([]float64, 4)) },
		"props n=0":      func() { Hann.Props(0) },
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

func TestWeightsAllocs(t *testing.T) {
	dst := make([]float64, 1024)
	if a := testing.AllocsPerRun(20, func() { FlatTop.Weights(dst) }); a != 0 {
		t.Errorf("Weights allocates %v times per call, want 0", a)
	}
}
