package lockin

import (
	"math"
	"math/cmplx"
)

// component is one term Re{Z·e^{j2π(Num/Den)φ}} of a test signal.
type component struct {
	h Harmonic
	z complex128
}

// synth returns offset + Σ Re{Z·e^{j2πrφ}} at each phase, computing the
// angle from the fractional part of r·φ so it stays exact to rounding.
func synth(dst []float64, offset float64, cs []component, ph []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(ph))
	}
	for i, p := range ph {
		v := offset
		for _, c := range cs {
			q := float64(c.h.Num) * p / float64(c.h.Den)
			q -= math.Floor(q)
			v += real(c.z * cmplx.Rect(1, 2*math.Pi*q))
		}
		dst[i] = v
	}
	return dst
}

// interleave builds frames from per-channel sample slices.
func interleave(chs ...[]float64) []float64 {
	n := len(chs[0])
	x := make([]float64, n*len(chs))
	for i := 0; i < n; i++ {
		for c, s := range chs {
			x[i*len(chs)+c] = s[i]
		}
	}
	return x
}

// collect pushes x, t, ph in calls of at most step frames and returns a copy
// of every completed Sync result.
func collect(l *LockIn, x, t, ph []float64, step int) []Result {
	ch := l.cfg.Channels
	var out []Result
	for len(ph) > 0 {
		m := min(step, len(ph))
		var tt []float64
		if t != nil {
			tt = t[:m]
		}
		n, done := l.Push(x[:m*ch], tt, ph[:m])
		if done {
			out = append(out, copyResult(l.Result()))
		}
		x, ph = x[n*ch:], ph[n:]
		if t != nil {
			t = t[n:]
		}
	}
	return out
}

func copyResult(r *Result) Result {
	c := *r
	c.z = append([]complex128(nil), r.z...)
	c.mean = append([]float64(nil), r.mean...)
	return c
}

// relErr returns |got−want|/|want|, or |got| when want is 0.
func relErr(got, want complex128) float64 {
	if want == 0 {
		return cmplx.Abs(got)
	}
	return cmplx.Abs(got-want) / cmplx.Abs(want)
}
