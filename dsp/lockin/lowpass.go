package lockin

import (
	"math"
	"time"
)

// LowPass mode.
//
// Each harmonic is mixed down, m_n = 2·x_n·e^{−j2πk_hφ_n/L} (the factor 2
// makes the smoothed value the peak amplitude: the mix of
// x = Re{Z·e^{jθ}} is Z + Z*·e^{−2jθ}), and passed through Order identical
// first-order stages τ·s' = u − s, each discretised exactly for the actual
// interval Δ_n = t_n − t_{n−1} (step-invariant transform, so non-uniform
// times keep the time constant):
//
//	later stages:  s_n = s_{n−1} + α_n·(u_n − s_{n−1}),  α_n = 1 − e^{−Δ_n/τ},
//
// their input u (the previous stage's new output) taken as held over the
// interval; the first stage takes its input, the mix, as linear between
// frames (the exact response to a ramp, first-order hold),
//
//	first stage:   s_n = s_{n−1} + α_n·(m_{n−1} − s_{n−1}) + b_n·(m_n − m_{n−1}),
//	               b_n = 1 − (1 − e^{−Δ_n/τ})·τ/Δ_n,
//
// because the mix oscillates (at 2f and at the differences of the
// harmonics) and a held input would let unevenly spaced frames alias that
// ripple into the output; with linear interpolation the residue is about
// (ωΔ)²/4·(σ_Δ/Δ)·√(Δ/τ) of a product at ω (σ_Δ the spread of the
// intervals). Against the continuous H(f) = 1/(1+j2πfτ)^n the error is of
// order Δ/τ. The offset is smoothed by the same filter. The filters start
// from zero, the input taken as held at its first value before the first
// frame (a step). A NaN phase or sample makes the values NaN until Reset.

// lpChunk is the number of frames whose rotors are made at once.
const lpChunk = 256

type lowPass struct {
	order  int
	tau    float64 // seconds
	alpha  float64 // α for lastDt
	beta   float64 // b for lastDt
	lastDt float64
	st     []float64 // per channel: per harmonic 2·order, then order for the offset
	rb     []float64 // rotors of a chunk, frame-major, 2nh per frame
	ab     []float64 // α of each frame of a chunk
	bb     []float64 // first-order-hold coefficient b of each frame
	pw     []float64
	tPrev  float64 // time of the last frame
	count  int     // frames since Reset
}

func (p *lowPass) init(l *LockIn) {
	p.order = l.cfg.Order
	p.tau = l.cfg.TimeConstant.Seconds()
	p.st = make([]float64, l.nch*(2*l.nh+1)*(p.order+1))
	p.rb = make([]float64, lpChunk*2*l.nh)
	p.ab = make([]float64, lpChunk)
	p.bb = make([]float64, lpChunk)
	p.pw = make([]float64, 2*(l.hChain.maxExp+1))
	p.lastDt = math.NaN()
}

func (p *lowPass) reset() {
	clear(p.st)
	p.count = 0
	p.tPrev = 0
}

// alphaFor returns 1−e^{−dt/τ}, reusing the last value when dt is within
// 1e−9 of the last interval (times computed from a sample counter differ by
// rounding only), and 0 for dt ≤ 0 or NaN (no time passed).
func (p *lowPass) alphaFor(dt float64) (float64, float64) {
	if !(dt > 0) {
		return 0, 0
	}
	if math.Abs(dt-p.lastDt) <= 1e-9*p.lastDt {
		return p.alpha, p.beta
	}
	p.lastDt = dt
	x := dt / p.tau
	p.alpha = -math.Expm1(-x)
	if x < 0.1 {
		// b = 1 − (1−e^{−x})/x by its series; the closed form cancels.
		p.beta = x * (1.0/2 - x*(1.0/6-x*(1.0/24-x*(1.0/120-x*(1.0/720-x*(1.0/5040-x/40320))))))
	} else {
		p.beta = 1 - p.alpha/x
	}
	return p.alpha, p.beta
}

func (p *lowPass) push(l *LockIn, x, t, ph []float64) int {
	F := len(ph)
	nh2 := 2 * l.nh
	per := (2*l.nh + 1) * (p.order + 1)
	for a := 0; a < F; a += lpChunk {
		b := min(F, a+lpChunk)
		c := b - a
		// Filter coefficients.
		if t == nil {
			al, bl := p.alphaFor(l.dt)
			for n := range c {
				p.ab[n], p.bb[n] = al, bl
			}
			p.tPrev = l.timeAt(t, b-1)
		} else {
			for n := range c {
				dt := l.dt
				if p.count+n > 0 {
					dt = t[a+n] - p.tPrev
				}
				p.ab[n], p.bb[n] = p.alphaFor(dt)
				p.tPrev = t[a+n]
			}
		}
		p.count += c
		// Rotors: a recurrence along a linear phase, else one per frame.
		seg := ph[a:b]
		d := 0.0
		if c > 1 {
			d = (seg[c-1] - seg[0]) / float64(c-1)
		}
		tol := linTol(seg[0], seg[c-1])
		if c > 1 && linear(seg, seg[0], d, tol) {
			h := 0
			for ; h+1 < l.nh; h += 2 {
				p.recur2(l, h, seg[0], d, c)
			}
			if h < l.nh {
				p.recur1(l, h, seg[0], d, c)
			}
		} else {
			pw := p.pw
			pw[0], pw[1] = 1, 0
			for n, q := range seg {
				pw[2], pw[3] = l.rot.at(q)
				l.hChain.run(pw)
				for h, k := range l.k {
					p.rb[n*nh2+2*h], p.rb[n*nh2+2*h+1] = pw[2*k], pw[2*k+1]
				}
			}
		}
		first := p.count == c // this chunk starts the stream
		for ch := 0; ch < l.nch; ch++ {
			xc := x[a*l.nch+ch:]
			st := p.st[ch*per : (ch+1)*per]
			if first {
				// Before the first frame the input is taken as held at
				// its first value: the filter sees a step there.
				for h := 0; h < l.nh; h++ {
					s := st[2*h*(p.order+1):]
					s[0], s[1] = 2*xc[0]*p.rb[2*h], 2*xc[0]*p.rb[2*h+1]
				}
				st[2*l.nh*(p.order+1)] = xc[0]
			}
			for h := 0; h < l.nh; h++ {
				s := st[2*h*(p.order+1) : 2*(h+1)*(p.order+1)]
				r := p.rb[2*h:]
				switch p.order {
				case 1:
					cascade1(xc, l.nch, r, nh2, p.ab, p.bb, c, s)
				case 2:
					cascade2(xc, l.nch, r, nh2, p.ab, p.bb, c, s)
				case 3:
					cascade3(xc, l.nch, r, nh2, p.ab, p.bb, c, s)
				default:
					cascade4(xc, l.nch, r, nh2, p.ab, p.bb, c, s)
				}
			}
			cascadeReal(xc, l.nch, p.ab, p.bb, c, st[2*l.nh*(p.order+1):])
		}
	}
	return F
}

// recur2 fills the rotors of harmonics h and h+1 for c frames from phase
// p0 in steps of d: w_n = e^{−j2πk(p0+nd)/L} = w_0·σ^n, σ = e^{−j2πkd/L}.
// The recurrence's rounding error grows by about 2⁻⁵² per frame, under
// 1e−13 over a chunk; every chunk starts afresh from a direct evaluation.
func (p *lowPass) recur2(l *LockIn, h int, p0, d float64, c int) {
	nh2 := 2 * l.nh
	ka, kb := float64(l.k[h]), float64(l.k[h+1])
	ar, ai := l.rot.at(ka * p0)
	sar, sai := l.rot.at(ka * d)
	br, bi := l.rot.at(kb * p0)
	sbr, sbi := l.rot.at(kb * d)
	rb := p.rb[:c*nh2]
	for n := 0; n < c; n++ {
		r := rb[n*nh2+2*h : n*nh2+2*h+4 : n*nh2+2*h+4]
		r[0], r[1], r[2], r[3] = ar, ai, br, bi
		ar, ai = ar*sar-ai*sai, ar*sai+ai*sar
		br, bi = br*sbr-bi*sbi, br*sbi+bi*sbr
	}
}

// recur1 is recur2 for harmonic h alone.
func (p *lowPass) recur1(l *LockIn, h int, p0, d float64, c int) {
	nh2 := 2 * l.nh
	ka := float64(l.k[h])
	ar, ai := l.rot.at(ka * p0)
	sar, sai := l.rot.at(ka * d)
	rb := p.rb[:c*nh2]
	for n := 0; n < c; n++ {
		r := rb[n*nh2+2*h : n*nh2+2*h+2 : n*nh2+2*h+2]
		r[0], r[1] = ar, ai
		ar, ai = ar*sar-ai*sai, ar*sai+ai*sar
	}
}

func (p *lowPass) value(l *LockIn, ch, h int) complex128 {
	if h < 0 || h >= l.nh {
		panic("lockin: harmonic index out of range")
	}
	per := (2*l.nh + 1) * (p.order + 1)
	i := ch*per + 2*h*(p.order+1) + 2 + 2*(p.order-1)
	return complex(p.st[i], p.st[i+1])
}

func (p *lowPass) offset(l *LockIn, ch int) float64 {
	per := (2*l.nh + 1) * (p.order + 1)
	return p.st[ch*per+2*l.nh*(p.order+1)+p.order]
}

func (p *lowPass) snapshot(l *LockIn) {
	r := &l.res
	for ch := 0; ch < l.nch; ch++ {
		for h := 0; h < l.nh; h++ {
			r.z[ch*l.nh+h] = p.value(l, ch, h)
		}
		r.mean[ch] = p.offset(l, ch)
	}
	r.StartS, r.EndS = p.tPrev, p.tPrev
	r.Samples, r.Cycles, r.FreqHz = p.count, 0, 0
	r.OK = p.count > 0
}

// The cascade kernels: x with stride xs, rotors r with stride rs (real,
// imaginary), α and b per frame; s holds the previous mix (real,
// imaginary), then each stage's state. The first stage takes its input
// (the mix) as linear between frames: s ← s + α(u_prev − s) + b(u − u_prev),
// the exact response of τs' = u − s to a ramp over the interval
// (first-order hold), which keeps the ripple of the mix from aliasing into
// the output when the frames are unevenly spaced. Later stages, whose
// input is already smooth, hold their input's new value: s ← s + α(u − s).

func cascade1(x []float64, xs int, r []float64, rs int, ab, bb []float64, c int, s []float64) {
	pr, pi, ar, ai := s[0], s[1], s[2], s[3]
	for n := 0; n < c; n++ {
		al, bl := ab[n], bb[n]
		v := 2 * x[n*xs]
		mr, mi := v*r[n*rs], v*r[n*rs+1]
		ar += al*(pr-ar) + bl*(mr-pr)
		ai += al*(pi-ai) + bl*(mi-pi)
		pr, pi = mr, mi
	}
	s[0], s[1], s[2], s[3] = pr, pi, ar, ai
}

func cascade2(x []float64, xs int, r []float64, rs int, ab, bb []float64, c int, s []float64) {
	pr, pi, ar, ai, br, bi := s[0], s[1], s[2], s[3], s[4], s[5]
	for n := 0; n < c; n++ {
		al, bl := ab[n], bb[n]
		v := 2 * x[n*xs]
		mr, mi := v*r[n*rs], v*r[n*rs+1]
		ar += al*(pr-ar) + bl*(mr-pr)
		ai += al*(pi-ai) + bl*(mi-pi)
		pr, pi = mr, mi
		br += al * (ar - br)
		bi += al * (ai - bi)
	}
	s[0], s[1], s[2], s[3], s[4], s[5] = pr, pi, ar, ai, br, bi
}

func cascade3(x []float64, xs int, r []float64, rs int, ab, bb []float64, c int, s []float64) {
	pr, pi, ar, ai, br, bi, cr, ci := s[0], s[1], s[2], s[3], s[4], s[5], s[6], s[7]
	for n := 0; n < c; n++ {
		al, bl := ab[n], bb[n]
		v := 2 * x[n*xs]
		mr, mi := v*r[n*rs], v*r[n*rs+1]
		ar += al*(pr-ar) + bl*(mr-pr)
		ai += al*(pi-ai) + bl*(mi-pi)
		pr, pi = mr, mi
		br += al * (ar - br)
		bi += al * (ai - bi)
		cr += al * (br - cr)
		ci += al * (bi - ci)
	}
	s[0], s[1], s[2], s[3], s[4], s[5], s[6], s[7] = pr, pi, ar, ai, br, bi, cr, ci
}

func cascade4(x []float64, xs int, r []float64, rs int, ab, bb []float64, c int, s []float64) {
	s = s[:10]
	pr, pi, ar, ai, br, bi, cr, ci, dr, di := s[0], s[1], s[2], s[3], s[4], s[5], s[6], s[7], s[8], s[9]
	for n := 0; n < c; n++ {
		al, bl := ab[n], bb[n]
		v := 2 * x[n*xs]
		mr, mi := v*r[n*rs], v*r[n*rs+1]
		ar += al*(pr-ar) + bl*(mr-pr)
		ai += al*(pi-ai) + bl*(mi-pi)
		pr, pi = mr, mi
		br += al * (ar - br)
		bi += al * (ai - bi)
		cr += al * (br - cr)
		ci += al * (bi - ci)
		dr += al * (cr - dr)
		di += al * (ci - di)
	}
	s[0], s[1], s[2], s[3], s[4], s[5], s[6], s[7], s[8], s[9] = pr, pi, ar, ai, br, bi, cr, ci, dr, di
}

// cascadeReal smooths the samples themselves (the offset) the same way:
// s[0] is the previous sample, s[1:] the stages.
func cascadeReal(x []float64, xs int, ab, bb []float64, c int, s []float64) {
	p, a := s[0], s[1]
	switch len(s) {
	case 2:
		for n := 0; n < c; n++ {
			u := x[n*xs]
			a += ab[n]*(p-a) + bb[n]*(u-p)
			p = u
		}
	case 3:
		b := s[2]
		for n := 0; n < c; n++ {
			u, al := x[n*xs], ab[n]
			a += al*(p-a) + bb[n]*(u-p)
			p = u
			b += al * (a - b)
		}
		s[2] = b
	case 4:
		b, d := s[2], s[3]
		for n := 0; n < c; n++ {
			u, al := x[n*xs], ab[n]
			a += al*(p-a) + bb[n]*(u-p)
			p = u
			b += al * (a - b)
			d += al * (b - d)
		}
		s[2], s[3] = b, d
	default:
		b, d, e := s[2], s[3], s[4]
		for n := 0; n < c; n++ {
			u, al := x[n*xs], ab[n]
			a += al*(p-a) + bb[n]*(u-p)
			p = u
			b += al * (a - b)
			d += al * (b - d)
			e += al * (d - e)
		}
		s[2], s[3], s[4] = b, d, e
	}
	s[0], s[1] = p, a
}

// RCNoiseBandwidthHz returns the one-sided equivalent noise bandwidth, in
// hertz, of order identical first-order low-pass stages of time constant
// tau, H(f) = 1/(1+j2πfτ)^n:
//
//	ENBW = ∫₀^∞ |H(f)|² df = (1/(4τ))·(2n−3)!!/(2n−2)!!
//
// (1/(4τ), 1/(8τ), 3/(32τ), 5/(64τ) for n = 1…4; the standard result for a
// lock-in output filter, tabulated in lock-in instrument manuals). It
// returns 0 for order < 1 or tau ≤ 0.
func RCNoiseBandwidthHz(order int, tau time.Duration) float64 {
	if order < 1 || tau <= 0 {
		return 0
	}
	r := 1.0 // (2n−3)!!/(2n−2)!! by the recurrence r_{n+1} = r_n·(2n−1)/(2n)
	for n := 1; n < order; n++ {
		r *= float64(2*n-1) / float64(2*n)
	}
	return r / (4 * tau.Seconds())
}

// RCSettleTime returns the time after a step at which order identical
// first-order stages of time constant tau reach the fraction frac of the
// step. The step response is the regularised lower incomplete gamma
// function,
//
//	y(t) = 1 − e^{−x}·Σ_{k<n} x^k/k!,  x = t/τ,
//
// (the Erlang distribution function), solved for y = frac by Newton's
// method with bisection safeguarding; e.g. 99 % is reached at 4.605τ,
// 6.638τ, 8.406τ, 10.045τ for n = 1…4. It returns 0 for frac ≤ 0, order < 1
// or tau ≤ 0, and the largest Duration for frac ≥ 1 (never).
func RCSettleTime(order int, tau time.Duration, frac float64) time.Duration {
	if !(frac > 0) || order < 1 || tau <= 0 {
		return 0
	}
	if frac >= 1 {
		return time.Duration(math.MaxInt64)
	}
	x := settleX(order, frac)
	s := x * tau.Seconds()
	if s >= float64(math.MaxInt64)/1e9 {
		return time.Duration(math.MaxInt64)
	}
	return time.Duration(math.Round(s * 1e9))
}

// settleX solves 1 − e^{−x}Σ_{k<n}x^k/k! = frac for x > 0.
func settleX(n int, frac float64) float64 {
	// y(x) and y'(x) = x^{n−1}e^{−x}/(n−1)!; y is increasing from 0 to 1.
	y := func(x float64) (float64, float64) {
		term, sum := 1.0, 1.0
		for k := 1; k < n; k++ {
			term *= x / float64(k)
			sum += term
		}
		e := math.Exp(-x)
		return 1 - e*sum, term * e
	}
	lo, hi := 0.0, float64(n)
	for v, _ := y(hi); v < frac; v, _ = y(hi) {
		lo, hi = hi, 2*hi
	}
	x := (lo + hi) / 2
	for i := 0; i < 100; i++ {
		v, dv := y(x)
		if v < frac {
			lo = x
		} else {
			hi = x
		}
		nx := x - (v-frac)/dv
		if !(nx > lo && nx < hi) {
			nx = (lo + hi) / 2
		}
		if math.Abs(nx-x) <= 1e-15*x {
			return nx
		}
		x = nx
	}
	return x
}
