package sim

import "math"

// highPass is a first-order high-pass H(s) = s/(s + ωc), the AC coupling of
// a sound card input, discretised by the bilinear transform with the corner
// pre-warped (ωa = 2·fs·tan(π·fc/fs)) so that the −3 dB point and the +45°
// phase lead fall exactly at fc:
//
//	y[n] = b·(x[n] − x[n−1]) + a·y[n−1],  b = K/(K+ωa), a = (K−ωa)/(K+ωa), K = 2·fs
//
// (the bilinear transformation with pre-warping: Oppenheim & Schafer,
// Discrete-Time Signal Processing, 3rd ed. 2010, ch. 7 — section number from
// memory). The filter starts charged to its first input, as a coupling
// capacitor that has sat at the bias for a while.
type highPass struct {
	b, a   float64
	xPrev  float64
	yPrev  float64
	primed bool
}

func newHighPass(cornerHz, rateHz float64) highPass {
	k := 2 * rateHz
	wa := k * math.Tan(math.Pi*cornerHz/rateHz)
	return highPass{b: k / (k + wa), a: (k - wa) / (k + wa)}
}

func (h *highPass) step(x float64) float64 {
	if !h.primed {
		h.xPrev, h.primed = x, true
	}
	y := h.b*(x-h.xPrev) + h.a*h.yPrev
	h.xPrev, h.yPrev = x, y
	return y
}

// adc is an ideal N-bit converter between the rails lo and hi: code
// k = round((v − lo)/Q), Q = (hi − lo)/2^N, clamped to 0 … 2^N − 1, read
// back as lo + k·Q volts (IEEE Std 1241 code width Q = FSR/2^N). With N = 0
// it only clips at the rails.
type adc struct {
	bits   int
	lo, hi float64
	q      float64 // code width, V
	top    float64 // 2^N − 1
}

func newADC(bits int, lo, hi float64) adc {
	a := adc{bits: bits, lo: lo, hi: hi}
	if bits > 0 {
		n := math.Ldexp(1, bits)
		a.q = (hi - lo) / n
		a.top = n - 1
	}
	return a
}

// convert returns the converted volts and whether the sample sits at a rail
// (the lowest or highest code, or clipped for an ideal converter).
func (a *adc) convert(v float64) (float64, bool) {
	if a.bits == 0 {
		switch {
		case v <= a.lo:
			return a.lo, true
		case v >= a.hi:
			return a.hi, true
		}
		return v, false
	}
	k := math.Floor((v-a.lo)/a.q + 0.5)
	switch {
	case k <= 0:
		return a.lo, true
	case k >= a.top:
		return a.lo + a.top*a.q, true
	}
	return a.lo + k*a.q, false
}
