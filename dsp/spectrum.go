package dsp

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Spectrum computes windowed single-sided spectra of blocks of n samples
// taken at rateHz, with the scalings of Heinzel, Rüdiger and Schilling,
// "Spectrum and spectral density estimation by the DFT" (AEI Hannover,
// 2002): with S1 = Σw and S2 = Σw², a tone's peak amplitude is
// 2|X_k|/S1 and the one-sided power spectral density is 2|X_k|²/(fs·S2).
//
// Bin k (0 <= k <= n/2) is at k·fs/n hertz. A Spectrum holds scratch
// buffers: it is not safe for concurrent use; make one per goroutine.
type Spectrum struct {
	n      int
	win    Window
	rateHz float64
	w      []float64
	s1, s2 float64
	fft    *fourier.FFT
	buf    []float64
	coef   []complex128
}

// NewSpectrum returns a Spectrum for blocks of n samples at rateHz weighted
// by the window w. Any n works; gonum's FFT is fastest for n with small
// prime factors (powers of two are best). It panics if n < 2, rateHz is not
// positive and finite, or w is unknown.
func NewSpectrum(n int, w Window, rateHz float64) *Spectrum {
	if n < 2 {
		panic(fmt.Sprintf("dsp: NewSpectrum needs n >= 2, got %d", n))
	}
	if !(rateHz > 0) || math.IsInf(rateHz, 0) {
		panic(fmt.Sprintf("dsp: NewSpectrum needs a positive sample rate, got %g Hz", rateHz))
	}
	s := &Spectrum{
		n:      n,
		win:    w,
		rateHz: rateHz,
		w:      w.Weights(make([]float64, n)),
		fft:    fourier.NewFFT(n),
		buf:    make([]float64, n),
		coef:   make([]complex128, n/2+1),
	}
	for _, v := range s.w {
		s.s1 += v
		s.s2 += v * v
	}
	return s
}

// Len returns the block length n.
func (s *Spectrum) Len() int { return s.n }

// Bins returns the number of single-sided bins, n/2+1.
func (s *Spectrum) Bins() int { return s.n/2 + 1 }

// Window returns the window the Spectrum applies.
func (s *Spectrum) Window() Window { return s.win }

// RateHz returns the sample rate in hertz.
func (s *Spectrum) RateHz() float64 { return s.rateHz }

// BinHz returns the bin spacing fs/n in hertz.
func (s *Spectrum) BinHz() float64 { return s.rateHz / float64(s.n) }

// ENBWHz returns the window's equivalent noise bandwidth fs·S2/S1² in hertz
// (Heinzel et al. 2002): the bandwidth of the ideal filter that
// passes the same white-noise power as one bin.
func (s *Spectrum) ENBWHz() float64 { return s.rateHz * s.s2 / (s.s1 * s.s1) }

// transform windows x and takes its DFT into s.coef.
func (s *Spectrum) transform(x []float64, name string) {
	if len(x) != s.n {
		panic(fmt.Sprintf("dsp: Spectrum.%s input has %d samples, want %d", name, len(x), s.n))
	}
	for i, v := range x {
		s.buf[i] = v * s.w[i]
	}
	s.fft.Coefficients(s.coef, s.buf)
}

// dstFor checks or allocates a destination of n/2+1 bins.
func (s *Spectrum) dstFor(dst []float64, name string) []float64 {
	if dst == nil {
		return make([]float64, s.n/2+1)
	}
	if len(dst) != s.n/2+1 {
		panic(fmt.Sprintf("dsp: Spectrum.%s destination has %d bins, want %d", name, len(dst), s.n/2+1))
	}
	return dst
}

// single reports whether bin k has no mirror image in the two-sided
// spectrum (DC, and Nyquist for even n), so it is not doubled.
func (s *Spectrum) single(k int) bool { return k == 0 || 2*k == s.n }

// Amplitude fills dst with the single-sided PEAK amplitude spectrum of x, in
// the units of x, and returns it:
//
//	A_k = c_k·|X_k| / Σw,   c_k = 2 for 0 < k < n/2,  c_k = 1 for DC and Nyquist,
//
// where X_k is the DFT of the windowed block. Dividing by Σw removes the
// window's coherent gain, so a tone a·cos(2π f t + φ) with f on a bin reads
// A_k = a, the DC bin reads the mean of a constant, and the Nyquist bin
// reads |a·cos φ|. Between bins the reading falls by the window's scalloping
// (WindowProps.MaxAmpErrorDB); Peak corrects it. len(x) must be n and dst,
// if not nil, must have n/2+1 elements (nil allocates). With a dst it
// allocates nothing.
func (s *Spectrum) Amplitude(dst, x []float64) []float64 {
	dst = s.dstFor(dst, "Amplitude")
	s.transform(x, "Amplitude")
	g := 2 / s.s1
	for k, c := range s.coef {
		re, im := real(c), imag(c)
		dst[k] = math.Sqrt(re*re+im*im) * g
	}
	dst[0] /= 2
	if s.n%2 == 0 {
		dst[s.n/2] /= 2
	}
	return dst
}

// Density fills dst with the single-sided RMS amplitude spectral density of
// x, in units of x per √Hz, and returns it:
//
//	D_k = |X_k|·√(c_k / (fs·Σw²)),   c_k = 2 for 0 < k < n/2, 1 for DC and Nyquist
//
// (Heinzel et al. 2002: PSD = 2|X_k|²/(fs·S2)). It is the
// scaling for noise: white noise of variance σ² reads √(2σ²/fs) on average
// in power, whatever the window, because S2 carries the window's equivalent
// noise bandwidth. A tone in a density reads a/√(2·ENBWHz), not its
// amplitude. Sizes and allocation as for Amplitude.
func (s *Spectrum) Density(dst, x []float64) []float64 {
	dst = s.dstFor(dst, "Density")
	s.transform(x, "Density")
	g := math.Sqrt(2 / (s.rateHz * s.s2))
	for k, c := range s.coef {
		re, im := real(c), imag(c)
		dst[k] = math.Sqrt(re*re+im*im) * g
	}
	dst[0] /= math.Sqrt2
	if s.n%2 == 0 {
		dst[s.n/2] /= math.Sqrt2
	}
	return dst
}

// Peak finds the largest bin of an Amplitude spectrum amp among bins
// lo ≤ k < hi and refines it between bins, returning the tone's frequency in
// hertz and its peak amplitude in the units of amp.
//
// The refinement is the two-bin interpolated DFT of Jain, Collins and
// Davis, "High-accuracy analog measurements via interpolated FFT", IEEE
// Trans. Instrum. Meas. IM-28(2), 1979 (rectangular window), which Grandke,
// "Interpolation algorithms for discrete Fourier transforms of weighted
// signals", IEEE Trans. Instrum. Meas. IM-32(2), 1983, derived for Hann:
// with k the largest bin and k+s (s = ±1) its larger neighbour, the ratio
// α = A_{k+s}/A_k of a lone tone at k+s·δ equals |W(1-δ)|/|W(δ)| for the
// window's transform W. Peak solves that for δ in [0, ½] by bisection on
// the exact n-point transform of whichever window the Spectrum uses (for
// Rect this reproduces δ = α/(1+α), for Hann δ = (2α-1)/(α+1), up to
// O(1/n²)) and scales A_k by |W(0)/W(δ)|. The result is exact for a lone
// complex tone; for a real tone the error is set by the leakage of its
// image at -f (and of any other tone) into bins k and k+s, relative to the
// tone about 1/(π·2f) for Rect, 1/(π·(2f)³) for Hann (f in bins), and
// |w[0]|/(CG·π·2f) for BlackmanHarris and FlatTop, whose periodic forms end
// in a small step w[0]. With noise, δ degrades as the window's main lobe
// flattens: FlatTop reads amplitude well and frequency poorly.
//
// A peak on the DC or Nyquist bin, or at an edge of amp, is returned
// unrefined. Peak panics if len(amp) != n/2+1 or not 0 <= lo < hi <= n/2+1.
// It allocates nothing.
func (s *Spectrum) Peak(amp []float64, lo, hi int) (freqHz, ampPeak float64) {
	if len(amp) != s.n/2+1 {
		panic(fmt.Sprintf("dsp: Spectrum.Peak spectrum has %d bins, want %d", len(amp), s.n/2+1))
	}
	if lo < 0 || hi > len(amp) || lo >= hi {
		panic(fmt.Sprintf("dsp: Spectrum.Peak bin range [%d, %d) is not inside [0, %d)", lo, hi, len(amp)))
	}
	k := lo
	for i := lo + 1; i < hi; i++ {
		if amp[i] > amp[k] {
			k = i
		}
	}
	if k == 0 || k == len(amp)-1 || s.single(k) || amp[k] == 0 {
		return float64(k) * s.BinHz(), amp[k]
	}
	side := 1
	if amp[k-1] > amp[k+1] {
		side = -1
	}
	// Bins next to DC and Nyquist are single-scaled: undo that for the ratio.
	nb := amp[k+side]
	if s.single(k + side) {
		nb *= 2
	}
	alpha := nb / amp[k]
	w0 := s.win.kernel(s.n, 0)
	ratio := func(d float64) float64 { return s.win.kernel(s.n, 1-d) / s.win.kernel(s.n, d) }
	lo64, hi64 := 0.0, 0.5
	switch {
	case alpha <= ratio(0):
		hi64 = 0
	case alpha >= ratio(0.5):
		lo64 = 0.5
	default:
		for hi64-lo64 > 1e-13 {
			mid := 0.5 * (lo64 + hi64)
			if ratio(mid) < alpha {
				lo64 = mid
			} else {
				hi64 = mid
			}
		}
	}
	d := 0.5 * (lo64 + hi64)
	freqHz = (float64(k) + float64(side)*d) * s.BinHz()
	ampPeak = amp[k] * w0 / s.win.kernel(s.n, d)
	return freqHz, ampPeak
}
