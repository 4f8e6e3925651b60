package lockin

import (
	"math"
	"math/big"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// TestRotorAccuracy checks the table-and-series rotor against math.Sincos
// of an argument reduced exactly (in 200-bit arithmetic with math/big), for
// the table sizes of several denominators and phases up to 1e13 cycles
// (past the direct range, where it reduces with math.Mod first).
func TestRotorAccuracy(t *testing.T) {
	// tol: absolute on a unit vector. The table entry (math.Sincos,
	// within 1 ulp) and the series each carry about 1e−16 and their
	// product adds two roundings; the rotor's doc comment claims about
	// 4e−16 and this allows 6e−16.
	const tol = 6e-16
	rng := rand.New(rand.NewPCG(11, 12))
	for _, lden := range []int{1, 2, 3, 6, 12, 16, 240} {
		r := newRotor(lden)
		worst := 0.0
		for i := 0; i < 1000; i++ {
			var p float64
			switch i % 4 {
			case 0:
				p = rng.Float64() * 10
			case 1:
				p = (rng.Float64() - 0.5) * 2e4
			case 2:
				p = rng.Float64() * 1e13 // beyond 2⁵⁰/T: the far path
			default:
				p = math.Round(rng.Float64()*1e6) / 256 // on table points
			}
			gr, gi := r.at(p)
			wr, wi := exactRotor(p, lden)
			worst = math.Max(worst, math.Hypot(gr-wr, gi-wi))
		}
		if worst > tol {
			t.Errorf("L=%d: worst error %.2e > %g", lden, worst, tol)
		}
		t.Logf("L=%d: worst error %.2e", lden, worst)
	}
}

// exactRotor returns e^{−j2πp/L} computed in 200-bit arithmetic: p/L is
// reduced mod 1 exactly and sin, cos are summed from their Taylor series,
// so the only error is the final rounding to float64.
func exactRotor(p float64, lden int) (float64, float64) {
	const prec = 200
	nf := func() *big.Float { return new(big.Float).SetPrec(prec) }
	q := nf().SetFloat64(p)
	q.Quo(q, nf().SetInt64(int64(lden)))
	ip, _ := q.Int(nil)
	q.Sub(q, nf().SetInt(ip)) // (−1, 1)
	// π to 50 digits (166 bits), enough for 200-bit work on |x| ≤ 2π.
	pi, _ := nf().SetString("3.14159265358979323846264338327950288419716939937510")
	if q.Cmp(nf().SetFloat64(0.5)) > 0 {
		q.Sub(q, nf().SetInt64(1))
	} else if q.Cmp(nf().SetFloat64(-0.5)) < 0 {
		q.Add(q, nf().SetInt64(1))
	}
	x := nf().Mul(q, pi)
	x.Mul(x, nf().SetInt64(-2)) // −2πq, |x| ≤ π
	// Taylor series: terms x^k/k! until negligible.
	s, c := nf(), nf().SetInt64(1)
	term := nf().SetInt64(1)
	for k := 1; k < 80; k++ { // π^80/80! < 1e−79
		term.Mul(term, x)
		term.Quo(term, nf().SetInt64(int64(k)))
		switch k % 4 {
		case 1:
			s.Add(s, term)
		case 2:
			c.Sub(c, term)
		case 3:
			s.Sub(s, term)
		case 0:
			c.Add(c, term)
		}
	}
	cr, _ := c.Float64()
	sr, _ := s.Float64()
	return cr, sr
}

// TestChain checks the addition chains against repeated multiplication.
func TestChain(t *testing.T) {
	z := cmplx.Rect(1, 0.7)
	for _, targets := range [][]int{{1}, {2}, {1, 2, 3, 5}, {2, 4, 6, 10, 1}, {7, 19, 33}, {64, 3}} {
		c := newChain(targets)
		pw := make([]float64, 2*(c.maxExp+1))
		pw[0], pw[1], pw[2], pw[3] = 1, 0, real(z), imag(z)
		c.run(pw)
		for _, e := range targets {
			want := complex(1, 0)
			for range e {
				want *= z
			}
			got := complex(pw[2*e], pw[2*e+1])
			// 1e−14: e ≤ 64 products, each adding ~1e−16.
			if cmplx.Abs(got-want) > 1e-14 {
				t.Errorf("targets %v: z^%d = %v, want %v", targets, e, got, want)
			}
		}
		if len(c.steps) > 2*c.maxExp {
			t.Errorf("targets %v: %d steps", targets, len(c.steps))
		}
	}
}

// TestGoertzelAccuracy checks the two-step Goertzel recurrence against a
// compensated (Kahan) direct sum Σx_n·e^{−jωn} with math.Sincos rotors, over
// the longest run used (maxGoertzel samples) and from ω = 1e−5 rad (a 0.3 Hz
// drive at 192 kHz) to near π.
func TestGoertzelAccuracy(t *testing.T) {
	// tol: relative to the sum's scale c·max|x|. The doc comment of
	// goertzel.go states 1e−11; the worst measured is ~1e−12.
	const tol = 1e-11
	rng := rand.New(rand.NewPCG(1, 3))
	for _, c := range []int{1, 2, 3, 64, maxGoertzel - 1, maxGoertzel} {
		for _, w := range []float64{1e-5, 1e-4, 1e-3, 0.03, 0.5, 2, 3.1} {
			x := make([]float64, c)
			for i := range x {
				x[i] = math.Cos(w*float64(i)+0.3) + 0.3*rng.NormFloat64()
			}
			var st [4]float64
			var k [8]float64
			lookAhead(k[:], 2*math.Cos(w))
			lookAhead(k[4:], 2*math.Cos(w/3))
			goertzel2(x, 1, c, &k, &st)
			g := cmplx.Rect(1, -w*float64(c-1)) * (complex(st[0], 0) - cmplx.Rect(1, -w)*complex(st[1], 0))
			var st1 [4]float64
			goertzel1(x, 1, c, &k, &st1)
			if st1[0] != st[0] || st1[1] != st[1] {
				t.Errorf("c=%d w=%g: goertzel1 %v differs from goertzel2 %v", c, w, st1[:2], st[:2])
			}
			sum := 0.0
			for _, v := range x {
				sum += v
			}
			if s := sumStride(x, 1, c); math.Abs(s-sum) > 1e-12*float64(c) {
				t.Errorf("c=%d: sumStride %v, want %v", c, s, sum)
			}
			want := kahanDFT(x, w)
			if e := cmplx.Abs(g-want) / float64(c); e > tol {
				t.Errorf("c=%d w=%g: error %.2e", c, w, e)
			}
		}
	}
}

func kahanDFT(x []float64, w float64) complex128 {
	var sr, si, cr, ci float64
	for n, v := range x {
		s, c := math.Sincos(-w * float64(n))
		yr := v*c - cr
		tr := sr + yr
		cr = (tr - sr) - yr
		sr = tr
		yi := v*s - ci
		ti := si + yi
		ci = (ti - si) - yi
		si = ti
	}
	return complex(sr, si)
}
