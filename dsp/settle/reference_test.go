package settle

import (
	"math"
	"math/cmplx"
	"testing"
)

// TestReferenceTransient checks the reference used by the other tests (the
// textbook solution written out in resonator_test.go) against the
// differential equation itself and against brute-force integration, so
// that a slip in the algebra cannot pass as a property of the detector.
func TestReferenceTransient(t *testing.T) {
	// odeTol: the residual x'' + 2ζω0x' + ω0²x − F(t)·cos(ωt+φ0) is
	// evaluated from closed forms; what remains is rounding in terms of
	// size ω0²·|x| ≈ 1, so 1e-9 relative is ample.
	const odeTol = 1e-9
	// quadTol: composite Simpson with 2000 intervals per cycle has an
	// error of order (h·ω)⁴/180 ≈ 1e-14 relative; 1e-9 leaves room for
	// rounding in the sum.
	const quadTol = 1e-9
	cases := []struct {
		name      string
		q, f0, f  float64
		fp        float64 // previous frequency; 0 = from rest
		m         int
		phi0      float64
		rampBlock int // > 0: a ramp over this many blocks, from rest
	}{
		{"from rest at resonance", 50, 100, 100, 0, 1, 0, 0},
		{"step up 1 %", 20, 100, 101, 100, 2, 1.1, 0},
		{"step down 0.1 %, Q 200", 200, 80, 79.9, 80, 3, 4, 0},
		{"far below resonance", 30, 100, 70, 71, 1, 2.5, 0},
		{"ramp over 6 blocks", 40, 100, 100.5, 0, 2, 0.7, 6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := linear{f0: c.f0, zeta: 1 / (2 * c.q), force: 3}
			w0, w := r.w0(), 2*math.Pi*c.f
			var st step
			var xt func(float64) (float64, float64, float64)
			force := func(t float64) float64 { return r.force * math.Cos(w*t+c.phi0) }
			var x0, v0 float64
			if c.rampBlock > 0 {
				rp := newRamp(r, c.f, c.phi0, c.m, c.rampBlock)
				st = rp.after
				tr := rp.tr
				xt = func(t float64) (float64, float64, float64) {
					if t <= tr {
						return rp.x(t)
					}
					return rp.after.x(t - tr)
				}
				force = func(t float64) float64 {
					return r.force * math.Min(t/tr, 1) * math.Cos(w*t+c.phi0)
				}
				// Continuity at the end of the ramp.
				xa, va, _ := rp.x(tr)
				xb, vb, _ := rp.after.x(0)
				if math.Abs(xa-xb) > odeTol*math.Abs(xa) || math.Abs(va-vb) > odeTol*math.Abs(va) {
					t.Errorf("ramp end: x %g vs %g, v %g vs %g", xa, xb, va, vb)
				}
			} else {
				if c.fp > 0 {
					x0, v0 = fromSteady(r, c.fp, c.phi0)
				}
				st = newStep(r, c.f, c.phi0, c.m, x0, v0)
				xt = st.x
			}
			// Initial state.
			xs, vs, _ := xt(0)
			scale := cmplx.Abs(st.zinf)
			if math.Abs(xs-x0) > odeTol*scale || math.Abs(vs-v0) > odeTol*scale*w {
				t.Errorf("initial state (%g, %g), want (%g, %g)", xs, vs, x0, v0)
			}
			// The equation of motion at a spread of times.
			for i := 0; i <= 50; i++ {
				tm := float64(i) * 0.37 * st.r.tau()
				x, v, a := xt(tm)
				res := a + 2*r.zeta*w0*v + w0*w0*x - force(tm)
				if math.Abs(res) > odeTol*r.force {
					t.Errorf("t=%g: ODE residual %g", tm, res)
				}
			}
			// Block phasors: closed form against Simpson integration of
			// (2/T)∫x(t)e^{−j(ωt+φ0)}dt over the same block.
			T := st.blockS
			n := 2000 * c.m
			for _, k := range []int{0, 1, 5, 20, 77} {
				if c.rampBlock > 0 {
					continue // the ramp's blocks are defined by this very integral
				}
				got := simpson(func(tm float64) complex128 {
					x, _, _ := st.x(tm)
					return complex(x, 0) * cmplx.Exp(complex(0, -(w*tm+c.phi0)))
				}, float64(k)*T, float64(k+1)*T, n) * complex(2/T, 0)
				want := st.block(k)
				if e := cmplx.Abs(got - want); e > quadTol*scale {
					t.Errorf("block %d: integral %v, closed form %v (|diff| %g)", k, got, want, e)
				}
			}
			// The steady state is F·H(ω) with |H| = 1/√((ω0²−ω²)² + (2ζω0ω)²).
			wantAmp := r.force / math.Hypot(w0*w0-w*w, 2*r.zeta*w0*w)
			if e := math.Abs(cmplx.Abs(st.zinf) - wantAmp); e > odeTol*wantAmp {
				t.Errorf("|z∞| = %g, want %g", cmplx.Abs(st.zinf), wantAmp)
			}
			// The envelope bounds the error of every block; 1e-13 allows
			// for rounding in z_k − z∞ once the two nearly cancel.
			for k := 0; k < 300; k++ {
				env := st.envelope * math.Exp(-float64(k)*T/r.tau())
				if e := st.relErr(k); e > env*(1+1e-9)+1e-13 {
					t.Fatalf("block %d: error %g above the envelope %g", k, e, env)
				}
			}
		})
	}
}
