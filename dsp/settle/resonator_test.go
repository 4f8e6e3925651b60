package settle

import (
	"math"
	"math/cmplx"
)

// This file holds the outside reference the tests check the detector
// against: the exact response of a linear resonator
//
//	x'' + 2ζω0·x' + ω0²·x = F·cos(ωt + φ0)
//
// to a drive switched on at t = 0 with a continuous phase φ0, from rest or
// from the steady state of a drive at another frequency ωp (the phase
// accumulator keeps the phase at the switch). The solution is the
// standard textbook one (e.g. S. S. Rao, Mechanical Vibrations; D. J.
// Inman, Engineering Vibration — the underdamped free response plus the
// steady-state harmonic response; section numbers not checked):
//
//	x(t) = Re(F·H(ω)·e^{j(ωt+φ0)}) + Re(a·e^{st}),
//	H(ω) = 1/(ω0² − ω² + j·2ζω0ω),  s = −ζω0 + j·ωd,  ωd = ω0·√(1−ζ²),
//	a = C1 − j·C2,  C1 = x_h(0),  C2 = (x_h'(0) + ζω0·C1)/ωd,
//
// with x_h = x − x_ss the difference between the initial state and the new
// steady state. The lock-in phasor of block k (M whole drive cycles,
// T = 2πM/ω, reference e^{−j(ωt+φ0)}) is
//
//	z_k = (2/T)∫_{kT}^{(k+1)T} x(t)·e^{−j(ωt+φ0)} dt
//	    = z∞ + c1·e^{skT} + c2·e^{s̄kT},  z∞ = F·H(ω),
//	c1 = a·e^{−jφ0}(e^{sT} − 1)/((s − jω)T),  c2 = a*·e^{−jφ0}(e^{s̄T} − 1)/((s̄ − jω)T),
//
// integrated exactly (e^{−jωkT} = 1 for whole cycles). TestReferenceTransient
// checks this against the differential equation and against fine
// numerical integration of x(t).

// linear is a linear resonator.
type linear struct {
	f0, zeta, force float64
}

func (r linear) w0() float64 { return 2 * math.Pi * r.f0 }

// tau is the envelope time constant 1/(ζω0) in seconds.
func (r linear) tau() float64 { return 1 / (r.zeta * r.w0()) }

// h is the receptance H(ω) = 1/(ω0² − ω² + j2ζω0ω).
func (r linear) h(w float64) complex128 {
	w0 := r.w0()
	return 1 / complex(w0*w0-w*w, 2*r.zeta*w0*w)
}

// step is the exact transient after a drive change.
type step struct {
	r        linear
	w, phi0  float64
	a        complex128 // complex amplitude of the free response
	s        complex128
	zinf     complex128
	c1, c2   complex128
	blockS   float64
	envelope float64 // (|c1| + |c2|)/|z∞|: the relative block error envelope at k = 0
}

// newStep builds the transient for a drive at fHz (phase φ0 at t = 0) and
// blocks of m cycles, starting from state (x0, v0).
func newStep(r linear, fHz, phi0 float64, m int, x0, v0 float64) step {
	w0, w := r.w0(), 2*math.Pi*fHz
	wd := w0 * math.Sqrt(1-r.zeta*r.zeta)
	xs := complex(r.force, 0) * r.h(w) * cmplx.Exp(complex(0, phi0))
	xh0 := x0 - real(xs)
	vh0 := v0 - real(complex(0, w)*xs)
	c1r := xh0
	c2r := (vh0 + r.zeta*w0*c1r) / wd
	st := step{r: r, w: w, phi0: phi0, a: complex(c1r, -c2r), s: complex(-r.zeta*w0, wd)}
	st.zinf = complex(r.force, 0) * r.h(w)
	T := 2 * math.Pi * float64(m) / w
	st.blockS = T
	rot := cmplx.Exp(complex(0, -phi0))
	sb := cmplx.Conj(st.s)
	st.c1 = st.a * rot * (cmplx.Exp(st.s*complex(T, 0)) - 1) / ((st.s - complex(0, w)) * complex(T, 0))
	st.c2 = cmplx.Conj(st.a) * rot * (cmplx.Exp(sb*complex(T, 0)) - 1) / ((sb - complex(0, w)) * complex(T, 0))
	st.envelope = (cmplx.Abs(st.c1) + cmplx.Abs(st.c2)) / cmplx.Abs(st.zinf)
	return st
}

// fromSteady is the state at t = 0 of the steady response to F·cos(ωp·t + φ0).
func fromSteady(r linear, fpHz, phi0 float64) (x0, v0 float64) {
	wp := 2 * math.Pi * fpHz
	xs := complex(r.force, 0) * r.h(wp) * cmplx.Exp(complex(0, phi0))
	return real(xs), real(complex(0, wp) * xs)
}

// block returns the exact phasor of block k.
func (st step) block(k int) complex128 {
	t := complex(float64(k)*st.blockS, 0)
	return st.zinf + st.c1*cmplx.Exp(st.s*t) + st.c2*cmplx.Exp(cmplx.Conj(st.s)*t)
}

// relErr is the true remaining error of block k relative to |z∞|.
func (st step) relErr(k int) float64 {
	return cmplx.Abs(st.block(k)-st.zinf) / cmplx.Abs(st.zinf)
}

// x returns the displacement and its first two derivatives at t.
func (st step) x(t float64) (x, v, acc float64) {
	jw := complex(0, st.w)
	ss := complex(st.r.force, 0) * st.r.h(st.w) * cmplx.Exp(complex(0, st.w*t+st.phi0))
	fr := st.a * cmplx.Exp(st.s*complex(t, 0))
	return real(ss + fr), real(jw*ss + st.s*fr), real(jw*jw*ss + st.s*st.s*fr)
}

// tTol is the analytic settling time in the envelope sense: the time at
// which the block-error envelope (|c1| + |c2|)·e^{−t/τ}/|z∞| falls to tol,
// τ·ln(envelope/tol); 0 when it starts below tol.
func (st step) tTol(tol float64) float64 {
	if st.envelope <= tol {
		return 0
	}
	return st.r.tau() * math.Log(st.envelope/tol)
}

// ramp is the response from rest to a drive whose amplitude rises linearly
// from 0 to F over tr seconds, F·(t/tr)·cos(ωt + φ0), and stays at F. For
// t ≤ tr the particular solution of ẍ + 2ζω0ẋ + ω0²x = Re(t·e^{j(ωt+φ0)})
// is Re((αt + β)·e^{j(ωt+φ0)}) with α = 1/D, β = −(2jω + 2ζω0)/D²,
// D = ω0² − ω² + j2ζω0ω (substitute and equate powers of t); the free
// response is fitted to rest at t = 0. After tr the response is the step
// from the state reached at tr.
type ramp struct {
	r          linear
	w, phi0    float64
	tr         float64
	al, be     complex128 // α, β scaled by F/tr
	a, s       complex128 // free response during the ramp
	after      step       // the transient after tr (time origin at tr)
	rampBlocks int
}

// newRamp builds the ramp over n blocks of m cycles at fHz.
func newRamp(r linear, fHz, phi0 float64, m, n int) ramp {
	w0, w := r.w0(), 2*math.Pi*fHz
	T := 2 * math.Pi * float64(m) / w
	rp := ramp{r: r, w: w, phi0: phi0, tr: float64(n) * T, rampBlocks: n}
	dd := complex(w0*w0-w*w, 2*r.zeta*w0*w)
	k := complex(r.force/rp.tr, 0)
	rp.al = k / dd
	rp.be = -k * complex(2*r.zeta*w0, 2*w) / (dd * dd)
	rp.s = complex(-r.zeta*w0, w0*math.Sqrt(1-r.zeta*r.zeta))
	// Rest at t = 0: x_h(0) = −x_p(0), x_h'(0) = −x_p'(0).
	e := cmplx.Exp(complex(0, phi0))
	xp0 := real(rp.be * e)
	vp0 := real((rp.al + complex(0, w)*rp.be) * e)
	wd := imag(rp.s)
	c1 := -xp0
	c2 := (-vp0 + r.zeta*w0*c1) / wd
	rp.a = complex(c1, -c2)
	x1, v1, _ := rp.x(rp.tr)
	// tr is a whole number of cycles, so the drive phase at tr is φ0 again.
	rp.after = newStep(r, fHz, phi0, m, x1, v1)
	return rp
}

// x returns the displacement, velocity and acceleration during the ramp.
func (rp ramp) x(t float64) (x, v, acc float64) {
	jw := complex(0, rp.w)
	e := cmplx.Exp(complex(0, rp.w*t+rp.phi0))
	p := (rp.al*complex(t, 0) + rp.be) * e
	dp := rp.al*e + jw*p
	ddp := 2*jw*rp.al*e + jw*jw*p
	fr := rp.a * cmplx.Exp(rp.s*complex(t, 0))
	return real(p + fr), real(dp + rp.s*fr), real(ddp + rp.s*rp.s*fr)
}

// block returns the phasor of block k: by composite Simpson integration of
// x(t)·e^{−j(ωt+φ0)} during the ramp (400 intervals per cycle), exactly
// after it.
func (rp ramp) block(k int) complex128 {
	if k >= rp.rampBlocks {
		return rp.after.block(k - rp.rampBlocks)
	}
	T := rp.after.blockS
	return simpson(func(t float64) complex128 {
		x, _, _ := rp.x(t)
		return complex(x, 0) * cmplx.Exp(complex(0, -(rp.w*t+rp.phi0)))
	}, float64(k)*T, float64(k+1)*T, 400*int(math.Round(T*rp.w/(2*math.Pi)))) * complex(2/T, 0)
}

// simpson integrates f over [a, b] with n (even) intervals.
func simpson(f func(float64) complex128, a, b float64, n int) complex128 {
	h := (b - a) / float64(n)
	s := f(a) + f(b)
	for i := 1; i < n; i++ {
		c := complex(2, 0)
		if i%2 == 1 {
			c = 4
		}
		s += c * f(a+float64(i)*h)
	}
	return s * complex(h/3, 0)
}
