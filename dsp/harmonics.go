package dsp

import (
	"fmt"
	"math"
)

// THD returns the total harmonic distortion referred to the fundamental,
//
//	THD_F = √(Σ_{k≥2} A_k²) / A_1,
//
// where amps[0] = A_1 is the fundamental's amplitude and amps[1:] are the
// harmonics' amplitudes A_2, A_3, … in order (missing harmonics as 0). This
// is the generic definition used by IEEE Std 1241 for a sine-wave test; the
// number of harmonics to include is the caller's choice. Amplitudes may be
// peak or RMS, as long as all are the same kind; the ratio is the same.
// A zero fundamental gives +Inf (or NaN if all are zero). THD panics if amps
// is empty.
func THD(amps []float64) float64 {
	if len(amps) == 0 {
		panic("dsp: THD needs at least the fundamental's amplitude")
	}
	return math.Sqrt(harmonicPower(amps)) / math.Abs(amps[0])
}

// THDR returns the total harmonic distortion referred to the whole signal
// (fundamental plus harmonics),
//
//	THD_R = √(Σ_{k≥2} A_k²) / √(A_1² + Σ_{k≥2} A_k²),
//
// with amps as for THD; THD_R = THD_F/√(1+THD_F²) ≤ 1. Both forms appear in
// the Modelica Standard Library's harmonic-distortion block. THDR panics if
// amps is empty.
func THDR(amps []float64) float64 {
	if len(amps) == 0 {
		panic("dsp: THDR needs at least the fundamental's amplitude")
	}
	h := harmonicPower(amps)
	return math.Sqrt(h / (amps[0]*amps[0] + h))
}

func harmonicPower(amps []float64) float64 {
	var h float64
	for _, a := range amps[1:] {
		h += a * a
	}
	return h
}

// Ratios fills dst with amps[i]/amps[0], each amplitude referred to the
// fundamental (dst[0] = 1), and returns it; amps as for THD. A nil dst
// allocates; otherwise len(dst) must equal len(amps) and nothing is
// allocated. dst may be amps itself. It panics on a size mismatch or an
// empty amps.
func Ratios(dst, amps []float64) []float64 {
	if len(amps) == 0 {
		panic("dsp: Ratios needs at least the fundamental's amplitude")
	}
	if dst == nil {
		dst = make([]float64, len(amps))
	} else if len(dst) != len(amps) {
		panic(fmt.Sprintf("dsp: Ratios destination has %d elements, want %d", len(dst), len(amps)))
	}
	f := amps[0]
	for i, a := range amps {
		dst[i] = a / f
	}
	return dst
}

// DB returns the amplitude ratio in decibels, 20·log10(ratio): 0.1 is -20 dB,
// 0.001 is -60 dB. A zero ratio gives -Inf and a negative one NaN.
func DB(ratio float64) float64 { return 20 * math.Log10(ratio) }
