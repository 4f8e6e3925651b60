package dsp

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// Window selects a sum-of-cosines window function. All windows here are
// used in their periodic (DFT-even) form
//
//	w[n] = Σ_k (-1)^k a_k cos(2πkn/N),  n = 0 … N-1,
//
// which is the form whose N-point DFT has its zeros on whole bins and the
// form for which Heinzel, Rüdiger and Schilling (2002) tabulate the window
// figures. The coefficients are scaled so that Σ a_k = 1, which puts the
// peak weight w[N/2] at exactly 1 for even N; for Rect, Hann and
// BlackmanHarris the published coefficients already sum to 1, and the
// published HFT95 coefficients (a_0 = 1) are divided by their sum
// 4.6811516. The scaling changes no ratio in WindowProps and Spectrum
// removes the coherent gain, so amplitudes do not depend on it.
type Window int

const (
	// Rect is the rectangular window, a_0 = 1: the narrowest main lobe and
	// the worst leakage (highest sidelobe -13.3 dB, scalloping -3.92 dB).
	Rect Window = iota
	// Hann is the Hann window, a = 0.5, 0.5: sidelobes -31.5 dB, falling at
	// 18 dB per octave.
	Hann
	// BlackmanHarris is the minimum 4-term Blackman–Harris window ("BH92"),
	// a = 0.35875, 0.48829, 0.14128, 0.01168 (Harris, "On the use of windows
	// for harmonic analysis with the discrete Fourier transform", Proc. IEEE
	// 66(1), 1978): sidelobes -92 dB.
	BlackmanHarris
	// FlatTop is the HFT95 flat-top window of Heinzel, Rüdiger and Schilling,
	// "Spectrum and spectral density estimation by the DFT, including a
	// comprehensive list of window functions and some new flat-top windows"
	// (AEI Hannover, 2002): a = 1, 1.9383379, 1.3045202, 0.4028270,
	// 0.0350665 before scaling. Its amplitude error between bins stays within
	// +0.0044 dB / -0.0039 dB, so a tone's bin amplitude is right without
	// interpolation; sidelobes -95 dB; NENBW 3.81 bins.
	FlatTop
)

// maxTerms is the largest number of cosine terms of any Window.
const maxTerms = 5

// ErrUnknownWindow is returned by ParseWindow for a name it does not know.
var ErrUnknownWindow = errors.New("dsp: unknown window")

// String returns the window's plain name: "rect", "hann", "blackman-harris"
// or "flat-top". ParseWindow reads these back.
func (w Window) String() string {
	switch w {
	case Rect:
		return "rect"
	case Hann:
		return "hann"
	case BlackmanHarris:
		return "blackman-harris"
	case FlatTop:
		return "flat-top"
	}
	return fmt.Sprintf("Window(%d)", int(w))
}

// ParseWindow returns the Window named by s, ignoring case and surrounding
// space. It accepts the String names and the short names "rectangular",
// "bh92" and "hft95". An unknown name gives an error wrapping
// ErrUnknownWindow that lists the accepted names.
func ParseWindow(s string) (Window, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "rect", "rectangular":
		return Rect, nil
	case "hann":
		return Hann, nil
	case "blackman-harris", "bh92":
		return BlackmanHarris, nil
	case "flat-top", "flattop", "hft95":
		return FlatTop, nil
	}
	return Rect, fmt.Errorf("%w %q: use rect, hann, blackman-harris or flat-top", ErrUnknownWindow, s)
}

// coeffs returns the window's cosine coefficients a_k, scaled to Σ a_k = 1,
// and how many of them there are. It panics for an unknown Window.
func (w Window) coeffs() (a [maxTerms]float64, k int) {
	switch w {
	case Rect:
		return [maxTerms]float64{1}, 1
	case Hann:
		return [maxTerms]float64{0.5, 0.5}, 2
	case BlackmanHarris:
		return [maxTerms]float64{0.35875, 0.48829, 0.14128, 0.01168}, 4
	case FlatTop:
		a = [maxTerms]float64{1, 1.9383379, 1.3045202, 0.4028270, 0.0350665}
		s := a[0] + a[1] + a[2] + a[3] + a[4]
		for i := range a {
			a[i] /= s
		}
		return a, 5
	}
	panic(fmt.Sprintf("dsp: unknown window %d", int(w)))
}

// Weights fills dst with the N = len(dst) periodic weights
// w[n] = Σ_k (-1)^k a_k cos(2πkn/N) and returns dst. The argument of each
// cosine is reduced modulo N before scaling, so the weights are exact to a
// few ulps for any N. It allocates nothing; it panics if dst is empty or the
// Window is unknown.
func (w Window) Weights(dst []float64) []float64 {
	n := len(dst)
	if n == 0 {
		panic("dsp: Window.Weights needs a destination of length N >= 1")
	}
	a, terms := w.coeffs()
	step := 2 * math.Pi / float64(n)
	for i := range dst {
		v := a[0]
		sign := -1.0
		for k := 1; k < terms; k++ {
			v += sign * a[k] * math.Cos(step*float64((k*i)%n))
			sign = -sign
		}
		dst[i] = v
	}
	return dst
}

// WindowProps are the figures of merit of an N-point periodic window, in the
// definitions of Heinzel, Rüdiger and Schilling (2002) and Harris (1978). Frequencies are in bins (multiples of fs/N).
type WindowProps struct {
	N int
	// CoherentGain is Σw / (N·max w): the factor by which the window lowers
	// a tone on a whole bin. Spectrum divides it out.
	CoherentGain float64
	// NENBW is the normalised equivalent noise bandwidth N·Σw²/(Σw)², in
	// bins; ENBW in hertz is NENBW·fs/N.
	NENBW float64
	// ScallopLossDB is 20·log10|W(½)/W(0)|: the amplitude error in dB for a
	// tone exactly half-way between bins (negative).
	ScallopLossDB float64
	// MaxAmpErrorDB is the signed value of largest magnitude of
	// 20·log10|W(δ)/W(0)| over 0 <= δ <= ½ bin: the worst amplitude error of
	// a tone read off its nearest bin. For windows whose main lobe falls
	// monotonically it equals ScallopLossDB; for FlatTop it is the
	// "flatness" Heinzel et al. tabulate (+0.0044 dB for HFT95).
	MaxAmpErrorDB float64
	// Width3dBBins is the full width of the main lobe at exactly -3.0 dB,
	// the convention of Heinzel et al.'s "3 dB bandwidth" column.
	Width3dBBins float64
	// WidthHalfPowerBins is the full width at half power,
	// -10·log10 2 = -3.0103 dB, the convention behind Harris's (1978,
	// Table I) "3.0-dB BW" (0.89 for Rect, where the -3.0 dB width is 0.8845).
	WidthHalfPowerBins float64
	// Width6dBBins is the full width at half amplitude, -20·log10 2 =
	// -6.0206 dB.
	Width6dBBins float64
	// PeakSidelobeDB is the highest sidelobe relative to the main lobe peak
	// (negative dB), searched from the first null (K bins for a K-term
	// window) over the next 64 bins or up to Nyquist. NaN if N is too short
	// to have a sidelobe.
	PeakSidelobeDB float64
	// WorstCaseLossDB is Harris's worst-case processing loss,
	// |ScallopLossDB| + 10·log10(NENBW): the drop in signal-to-noise ratio
	// of a tone half-way between bins against white noise.
	WorstCaseLossDB float64
}

// Props computes the WindowProps of the n-point periodic window. Sums run
// over the n weights; the lobe figures use the window's exact transform, a
// sum of shifted Dirichlet kernels (see kernel), so they hold for this n,
// not for the n → ∞ limit. Widths are found by bisection to 1e-12 bins and
// extremes by golden-section search. Props allocates one n-element slice;
// it panics if n < 1 or the Window is unknown.
func (w Window) Props(n int) WindowProps {
	if n < 1 {
		panic(fmt.Sprintf("dsp: Window.Props needs n >= 1, got %d", n))
	}
	_, terms := w.coeffs()
	wt := w.Weights(make([]float64, n))
	var s1, s2, mx float64
	for _, v := range wt {
		s1 += v
		s2 += v * v
		mx = math.Max(mx, v)
	}
	p := WindowProps{
		N:            n,
		CoherentGain: s1 / (float64(n) * mx),
		NENBW:        float64(n) * s2 / (s1 * s1),
	}
	w0 := w.kernel(n, 0)
	rel := func(f float64) float64 { return w.kernel(n, f) / w0 }
	db := func(f float64) float64 { return 20 * math.Log10(rel(f)) }

	p.ScallopLossDB = db(0.5)
	// Flatness: scan 0…½ bin, refine the extreme of |dB| found.
	const scan = 200
	best, bestF := 0.0, 0.0
	for i := 0; i <= scan; i++ {
		f := 0.5 * float64(i) / scan
		if v := db(f); math.Abs(v) > math.Abs(best) {
			best, bestF = v, f
		}
	}
	if bestF > 0 && bestF < 0.5 {
		lo, hi := math.Max(0, bestF-0.5/scan), math.Min(0.5, bestF+0.5/scan)
		sign := math.Copysign(1, best)
		f := goldenMax(func(f float64) float64 { return sign * db(f) }, lo, hi)
		best = db(f)
	}
	p.MaxAmpErrorDB = best

	edge := float64(terms) // first null of a K-term periodic window
	p.Width3dBBins = 2 * crossing(rel, math.Pow(10, -3.0/20), edge)
	p.WidthHalfPowerBins = 2 * crossing(rel, math.Sqrt(0.5), edge)
	p.Width6dBBins = 2 * crossing(rel, 0.5, edge)

	p.PeakSidelobeDB = math.NaN()
	if top := math.Min(float64(n)/2, edge+64); top > edge {
		const perBin = 16
		m := int((top - edge) * perBin)
		peak := 0.0
		prev, cur := rel(edge), rel(edge+1.0/perBin)
		for i := 2; i <= m; i++ {
			next := rel(edge + float64(i)/perBin)
			if cur >= prev && cur >= next {
				f := goldenMax(rel, edge+float64(i-2)/perBin, edge+float64(i)/perBin)
				peak = math.Max(peak, math.Max(rel(f), cur))
			}
			prev, cur = cur, next
		}
		if peak > 0 {
			p.PeakSidelobeDB = 20 * math.Log10(peak)
		}
	}
	p.WorstCaseLossDB = math.Abs(p.ScallopLossDB) + 10*math.Log10(p.NENBW)
	return p
}

// kernel returns |W(f)|, the magnitude of the transform of the n-point
// periodic window at f bins, W(f) = Σ_n w[n] e^{-j2πfn/N}. Writing
// cos = (e^{+}+e^{-})/2 turns it into shifted Dirichlet kernels
// S(g) = sin(πg)/sin(πg/N); after the common phase e^{-jπf(N-1)/N} is taken
// out,
//
//	W(f)·e^{jπf(N-1)/N} = Σ_k (a_k/2)[e^{-jπk/N} S(f-k) + e^{+jπk/N} S(f+k)]
//
// (the construction Harris 1978 uses for the Hann and Blackman families).
// It costs O(K) and allocates nothing.
func (w Window) kernel(n int, f float64) float64 {
	a, terms := w.coeffs()
	nf := float64(n)
	re := a[0] * dirichlet(n, f)
	im := 0.0
	for k := 1; k < terms; k++ {
		sm, sp := dirichlet(n, f-float64(k)), dirichlet(n, f+float64(k))
		s, c := math.Sincos(math.Pi * float64(k) / nf)
		re += a[k] / 2 * c * (sm + sp)
		im += a[k] / 2 * s * (sp - sm)
	}
	return math.Hypot(re, im)
}

// dirichlet returns S(g) = sin(πg)/sin(πg/N), with its limit
// N·(-1)^{m(N-1)} where g is a multiple mN of N.
func dirichlet(n int, g float64) float64 {
	nf := float64(n)
	m := math.Round(g / nf)
	if math.Abs(g-m*nf) < 1e-9 {
		if int64(m)*int64(n-1)%2 != 0 {
			return -nf
		}
		return nf
	}
	return math.Sin(math.Pi*g) / math.Sin(math.Pi*g/nf)
}

// crossing returns the f in (0, hi) where the falling main lobe rel(f)
// passes level, by bisection to 1e-12 bins.
func crossing(rel func(float64) float64, level, hi float64) float64 {
	lo := 0.0
	for hi-lo > 1e-12 {
		mid := 0.5 * (lo + hi)
		if rel(mid) > level {
			lo = mid
		} else {
			hi = mid
		}
	}
	return 0.5 * (lo + hi)
}

// goldenMax returns the argument of the maximum of a unimodal f on [lo, hi]
// by golden-section search to 1e-10.
func goldenMax(f func(float64) float64, lo, hi float64) float64 {
	const r = 0.6180339887498949 // (√5-1)/2
	x1, x2 := hi-r*(hi-lo), lo+r*(hi-lo)
	f1, f2 := f(x1), f(x2)
	for hi-lo > 1e-10 {
		if f1 < f2 {
			lo, x1, f1 = x1, x2, f2
			x2 = lo + r*(hi-lo)
			f2 = f(x2)
		} else {
			hi, x2, f2 = x2, x1, f1
			x1 = hi - r*(hi-lo)
			f1 = f(x1)
		}
	}
	return 0.5 * (lo + hi)
}
