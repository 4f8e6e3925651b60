package lockin

import "math"

// rotor evaluates e^{−j2πp/L} for a phase p in drive cycles, where L is the
// least common multiple of the harmonics' denominators (so every harmonic is
// a whole power of it). It does a table look-up and a short Taylor series:
//
//	p·T = n + f, n = round(p·T), |f| ≤ ½, S = T·L table points,
//	e^{−j2πp/L} = tab[n mod S] · e^{−j2πf/S},
//
// with tab[i] = e^{−j2πi/S} (math.Sincos on the first octant, the rest by
// symmetry), T the smallest power of two ≥ 8 with S ≥ 256, and e^{−jθ} for |θ| ≤ π/S ≤ π/256 from the series of sin to
// θ⁵ and of cos to θ⁶ (truncation below 1e−17). p·T is exact (T is a power
// of two) and so is f = p·T − n, so the argument reduction loses nothing:
// the result is within about 4e−16 of the exact value for any |p·T| < 2⁵⁰;
// beyond that (a phase of more than 4e12 cycles) it reduces p with math.Mod
// first. (Measured against 200-bit arithmetic: see TestRotorAccuracy.) A
// direct evaluation, not a recurrence, so no error accumulates from
// sample to sample.
type rotor struct {
	tab      []float64 // 2S values: cos, sin of −2πi/S
	size     int64     // S
	mask     int64     // S−1 when S is a power of two, else −1
	perCycle float64   // T
	thScale  float64   // −2π/S
	lden     float64   // L
}

const (
	roundMagic = 6755399441055744.0 // 1.5·2⁵²: (v+m)−m rounds v to an integer
	sin3       = -1.0 / 6
	sin5       = 1.0 / 120
	cos2       = -1.0 / 2
	cos4       = 1.0 / 24
	cos6       = -1.0 / 720
)

func newRotor(lden int) rotor {
	t := 8
	for t*lden < 256 {
		t *= 2
	}
	s := t * lden // a multiple of 8
	r := rotor{
		tab:      make([]float64, 2*s),
		size:     int64(s),
		mask:     -1,
		perCycle: float64(t),
		thScale:  -2 * math.Pi / float64(s),
		lden:     float64(lden),
	}
	if s&(s-1) == 0 {
		r.mask = int64(s - 1)
	}
	// cos and sin of 2πi/S from math.Sincos on the first octant only
	// (arguments ≤ π/4, so their rounding stays below 1e−16), the rest
	// by exact symmetries.
	c := make([]float64, s)
	sn := make([]float64, s)
	q := s / 4
	for i := 0; i <= s/8; i++ {
		sn[i], c[i] = math.Sincos(2 * math.Pi / float64(s) * float64(i))
		c[q-i], sn[q-i] = sn[i], c[i]
	}
	for i := q; i < s; i++ {
		c[i], sn[i] = -sn[i-q], c[i-q]
	}
	for i := range s {
		r.tab[2*i], r.tab[2*i+1] = c[i], -sn[i]
	}
	return r
}

// at returns the real and imaginary parts of e^{−j2πp/L}.
func (r *rotor) at(p float64) (re, im float64) {
	v := p * r.perCycle
	if !(math.Abs(v) < 1<<50) {
		return r.far(p)
	}
	n := (v + roundMagic) - roundMagic
	f := v - n
	var i int64
	if r.mask >= 0 {
		i = int64(n) & r.mask
	} else {
		i = int64(n) % r.size
		if i < 0 {
			i += r.size
		}
	}
	th := f * r.thScale
	t2 := th * th
	sn := th + th*t2*(sin3+t2*sin5)
	cs := 1 + t2*(cos2+t2*(cos4+t2*cos6))
	br, bi := r.tab[2*i], r.tab[2*i+1]
	return br*cs - bi*sn, br*sn + bi*cs
}

// far handles phases too large for the rounding trick (and NaN or ±Inf,
// which give NaN).
func (r *rotor) far(p float64) (re, im float64) {
	q := math.Mod(p, r.lden)
	if math.IsNaN(q) {
		return math.NaN(), math.NaN()
	}
	return r.at(q)
}
