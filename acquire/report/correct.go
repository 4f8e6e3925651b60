package report

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// Corrected is the fit of the two-term harmonic balance (the fundamental
// and the third harmonic, solveTwoTerm) to the same points, started from
// the first-order fit. First-order harmonic balance leaves out the third
// harmonic's pull on the fundamental; near a resonance that shifts the
// fitted f0, ζ, β and F by amounts of the order of βA²/(32ω0²) in relative
// terms, which on a quiet record is many times their statistical
// uncertainty. The two-term balance removes that error to the next order.
type Corrected struct {
	Params duffing.Params // best-fit model (the two-term balance)
	StdErr duffing.Params // standard uncertainties (statistical, Base copied)
	Cov    [4][4]float64  // covariance of (F0Hz, Zeta, Beta, Force)

	Q, QStdErr float64
	RMS        float64 // root-mean-square amplitude residual of the used points
	Used       int     // points fitted
	Outliers   []int   // indices into Run.Points of settled points left out
	// Residuals holds measured − model for each point of Run.Points, NaN
	// where the point was not fitted.
	Residuals []float64
	// RunsZ is the runs-test statistic of the residual signs in sweep
	// order (runsTest); NaN when not defined.
	RunsZ float64
	// Rho is the lag-1 autocorrelation of the residuals in sweep order
	// (lag1) and Inflation = √((1 + ρ)/(1 − ρ)) for ρ > 0 (else 1), the
	// factor by which the standard uncertainties were widened for it: the
	// covariance s²(JᵀJ)⁻¹ assumes independent errors, and for errors that
	// follow a first-order autoregression the variance of a mean grows by
	// (1 + ρ)/(1 − ρ) (the effective number of independent points; common
	// practice in time-series analysis, applied here to smooth regressors
	// as an approximation). Points logged a little before they have fully
	// settled leave such correlated errors.
	Rho, Inflation float64
	// ThirdPct is the largest third-harmonic ratio |C|/|A| of the model
	// over the fitted points, in per cent.
	ThirdPct   float64
	Iterations int
	Converged  bool
	// Jumps are the two-term model's jumps and band (twoTermJumps).
	Jumps Predicted
}

// corrFit is the least-squares problem of the two-term fit: the used
// points in sweep order and the scale of the internal parameters
// q = (ln f0, ln ζ, β/bScale, ln F).
type corrFit struct {
	freq, amp []float64
	up        []bool
	idx       []int // index into Run.Points of each loaded point
	base      bool
	bScale    float64
	buf       [3]duffing.Root
	model     []float64
	hint      []float64
	third     []float64
}

func (c *corrFit) params(q [4]float64) duffing.Params {
	return duffing.Params{F0Hz: math.Exp(q[0]), Zeta: math.Exp(q[1]), Beta: q[2] * c.bScale,
		Force: math.Exp(q[3]), Base: c.base}
}

func (c *corrFit) toQ(p duffing.Params) [4]float64 {
	return [4]float64{math.Log(p.F0Hz), math.Log(p.Zeta), p.Beta / c.bScale, math.Log(p.Force)}
}

func (c *corrFit) load(pts []duffing.Point, idx []int) {
	c.freq, c.amp, c.up, c.idx = c.freq[:0], c.amp[:0], c.up[:0], c.idx[:0]
	for _, i := range idx {
		c.freq = append(c.freq, pts[i].FreqHz)
		c.amp = append(c.amp, pts[i].Amp)
		c.up = append(c.up, pts[i].Up)
		c.idx = append(c.idx, i)
	}
	n := len(idx)
	c.model = make([]float64, n)
	c.hint = make([]float64, n)
	c.third = make([]float64, n)
}

// eval fills out with the model's fundamental at each loaded point, on the
// two-term state nearest hint; where no first-order state continues
// (solveTwoTerm fails on every branch) the nearest stable first-order state
// is used. false when a point has no stable state or p is invalid.
func (c *corrFit) eval(p duffing.Params, hint, out []float64) bool {
	if p.Validate() != nil {
		return false
	}
	folds := p.Folds()
	for i, fr := range c.freq {
		s, ok := twoTermNearest(p, folds, fr, hint[i], c.buf[:])
		if !ok {
			best, d := math.NaN(), math.Inf(1)
			for _, r := range p.Roots(c.buf[:0], fr) {
				if r.Stable && math.Abs(r.Amp-hint[i]) < d {
					best, d = r.Amp, math.Abs(r.Amp-hint[i])
				}
			}
			if math.IsNaN(best) {
				return false
			}
			s = twoTerm{Amp: best}
		}
		out[i] = s.Amp
		if s.Amp > 0 {
			c.third[i] = s.Third / s.Amp
		}
	}
	return true
}

// residuals sets r = measured − model and returns Σr²; +Inf when the
// model cannot be evaluated.
func (c *corrFit) residuals(q [4]float64, r []float64) float64 {
	if !c.eval(c.params(q), c.amp, c.model) {
		return math.Inf(1)
	}
	s := 0.0
	for i := range r {
		r[i] = c.amp[i] - c.model[i]
		s += r[i] * r[i]
	}
	return s
}

// jacobian fills j (n×4) with ∂r/∂q by differences of step h in each q,
// forward or central; the perturbed models follow the branch of the
// model at q (hint = model values).
func (c *corrFit) jacobian(q [4]float64, r []float64, j [][4]float64, central bool) bool {
	const h = 1e-6
	n := len(c.amp)
	for i := 0; i < n; i++ {
		c.hint[i] = c.amp[i] - r[i]
	}
	hi := make([]float64, n)
	lo := make([]float64, n)
	for k := 0; k < 4; k++ {
		qh, ql := q, q
		qh[k] += h
		ql[k] -= h
		if !c.eval(c.params(qh), c.hint, hi) {
			return false
		}
		if central {
			if !c.eval(c.params(ql), c.hint, lo) {
				return false
			}
		}
		for i := 0; i < n; i++ {
			if central {
				j[i][k] = -(hi[i] - lo[i]) / (2 * h)
			} else {
				j[i][k] = -(hi[i] - c.hint[i]) / h
			}
		}
	}
	return true
}

// levmar minimizes Σr² from q0 by Levenberg–Marquardt (K. Levenberg, Q.
// Appl. Math. 2 (1944) 164–168; D. W. Marquardt, J. SIAM 11 (1963)
// 431–441), with the damping λ·diag(JᵀJ). It returns the minimum, its
// cost, the iterations and whether the relative decrease of the cost fell
// below 1e-12 (or the damping grew past 1e10 at a point no step improves).
func (c *corrFit) levmar(q0 [4]float64, maxIter int) (q [4]float64, cost float64, iters int, converged bool) {
	n := len(c.amp)
	r := make([]float64, n)
	rt := make([]float64, n)
	j := make([][4]float64, n)
	q = q0
	cost = c.residuals(q, r)
	if math.IsInf(cost, 1) {
		return q, cost, 0, false
	}
	lambda := 1e-3
	for iters = 0; iters < maxIter; iters++ {
		if !c.jacobian(q, r, j, false) {
			return q, cost, iters, false
		}
		var a [4][4]float64
		var g [4]float64
		for i := 0; i < n; i++ {
			for u := 0; u < 4; u++ {
				g[u] += j[i][u] * r[i]
				for v := 0; v < 4; v++ {
					a[u][v] += j[i][u] * j[i][v]
				}
			}
		}
		improved := false
		for !improved {
			var m [4][5]float64
			for u := 0; u < 4; u++ {
				for v := 0; v < 4; v++ {
					m[u][v] = a[u][v]
				}
				m[u][u] += lambda * a[u][u]
				m[u][4] = -g[u]
			}
			d, ok := solve4(&m)
			if ok {
				qt := q
				for u := range qt {
					qt[u] += d[u]
				}
				if ct := c.residuals(qt, rt); ct < cost {
					rel := (cost - ct) / cost
					q, cost = qt, ct
					copy(r, rt)
					lambda = math.Max(lambda/10, 1e-12)
					improved = true
					if rel < 1e-12 {
						return q, cost, iters + 1, true
					}
					continue
				}
			}
			lambda *= 10
			if lambda > 1e10 {
				return q, cost, iters + 1, true
			}
		}
	}
	return q, cost, iters, false
}

// correct fits the two-term balance to the settled points of pts (in
// record order; sweep order is taken from Up and the index), starting from
// the first-order fit p. It leaves out gross outliers — residuals beyond
// 10 robust standard deviations (1.4826·median|r|, F. R. Hampel, JASA 69
// (1974) 383–393) and beyond 0.1 % of the largest amplitude — once, when
// that keeps at least 90 % of the points. ok is false when the model cannot
// be evaluated at the start.
func correct(pts []duffing.Point, p duffing.Params) (Corrected, string) {
	var res Corrected
	var used []int
	aMax := 0.0
	for i, pt := range pts {
		if pt.Settled {
			used = append(used, i)
			aMax = math.Max(aMax, pt.Amp)
		}
	}
	if len(used) < 6 {
		return res, "fewer than 6 settled points"
	}
	duffing.SweepOrder(pts, used)
	c := &corrFit{base: p.Base}
	c.bScale = math.Abs(p.Beta)
	if w0 := p.Omega0(); c.bScale == 0 || aMax > 0 && c.bScale < 1e-6*w0*w0/(aMax*aMax) {
		c.bScale = w0 * w0 / (aMax * aMax)
	}
	c.load(pts, used)
	q0 := c.toQ(p)
	const maxIter = 100
	q, cost, iters, conv := c.levmar(q0, maxIter)
	if math.IsInf(cost, 1) {
		return res, "the two-term model cannot be evaluated at the first-order result"
	}
	var dropped []int
	used, dropped, q, iters, conv = c.jumpEnds(pts, used, q, iters, conv, maxIter)
	// Leave out gross outliers once.
	r := make([]float64, len(c.amp))
	c.residuals(q, r)
	abs := make([]float64, len(r))
	for i, x := range r {
		abs[i] = math.Abs(x)
	}
	slices.Sort(abs)
	lim := math.Max(10*1.4826*median(abs), 1e-3*aMax)
	var out []int
	keep := used[:0:0]
	for k, i := range c.idx {
		if math.Abs(r[k]) > lim {
			out = append(out, i)
		} else {
			keep = append(keep, i)
		}
	}
	if len(out) > 0 && len(out) <= len(used)/10 {
		c.load(pts, keep)
		q2, cost2, it2, conv2 := c.levmar(q, maxIter)
		if !math.IsInf(cost2, 1) {
			q, iters, conv = q2, iters+it2, conv2
		} else {
			c.load(pts, used)
			out = nil
		}
	} else {
		out = nil
	}
	res.Outliers = append(dropped, out...)
	slices.Sort(res.Outliers)
	n := len(c.amp)
	r = make([]float64, n)
	cost = c.residuals(q, r)
	res.Params = c.params(q)
	res.Used, res.Iterations, res.Converged = n, iters, conv
	res.RMS = math.Sqrt(cost / float64(n))
	res.Residuals = make([]float64, len(pts))
	for i := range res.Residuals {
		res.Residuals[i] = math.NaN()
	}
	for k, i := range c.idx {
		res.Residuals[i] = r[k]
		res.ThirdPct = math.Max(res.ThirdPct, 100*c.third[k])
	}
	res.RunsZ = runsZ(r)
	res.Rho = lag1(r, c.up)
	inflate := 1.0
	if res.Rho > 0 {
		inflate = math.Sqrt((1 + res.Rho) / (1 - res.Rho))
	}
	res.Inflation = inflate

	// Covariance s²(JᵀJ)⁻¹ in q, carried to the fields by the chain rule.
	nan := math.NaN()
	for a := range res.Cov {
		for b := range res.Cov[a] {
			res.Cov[a][b] = nan
		}
	}
	res.StdErr = duffing.Params{F0Hz: nan, Zeta: nan, Beta: nan, Force: nan, Base: p.Base}
	res.Q, res.QStdErr = res.Params.Q(), nan
	j := make([][4]float64, n)
	if n > 4 && c.jacobian(q, r, j, true) {
		jtj := mat.NewSymDense(4, nil)
		for u := 0; u < 4; u++ {
			for v := u; v < 4; v++ {
				s := 0.0
				for i := 0; i < n; i++ {
					s += j[i][u] * j[i][v]
				}
				jtj.SetSym(u, v, s)
			}
		}
		var chol mat.Cholesky
		var inv mat.SymDense
		if chol.Factorize(jtj) && chol.InverseTo(&inv) == nil && chol.Cond() < 1e15 {
			s2 := cost / float64(n-4) * inflate * inflate
			pp := res.Params
			scale := [4]float64{pp.F0Hz, pp.Zeta, c.bScale, pp.Force}
			for a := 0; a < 4; a++ {
				for b := 0; b < 4; b++ {
					res.Cov[a][b] = s2 * inv.At(a, b) * scale[a] * scale[b]
				}
			}
			res.StdErr = duffing.Params{F0Hz: math.Sqrt(res.Cov[0][0]), Zeta: math.Sqrt(res.Cov[1][1]),
				Beta: math.Sqrt(res.Cov[2][2]), Force: math.Sqrt(res.Cov[3][3]), Base: p.Base}
			res.QStdErr = res.StdErr.Zeta / (2 * pp.Zeta * pp.Zeta)
		}
	}
	if why := farFrom(res.Params, p); why != "" {
		return res, why
	}
	res.Jumps = twoTermJumps(res.Params, res.Cov)
	return res, ""
}

// farFrom says why the two-term fit c is not a correction of the
// first-order fit p, or "" when it is. The third harmonic moves the
// parameters by amounts of the order of its ratio to the fundamental (a few
// per cent at most where first-order balance is still a fair model); a fit
// that moves f0 by more than 1 %, ζ by more than a factor 1.5 or F by more
// than 30 % has found another minimum, which means the model does not
// describe the data (as when a force-driven record is fitted in the base
// form). β is not bounded: near a linear resonance it may be zero within
// its noise and change sign. The bounds are plain choices of ours, far
// beyond the largest shifts seen on the simulated rig's records (0.01 %,
// 1 % and 0.2 %).
func farFrom(c, p duffing.Params) string {
	switch {
	case math.Abs(c.F0Hz/p.F0Hz-1) > 0.01:
		return fmt.Sprintf("it moved f0 from %.6g to %.6g Hz", p.F0Hz, c.F0Hz)
	case c.Zeta > 1.5*p.Zeta || c.Zeta < p.Zeta/1.5:
		return fmt.Sprintf("it moved zeta from %.4g to %.4g", p.Zeta, c.Zeta)
	case math.Abs(c.Force/p.Force-1) > 0.3:
		return fmt.Sprintf("it moved F from %.4g to %.4g", p.Force, c.Force)
	}
	return ""
}

// jumpEnds tests the points either side of each jump (neighbours in
// sweep order of one direction whose amplitudes differ by more than a
// factor 1.5): next to a fold the transient dies ever more slowly, so a
// point logged there may still be leaving its branch, and the model's own
// fold position is at its most sensitive. Each such point is judged by its
// deleted residual — its distance from the model fitted without any of
// them (the nearest stable state) — and left out when that exceeds five
// standard deviations of the fit's residuals (a plain choice of ours: under
// Gaussian noise a 5σ residual has odds below 1 in 10⁶). used is loaded in
// c on return; it returns the points kept, those left out, and the minimum.
func (c *corrFit) jumpEnds(pts []duffing.Point, used []int, q [4]float64, iters int, conv bool, maxIter int) ([]int, []int, [4]float64, int, bool) {
	var ends []int
	for k := 1; k < len(used); k++ {
		a, b := pts[used[k-1]], pts[used[k]]
		if a.Up != b.Up || !(a.Amp > 0) || !(b.Amp > 0) || math.Abs(math.Log(b.Amp/a.Amp)) < math.Log(1.5) {
			continue
		}
		for _, i := range []int{used[k-1], used[k]} {
			if !slices.Contains(ends, i) {
				ends = append(ends, i)
			}
		}
	}
	if len(ends) == 0 || len(used)-len(ends) < 8 {
		return used, nil, q, iters, conv
	}
	rest := make([]int, 0, len(used))
	for _, i := range used {
		if !slices.Contains(ends, i) {
			rest = append(rest, i)
		}
	}
	c.load(pts, rest)
	qb, costB, itB, convB := c.levmar(q, maxIter)
	if math.IsInf(costB, 1) {
		c.load(pts, used)
		return used, nil, q, iters, conv
	}
	sB := math.Sqrt(costB / float64(len(rest)-4))
	pb := c.params(qb)
	folds := pb.Folds()
	var drop []int
	for _, i := range ends {
		s, ok := twoTermNearest(pb, folds, pts[i].FreqHz, pts[i].Amp, c.buf[:])
		if !ok || math.Abs(pts[i].Amp-s.Amp) > 5*sB {
			drop = append(drop, i)
		}
	}
	iters += itB
	switch {
	case len(drop) == 0:
		c.load(pts, used)
		return used, nil, q, iters, conv
	case len(drop) == len(ends):
		return rest, drop, qb, iters, convB
	}
	keep := make([]int, 0, len(used))
	for _, i := range used {
		if !slices.Contains(drop, i) {
			keep = append(keep, i)
		}
	}
	c.load(pts, keep)
	q2, cost2, it2, conv2 := c.levmar(qb, maxIter)
	if math.IsInf(cost2, 1) {
		c.load(pts, rest)
		return rest, ends, qb, iters, convB
	}
	return keep, drop, q2, iters + it2, conv2
}

// lag1 returns the lag-1 autocorrelation of r, ρ = Σ r_i r_{i+1}/Σ r_i²,
// over neighbours of the same sweep direction (up[i] == up[i+1]); 0 for
// fewer than three points.
func lag1(r []float64, up []bool) float64 {
	if len(r) < 3 {
		return 0
	}
	num, den := 0.0, 0.0
	for i, x := range r {
		den += x * x
		if i+1 < len(r) && up[i] == up[i+1] {
			num += x * r[i+1]
		}
	}
	if den == 0 {
		return 0
	}
	return num / den
}

// median returns the median of sorted x (0 for none).
func median(x []float64) float64 {
	n := len(x)
	switch {
	case n == 0:
		return 0
	case n%2 == 1:
		return x[n/2]
	}
	return 0.5 * (x[n/2-1] + x[n/2])
}

// runsZ is the Wald–Wolfowitz runs statistic of the residuals' signs
// (duffing.RunsTest): well below zero (−3) means long blocks of one sign.
func runsZ(r []float64) float64 {
	_, _, _, z := duffing.RunsTest(r)
	return z
}
