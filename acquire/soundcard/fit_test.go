package soundcard

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The tests measure tones with the least-squares sine fits of IEEE Std
// 1241-2010 Annex B.1 (three parameters, frequency known) and the
// four-parameter fit (frequency estimated), as in the standard's MATLAB
// framework sfit3/sfit4 (Kollár & Márkus). gonum's least-squares solve does
// the linear algebra. The response is an independent measurement of what the
// card played: it uses only the recorded samples and, for fit3, the tool's
// own phase.

// sine is a fitted y ≈ A·cos(phase + θ) + C.
type sine struct {
	A, ThetaRad, C float64
	FreqHz         float64 // fit4 only
	RMS            float64 // rms of the residual
}

// fit3 fits y[n] ≈ A0·cos(2π·phaseCyc[n]) + B0·sin(2π·phaseCyc[n]) + C and
// returns A = √(A0²+B0²), θ = atan2(−B0, A0) (IEEE 1241 Annex B.1).
func fit3(y, phaseCyc []float64) sine {
	n := len(y)
	d := mat.NewDense(n, 3, nil)
	for i := range n {
		s, c := math.Sincos(2 * math.Pi * phaseCyc[i])
		d.Set(i, 0, c)
		d.Set(i, 1, s)
		d.Set(i, 2, 1)
	}
	var x mat.VecDense
	if err := x.SolveVec(d, mat.NewVecDense(n, append([]float64(nil), y...))); err != nil {
		panic(err)
	}
	a0, b0, c := x.AtVec(0), x.AtVec(1), x.AtVec(2)
	var ss float64
	for i := range n {
		s, co := math.Sincos(2 * math.Pi * phaseCyc[i])
		r := y[i] - (a0*co + b0*s + c)
		ss += r * r
	}
	return sine{A: math.Hypot(a0, b0), ThetaRad: math.Atan2(-b0, a0), C: c, RMS: math.Sqrt(ss / float64(n))}
}

// fit4 fits y[n] ≈ A·cos(ωt_n) + B·sin(ωt_n) + C, t_n = n/fs, with ω
// estimated by the IEEE 1241 four-parameter iteration started at f0Hz:
// columns [cos ωt, sin ωt, 1, −A·t·sin ωt + B·t·cos ωt] give the
// correction Δω; steps are damped to 5 % of ω as sfit4 does. sfit4 stops
// at |Δω| < 2π·1e−6·fs; this one goes on to |Δω| < 2π·1e−12·fs (or 30
// iterations), since the tests compare frequencies to far better than
// 1 ppm of the sample rate.
func fit4(y []float64, fs, f0Hz float64) sine {
	n := len(y)
	w := 2 * math.Pi * f0Hz
	tt := make([]float64, n)
	for i := range tt {
		tt[i] = float64(i) / fs
	}
	ph := make([]float64, n)
	for i := range ph {
		ph[i] = w * tt[i] / (2 * math.Pi)
	}
	s3 := fit3(y, ph)
	a := s3.A * math.Cos(s3.ThetaRad)
	b := -s3.A * math.Sin(s3.ThetaRad)
	c := s3.C
	d := mat.NewDense(n, 4, nil)
	rhs := mat.NewVecDense(n, nil)
	for range 30 {
		for i := range n {
			s, co := math.Sincos(w * tt[i])
			d.Set(i, 0, co)
			d.Set(i, 1, s)
			d.Set(i, 2, 1)
			d.Set(i, 3, -a*tt[i]*s+b*tt[i]*co)
			rhs.SetVec(i, y[i])
		}
		var x mat.VecDense
		if err := x.SolveVec(d, rhs); err != nil {
			panic(err)
		}
		a, b, c = x.AtVec(0), x.AtVec(1), x.AtVec(2)
		dw := x.AtVec(3)
		if math.Abs(dw) >= 0.05*w {
			dw = 0.05 * dw
		}
		w += dw
		if math.Abs(dw) < 2*math.Pi*1e-12*fs {
			break
		}
	}
	var ss float64
	for i := range n {
		s, co := math.Sincos(w * tt[i])
		r := y[i] - (a*co + b*s + c)
		ss += r * r
	}
	return sine{A: math.Hypot(a, b), ThetaRad: math.Atan2(-b, a), C: c, FreqHz: w / (2 * math.Pi),
		RMS: math.Sqrt(ss / float64(n))}
}

func dB(x float64) float64 { return 20 * math.Log10(x) }

// TestFits checks the fits themselves on synthetic tones of known
// parameters (exact recovery without noise; IEEE 1241 Annex B.1), so a
// loopback failure cannot be the fit's fault.
func TestFits(t *testing.T) {
	// exactTol: a noiseless tone is recovered to rounding (QR on ~5000 rows).
	const exactTol = 1e-9
	rng := rand.New(rand.NewPCG(7, 11))
	for _, tc := range []struct {
		name            string
		fs, f, a, th, c float64
		f0              float64 // fit4 start
	}{
		{"1kHz at 48k", 48000, 1000.5, 0.4, 0.7, 0.01, 1000.3},
		{"37Hz at 44.1k", 44100, 37.25, 0.9, -2.5, 0, 37.2},
		{"15kHz at 96k", 96000, 15000.125, 0.05, 3, -0.002, 15000.2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			n := 4800 + rng.IntN(200)
			y := make([]float64, n)
			ph := make([]float64, n)
			for i := range y {
				ph[i] = tc.f * float64(i) / tc.fs
				y[i] = tc.a*math.Cos(2*math.Pi*ph[i]+tc.th) + tc.c
			}
			s3 := fit3(y, ph)
			if math.Abs(s3.A-tc.a) > exactTol || math.Abs(s3.ThetaRad-tc.th) > exactTol || math.Abs(s3.C-tc.c) > exactTol {
				t.Errorf("fit3 = %+v, want A %g θ %g C %g", s3, tc.a, tc.th, tc.c)
			}
			s4 := fit4(y, tc.fs, tc.f0)
			if math.Abs(s4.FreqHz-tc.f) > exactTol*tc.f || math.Abs(s4.A-tc.a) > exactTol {
				t.Errorf("fit4 = %+v, want f %g A %g", s4, tc.f, tc.a)
			}
		})
	}
}
