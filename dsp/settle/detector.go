package settle

import (
	"math"
	"math/cmplx"
)

// Tuning of the decision. Each is a fixed part of the method, not a
// setting: the acceptance test in accept_test.go was run with these.
const (
	// minFit is the fewest blocks in the window for a fit at all.
	minFit = 8
	// minDecide is the fewest blocks in the window for a pass, for a fit
	// to be held, or for one to count as growing: with fewer, the eight real parameters of the fit
	// leave too few degrees of freedom for its standard errors to be
	// trusted.
	minDecide = 16
	// visibleRatio: a fit shows the transient when the window's scatter
	// about its mean is at least this many times the fit's residual, i.e.
	// the transient carries at least three times the noise energy.
	visibleRatio = 4
	// growSigmas: a window does not decay (Slow) when even the decay
	// factor three standard errors below the estimate is at least 1.
	growSigmas = 3
	// contradictSigmas: a fit replaces a more precise held one only when
	// their decay rates' intervals of this many standard errors do not
	// overlap and the new one is slower.
	contradictSigmas = 3
	// profileSteps: slower decays tried for the profile check, each
	// halving the decay rate.
	profileSteps = 5
	// whiteSigmas: the residual of a fit that explains the window is
	// white, with a lag-one autocorrelation of standard deviation about
	// 1/√(2W) for W complex values (measured on exact transients in
	// noise: below 5 such deviations in 999 of 1000 fits); more than
	// this many marks a model that does not fit.
	whiteSigmas = 6
	// misfitFloor: a misfit whose residual rms is below this fraction of
	// the allowed error cannot move the decision and is ignored (a fit to
	// noiseless data leaves a tiny, structured residual).
	misfitFloor = 0.03
	// fallbackWindows: with ExpectedTauS unknown and no transient seen,
	// the decay assumed has a time constant of 1/fallbackWindows of the
	// window.
	fallbackWindows = 3
)

// Status is the detector's verdict after one block.
type Status struct {
	State  State
	Blocks int // blocks fed since Reset
	// ElapsedS is the time since Reset, Blocks·blockS, in seconds.
	ElapsedS float64
	// Progress runs from 0 to 1 as the bound on the remaining error falls
	// from the largest value seen since Reset to the tolerance, on a
	// logarithmic scale, and as the minimum dwell passes; it is 1 only
	// when Settled.
	Progress float64
	// RemainingS estimates the seconds left until Settled from the decay
	// the bound assumes; NaN when there is no estimate (no fit yet, or a
	// transient that does not decay).
	RemainingS float64
	// TauS is the envelope time constant estimated from the data, in
	// seconds: τ = −blockS/ln ρ, ρ the slowest decay factor per block of
	// the held fit (the most precise seen since Reset); NaN while none
	// has been held. Q = π·f0·TauS for a linear resonator.
	TauS float64
	// ErrEst is the upper bound on the remaining error of the newest block
	// that is compared with the tolerance (estimate plus Sigmas standard
	// errors), relative to |Final|; NaN before the first fit.
	ErrEst float64
	// Final is the estimated settled phasor z∞, NaN before the first fit.
	// It is fitted to the whole window and is a better value to log than
	// the newest block.
	Final complex128
}

// Detector decides, block by block, when a transient has settled.
//
// At every block with at least 8 blocks in the window it
//  1. fits the levels of the window, z_j = z∞ + A·g_j + B·h_j with g, h
//     the solutions of the recurrence e_{j+2} = p1·e_{j+1} + p2·e_j, by
//     least squares in all of (z∞, A, B, p1, p2), refined from both the
//     linear-prediction estimate and the previous block's fit (fitAR2,
//     fitLevels, refine);
//  2. if the fit shows the transient (the window's scatter about its mean
//     is at least 4 times the residual):
//     - checks that the residual is white; if not, the model does not
//     explain the window (a drive ramp, a nonlinear start), the older
//     half of the window is forgotten and nothing is decided;
//     - bounds the error of the newest block by U = |ê| + Sigmas·(sd from
//     the levels + sd from the decay), from the fit's own standard
//     errors, and by the same bound on every slower decay (decay rate
//     halved up to 5 times, at the fit's angle) whose residual is within
//     Sigmas² noise variances of the best: the linearised errors alone
//     miss slower decays that fit a short window almost as well;
//     - does not believe a decay clearly (1 σ) faster than
//     exp(−blockS/ExpectedTauS): no resonator near a stable state decays
//     faster than its linear envelope; the levels are refitted with roots
//     at that modulus;
//     - holds the decay if it is the most precise seen since Reset, or
//     clearly (3 σ) slower than the one held;
//  3. if it does not show it (the transient has sunk into the noise, or
//     there never was one), assumes the held decay (never faster than the
//     envelope's), or with none a double root at the envelope's decay, or
//     with ExpectedTauS unknown a time constant of a third of the window,
//     refits the levels on it and bounds U = |ê| + Sigmas·sd;
//  4. counts a pass when U ≤ max(Tol·|ẑ∞|, Floor), the window holds at
//     least 16 blocks and the fit neither grows nor has a point estimate
//     that fails to decay. Settled needs Hold consecutive passes and at
//     least MinBlocks blocks.
//
// Slow is reported when the held decay is slower than
// SlowFactor·ExpectedTauS even at the fast end of its 3-σ interval, or
// when the window has shown no decay (3 σ) for Hold blocks in a row.
//
// A slow decay is not mistaken for a settled one: the slower the decay,
// the more nearly the constant and the transient are collinear over the
// window and the larger the standard error of ê. A noisy plateau after a
// step that changed nothing shows no transient; it settles once the window
// rules out a hidden transient of the assumed speed, which for block noise
// below a third of the tolerance and an expected τ of a few blocks is at
// the minimum dwell. The detector is meant for block noise (rms, complex)
// up to about a third of the allowed error; with more, points take longer
// and may give up.
//
// Update allocates nothing; all buffers are sized by New.
type Detector struct {
	cfg  Config
	ring []complex128 // last Window blocks; ring[head-1] is the newest
	head int
	n    int // blocks in ring (≤ Window)
	y    []complex128
	wk   work

	blockS float64
	blocks int
	pass   int     // consecutive passes
	grow   int     // consecutive blocks whose window does not decay
	uMax   float64 // largest bound since Reset, for Progress
	gaveUp bool

	warm     bool // wp1, wp2 hold the previous block's fit
	wp1, wp2 float64

	held     bool // hp1, hp2 hold the most precise decay seen
	hp1, hp2 float64
	hTau     float64 // its time constant, blocks
	hWidth   float64 // relative width of its decay rate's 1-σ interval
	hSlowest float64 // slowest decay rate per block in its 3-σ interval
	hFastest float64 // fastest decay rate per block in that interval
}

// New returns a detector for cfg. Zero-valued optional fields take their
// defaults; New panics with a "settle: …" message if cfg does not pass
// Validate (check it first when it comes from a person). Call Reset before
// the first Update.
func New(cfg Config) *Detector {
	if err := cfg.Validate(); err != nil {
		panic(err.Error())
	}
	cfg = cfg.withDefaults()
	w := cfg.Window
	return &Detector{
		cfg:  cfg,
		ring: make([]complex128, w),
		y:    make([]complex128, w),
		wk:   newWork(w),
	}
}

// Config returns the configuration in use, defaults filled in.
func (d *Detector) Config() Config { return d.cfg }

// Reset starts a new point after a drive change. blockS is the duration of
// one block in seconds (M drive periods); it may differ from point to
// point. Reset panics if blockS is not a positive finite number.
func (d *Detector) Reset(blockS float64) {
	if !(blockS > 0) || math.IsInf(blockS, 0) {
		panic("settle: Reset with a block duration that is not a positive number of seconds")
	}
	d.blockS = blockS
	d.blocks = 0
	d.clearWindow()
	d.uMax = 0
	d.gaveUp = false
	d.warm, d.held = false, false
}

// clearWindow forgets the blocks in the window (after Reset or a gap).
func (d *Detector) clearWindow() {
	d.head, d.n, d.pass, d.grow = 0, 0, 0, 0
}

// Update takes the block phasor z (peak amplitude·e^{j·phase} of the
// fundamental over one block) and returns the verdict. A non-finite z marks
// a gap: the window restarts (the dwell clock does not) and nothing settles
// across it. Update panics if Reset has not been called.
func (d *Detector) Update(z complex128) Status {
	if d.blockS == 0 {
		panic("settle: Update before Reset")
	}
	cfg := &d.cfg
	d.blocks++
	nan := math.NaN()
	st := Status{
		Blocks:     d.blocks,
		ElapsedS:   float64(d.blocks) * d.blockS,
		RemainingS: nan,
		TauS:       nan,
		ErrEst:     nan,
		Final:      complex(nan, nan),
	}
	// A small allowance so that a dwell of exactly N blocks gives up at
	// block N despite rounding.
	timeUp := st.ElapsedS >= cfg.MaxDwellS*(1-1e-12)
	if cmplx.IsNaN(z) || cmplx.IsInf(z) {
		d.clearWindow()
		return d.finish(st, false, false, timeUp)
	}
	d.push(z)
	if d.n < minFit {
		return d.finish(st, false, false, timeUp)
	}
	y := d.window()
	a := d.assess(y)
	if d.held {
		st.TauS = d.hTau * d.blockS
	}
	if !a.fit.ok {
		return d.finish(st, false, a.growing, timeUp)
	}
	tolAbs := math.Max(cfg.Tol*cmplx.Abs(a.fit.final), cfg.Floor)
	st.Final = a.fit.final
	st.ErrEst = a.bound / cmplx.Abs(a.fit.final)

	pass := !a.growing && !a.unsure && len(y) >= minDecide && a.bound <= tolAbs
	if pass {
		d.pass++
	} else {
		d.pass = 0
	}
	d.uMax = math.Max(d.uMax, a.bound)
	if d.uMax > tolAbs {
		st.Progress = math.Log(d.uMax/math.Max(a.bound, tolAbs)) / math.Log(d.uMax/tolAbs)
	}
	if pass {
		st.Progress = math.Max(st.Progress, float64(d.pass)/float64(cfg.Hold+1))
	}
	if cfg.MinBlocks > 0 {
		st.Progress = math.Min(st.Progress, float64(d.blocks)/float64(cfg.MinBlocks))
	}
	st.Progress = math.Min(st.Progress, 0.99)
	if a.rho > 0 && a.rho < 1 {
		left := float64(cfg.Hold - d.pass)
		if a.bound > tolAbs {
			left = math.Log(a.bound/tolAbs)/-math.Log(a.rho) + float64(cfg.Hold)
		}
		left = math.Max(left, float64(cfg.MinBlocks-d.blocks))
		st.RemainingS = math.Max(left, 0) * d.blockS
	}
	return d.finish(st, d.pass >= cfg.Hold && d.blocks >= cfg.MinBlocks, a.growing, timeUp)
}

// push adds z to the ring.
func (d *Detector) push(z complex128) {
	d.ring[d.head] = z
	d.head++
	if d.head == len(d.ring) {
		d.head = 0
	}
	if d.n < len(d.ring) {
		d.n++
	}
}

// window copies the blocks in the ring, oldest first, into d.y.
func (d *Detector) window() []complex128 {
	w := d.n
	y := d.y[:w]
	start := d.head - w
	if start < 0 {
		start += len(d.ring)
	}
	k := copy(y, d.ring[start:])
	copy(y[k:], d.ring[:w-k])
	return y
}

// assessment is what one block's fit says.
type assessment struct {
	fit     levelFit
	bound   float64 // U, the bound on |e| of the newest block, signal units
	rho     float64 // decay factor per block the bound assumes
	growing bool    // the window shows a transient that does not decay
	unsure  bool    // it shows one whose point estimate does not decay
}

// assess fits the window y and bounds the error of its newest block; it
// updates the warm start and the held decay.
func (d *Detector) assess(y []complex128) assessment {
	cfg := &d.cfg
	wk := &d.wk
	rhoMin := 0.0
	if cfg.ExpectedTauS > 0 {
		rhoMin = math.Exp(-d.blockS / cfg.ExpectedTauS)
	}
	var a assessment

	// Refine from the linear-prediction estimate and from the previous
	// block's fit, and keep the better: the residual can have more than
	// one minimum, and a warm start alone can stay in a poor one.
	var pf poleFit
	if p1, p2, ok := fitAR2(y); ok {
		pf = refine(y, p1, p2, wk)
	}
	if d.warm {
		if alt := refine(y, d.wp1, d.wp2, wk); alt.ok && (!pf.ok || alt.sse < pf.sse) {
			pf = alt
		}
	}
	d.warm, d.wp1, d.wp2 = pf.ok, pf.p1, pf.p2

	if pf.ok && sseAboutMean(y) > visibleRatio*pf.sse {
		// The transient is visible: bound it with the fit's own
		// uncertainty, that of the levels and that of the decay.
		tolAbs := math.Max(cfg.Tol*cmplx.Abs(pf.lev.final), cfg.Floor)
		if len(y) >= minDecide && pf.lag1 > whiteSigmas/math.Sqrt(2*float64(len(y))) &&
			math.Sqrt(pf.lev.sigma2) > misfitFloor*tolAbs {
			// The residual is not noise: the model does not explain the
			// window (a drive ramp, or a start far from the steady state
			// of a nonlinear resonator). Forget the older half of the
			// window and decide nothing on this block.
			d.n = len(y) / 2
			a.unsure = true
		}
		rho := dominant(pf.p1, pf.p2)
		lo, _ := rhoRange(pf, growSigmas)
		_, hi1 := rhoRange(pf, 1)
		switch {
		case lo >= 1 && len(y) >= minDecide:
			a.growing = true
		case rho >= 1:
			a.unsure = true
		default:
			d.hold(pf, rho, len(y))
		}
		a.fit = pf.lev
		a.bound = cmplx.Abs(a.fit.now) +
			cfg.Sigmas*(math.Sqrt(a.fit.sigma2*a.fit.varNow)+math.Sqrt(pf.varP))
		a.rho = math.Max(rho, rhoMin)
		if hi1 < rhoMin {
			// Clearly faster than the linear envelope allows: not to be
			// believed. Refit the levels on roots at the envelope's decay.
			q1, q2 := pairAt(pf.p1, pf.p2, rhoMin)
			a.fit = fitLevels(y, q1, q2, wk.g, wk.h, nil)
			a.bound = cmplx.Abs(a.fit.now) + cfg.Sigmas*math.Sqrt(a.fit.sigma2*a.fit.varNow)
		}
		// The linearised standard errors can miss a slower decay that
		// fits the window almost as well (the residual is far from
		// quadratic in the decay rate when the window is short against
		// τ). Try slower decays at the fit's angle and take the largest
		// bound among those whose residual exceeds the best by less than
		// Sigmas² noise variances (a profile-likelihood interval).
		if rho > 0 && rho < 1 {
			limit := pf.sse + cfg.Sigmas*cfg.Sigmas*pf.lev.sigma2/2
			rate := -math.Log(rho)
			for i := 1; i <= profileSteps; i++ {
				rate /= 2
				q1, q2 := pairAt(pf.p1, pf.p2, math.Exp(-rate))
				g := fitLevels(y, q1, q2, wk.g, wk.h, nil)
				if !g.ok || g.sse > limit {
					continue
				}
				if b := cmplx.Abs(g.now) + cfg.Sigmas*math.Sqrt(g.sigma2*g.varNow); b > a.bound {
					a.bound = b
				}
			}
		}
		return a
	}

	// Not visible (or the fit failed): assume the decay held, never
	// faster than the envelope's; with none held, a double root at the
	// envelope's decay or, with that unknown, at a time constant of a
	// fraction of the window.
	var q1, q2 float64
	switch {
	case d.held && dominant(d.hp1, d.hp2) >= rhoMin:
		q1, q2 = d.hp1, d.hp2
	case d.held:
		q1, q2 = pairAt(d.hp1, d.hp2, rhoMin)
	default:
		rho := rhoMin
		if rho == 0 {
			rho = math.Exp(-fallbackWindows / float64(len(y)))
		}
		q1, q2 = 2*rho, -rho*rho
	}
	a.rho = dominant(q1, q2)
	a.fit = fitLevels(y, q1, q2, wk.g, wk.h, nil)
	a.bound = cmplx.Abs(a.fit.now) + cfg.Sigmas*math.Sqrt(a.fit.sigma2*a.fit.varNow)
	return a
}

// hold keeps the decay of pf (slowest root rho, from a window of w blocks)
// if it is the most precise seen since Reset, or clearly slower than the
// one held, so that once the transient has sunk into the noise the decay
// measured while it stood above is still used.
func (d *Detector) hold(pf poleFit, rho float64, w int) {
	if w < minDecide {
		return
	}
	lo, hi := rhoRange(pf, 1)
	rate := -math.Log(rho)
	width := (math.Log(math.Min(hi, 1)) - math.Log(lo)) / rate
	lo3, hi3 := rhoRange(pf, contradictSigmas)
	slowest, fastest := -math.Log(math.Min(hi3, 1)), -math.Log(lo3)
	if d.held && width > d.hWidth && fastest >= d.hSlowest {
		return
	}
	d.held, d.hp1, d.hp2 = true, pf.p1, pf.p2
	d.hTau = 1 / rate
	d.hWidth, d.hSlowest, d.hFastest = width, slowest, fastest
}

// finish sets the state of st.
func (d *Detector) finish(st Status, settled, growing, timeUp bool) Status {
	cfg := &d.cfg
	// Slow: the held decay is slower than SlowFactor·ExpectedTauS even at
	// the fast end of its 3-σ interval, or the window has not decayed for
	// Hold blocks in a row.
	if growing {
		d.grow++
	} else {
		d.grow = 0
	}
	slow := d.grow >= cfg.Hold || (d.held && cfg.ExpectedTauS > 0 &&
		d.blockS/d.hFastest > cfg.SlowFactor*cfg.ExpectedTauS)
	switch {
	case settled && !d.gaveUp:
		st.State = Settled
		st.Progress = 1
		st.RemainingS = 0
	case timeUp || d.gaveUp:
		d.gaveUp = true
		st.State = GaveUp
	case slow:
		st.State = Slow
	default:
		st.State = Settling
	}
	return st
}

// pairAt returns the recurrence with a pair of roots of modulus rho at the
// angle of the roots of x² − p1·x − p2: for a complex pair ρe^{±jθ} it is
// (2ρ·cos θ, −ρ²); for real roots a double root at ±ρ, with the sign of
// the larger.
func pairAt(p1, p2, rho float64) (q1, q2 float64) {
	if disc := p1*p1 + 4*p2; disc < 0 {
		return p1 * rho / math.Sqrt(-p2), -rho * rho
	}
	if p1 < 0 {
		return -2 * rho, -rho * rho
	}
	return 2 * rho, -rho * rho
}

// sseAboutMean returns Σ|y_j − ȳ|².
func sseAboutMean(y []complex128) float64 {
	var m complex128
	for _, v := range y {
		m += v
	}
	m /= complex(float64(len(y)), 0)
	var s float64
	for _, v := range y {
		e := v - m
		s += real(e)*real(e) + imag(e)*imag(e)
	}
	return s
}
