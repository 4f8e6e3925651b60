package duffing

import "math"

// rig integrates the scaled Duffing equation
//
//	y'' + 2ζ y' + y + γ y³ = a·Ω^m cos θ,  θ' = Ω,
//
// by the classical fourth-order Runge–Kutta method with a fixed number of
// steps per drive period. It is written here, independently of the
// harmonic-balance code, as the outside check of that code: its answers
// are those of the differential equation, not of any approximation. The
// drive phase θ is carried across frequency steps (a phase accumulator), so
// a step in Ω does not kick the resonator off its branch.
type rig struct {
	zeta, gamma, force float64
	base               bool
	perPeriod          int // RK4 steps per drive period
	y, v, theta        float64
}

// dwell holds the drive at omega for periods drive periods and returns the
// amplitudes of the response at Ω and 3Ω over the last window periods, and
// the amplitude at Ω over the window before it (to judge settling).
func (r *rig) dwell(omega float64, periods, window int) (a1, a3, a1Prev float64) {
	amp := r.force
	if r.base {
		amp *= omega * omega
	}
	n := r.perPeriod
	h := 2 * math.Pi / (omega * float64(n))
	dth := omega * h
	// Locals, not fields, in the loop, and no trigonometric calls inside
	// it: the race detector instruments field accesses and calls and
	// would slow the rig many-fold. cos and sin of the drive phase advance
	// by rotation through half a step, and are recomputed from θ at the
	// start of every period so that rounding cannot accumulate.
	y, v, th := r.y, r.v, r.theta
	zeta, gamma := r.zeta, r.gamma
	ch, sh := math.Cos(0.5*dth), math.Sin(0.5*dth)
	var c1, s1, c3, s3, pc1, ps1 float64
	for per := 0; per < periods; per++ {
		inWin := per >= periods-window
		inPrev := per >= periods-2*window && !inWin
		c, s := math.Cos(th), math.Sin(th)
		for i := 0; i < n; i++ {
			if inWin {
				c1 += y * c
				s1 += y * s
				c3 += y * (4*c*c*c - 3*c)
				s3 += y * (3*s - 4*s*s*s)
			} else if inPrev {
				pc1 += y * c
				ps1 += y * s
			}
			cm, sm := c*ch-s*sh, s*ch+c*sh // θ + dθ/2
			cn, sn := cm*ch-sm*sh, sm*ch+cm*sh
			f0, fh, f1 := amp*c, amp*cm, amp*cn
			k1y, k1v := v, f0-2*zeta*v-y-gamma*y*y*y
			y2, v2 := y+0.5*h*k1y, v+0.5*h*k1v
			k2y, k2v := v2, fh-2*zeta*v2-y2-gamma*y2*y2*y2
			y3, v3 := y+0.5*h*k2y, v+0.5*h*k2v
			k3y, k3v := v3, fh-2*zeta*v3-y3-gamma*y3*y3*y3
			y4, v4 := y+h*k3y, v+h*k3v
			k4y, k4v := v4, f1-2*zeta*v4-y4-gamma*y4*y4*y4
			y += h / 6 * (k1y + 2*k2y + 2*k3y + k4y)
			v += h / 6 * (k1v + 2*k2v + 2*k3v + k4v)
			c, s = cn, sn
		}
		th += float64(n) * dth
		if th > 2*math.Pi {
			th -= 2 * math.Pi
		}
	}
	r.y, r.v, r.theta = y, v, th
	m := float64(window * n)
	a1 = 2 / m * math.Hypot(c1, s1)
	a3 = 2 / m * math.Hypot(c3, s3)
	a1Prev = 2 / m * math.Hypot(pc1, ps1)
	return a1, a3, a1Prev
}

// sweepPoint is one dwell of a stepped sweep of the rig.
type sweepPoint struct {
	omega, a1, a3 float64
	up, settled   bool
}

// stepped runs the rig up through omegas and then back down, holding each
// frequency for periods drive periods, and returns the points in the order
// taken. settleTol is the relative change of a1 between the last two
// windows below which a point counts as settled.
func (r *rig) stepped(omegas []float64, periods, window int, settleTol float64) []sweepPoint {
	var out []sweepPoint
	run := func(om float64, up bool) {
		a1, a3, prev := r.dwell(om, periods, window)
		out = append(out, sweepPoint{omega: om, a1: a1, a3: a3, up: up,
			settled: math.Abs(a1-prev) <= settleTol*a1})
	}
	for _, om := range omegas {
		run(om, true)
	}
	for i := len(omegas) - 1; i >= 0; i-- {
		run(omegas[i], false)
	}
	return out
}

// sweepGrid returns frequencies from lo to hi with step fine inside
// [fineLo, fineHi] and coarse outside, rounded to 1e-9.
func sweepGrid(lo, hi, coarse, fineLo, fineHi, fine float64) []float64 {
	var out []float64
	x := lo
	for x <= hi+1e-12 {
		out = append(out, math.Round(x*1e9)/1e9)
		if x >= fineLo-1e-12 && x < fineHi-1e-12 {
			x += fine
		} else {
			x += coarse
		}
	}
	return out
}
