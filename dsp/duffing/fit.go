package duffing

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Point is one logged point of a stepped sweep.
type Point struct {
	FreqHz  float64 // drive frequency, Hz
	Amp     float64 // amplitude of the fundamental, display unit
	Up      bool    // taken on an up-sweep (false: down-sweep)
	Settled bool    // passed the settle detector; unsettled points are not fitted
}

// Interval is a frequency interval in which a sweep was seen to jump: the
// last point before the jump and the first after it, in either order.
// The zero Interval means "not given".
type Interval struct {
	LoHz, HiHz float64
}

func (iv Interval) given() bool { return iv.LoHz > 0 || iv.HiHz > 0 }

// FitOptions controls Fit. The zero value fits the force form.
type FitOptions struct {
	Base     bool     // fit the base-excitation form F(ω) = F·(ω/ω0)²
	UpJump   Interval // where the up-sweep jumped, if known
	DownJump Interval // where the down-sweep jumped, if known
	MaxIter  int      // Levenberg–Marquardt iterations per start; 0 means 200
}

// Stiffness is the sign of the fitted cubic stiffness.
type Stiffness int

const (
	// Linear: β is within two standard uncertainties of zero.
	Linear Stiffness = iota
	// Hardening: β > 0, the peak leans to higher frequency.
	Hardening
	// Softening: β < 0, the peak leans to lower frequency.
	Softening
)

// String returns "linear", "hardening" or "softening".
func (s Stiffness) String() string {
	switch s {
	case Linear:
		return "linear"
	case Hardening:
		return "hardening"
	case Softening:
		return "softening"
	}
	return "stiffness(?)"
}

// WarnCode names the kind of a fit warning.
type WarnCode int

const (
	// WarnOneDirection: all points come from one sweep direction.
	WarnOneDirection WarnCode = iota + 1
	// WarnResidualRuns: the residual signs come in long runs (runs test).
	WarnResidualRuns
	// WarnJumpMismatch: a predicted jump is far from where it was seen.
	WarnJumpMismatch
	// WarnSuperharmonic: points lie on the superharmonic resonance near f0/3.
	WarnSuperharmonic
	// WarnLargeHarmonic: the third harmonic at the peak is large enough
	// that first-order harmonic balance loses accuracy.
	WarnLargeHarmonic
	// WarnNotConverged: the minimizer stopped on its iteration limit.
	WarnNotConverged
	// WarnOutliers: settled points far from every branch of the model were
	// left out (FitResult.Outliers).
	WarnOutliers
	// WarnIllConditioned: the parameters are not all determined by the
	// data (singular normal matrix); uncertainties are not available.
	WarnIllConditioned
)

// String returns a short name of the code.
func (c WarnCode) String() string {
	switch c {
	case WarnOneDirection:
		return "one direction"
	case WarnResidualRuns:
		return "structured residuals"
	case WarnJumpMismatch:
		return "jump mismatch"
	case WarnSuperharmonic:
		return "superharmonic"
	case WarnLargeHarmonic:
		return "large harmonic"
	case WarnNotConverged:
		return "not converged"
	case WarnOutliers:
		return "outliers"
	case WarnIllConditioned:
		return "ill-conditioned"
	}
	return "warning(?)"
}

// Warning is something about a fit a person should know.
type Warning struct {
	Code WarnCode
	Text string // one sentence saying what was found and what it means
}

// FitResult is the outcome of Fit. Parameter order in Cov and Corr is
// F0Hz, Zeta, Beta, Force.
type FitResult struct {
	Params Params        // best-fit model
	StdErr Params        // standard uncertainty of each fitted field (Base copied)
	Cov    [4][4]float64 // covariance s²(JᵀJ)⁻¹ of (F0Hz, Zeta, Beta, Force)
	Corr   [4][4]float64 // correlation matrix of the same

	Q, QStdErr float64 // quality factor 1/(2ζ) and its uncertainty
	Stiffness  Stiffness

	Folds         []Fold  // of the fitted model, ascending frequency
	UpJumpHz      float64 // predicted jump of an up-sweep, NaN if none
	UpJumpStdHz   float64 // its standard uncertainty (from Cov), NaN if unknown
	DownJumpHz    float64 // predicted jump of a down-sweep, NaN if none
	DownJumpStdHz float64
	BandLoHz      float64 // predicted bistable band, when Bistable
	BandHiHz      float64
	Bistable      bool

	RMS       float64   // root-mean-square amplitude residual of the used points
	Residuals []float64 // measured − model for each input point (outliers too), NaN for unsettled ones
	Used      int       // settled points fitted
	Outliers  []int     // indices into the input of settled points left out as gross outliers
	Excluded  int       // points excluded because not settled

	Iterations int  // Levenberg–Marquardt iterations of the chosen start
	Converged  bool // the minimizer met its convergence test
	Warnings   []Warning
}

// Fit fits ω0, ζ, β and F of the model (Params, force or base form as
// opt.Base says) to the settled points of a stepped sweep, both directions
// at once.
//
// Each point is compared with the stable steady state of the model nearest
// to it (so a point in the bistable band is matched to the branch its sweep
// followed, and a record whose sweep history is not known still fits).
// Residuals are in amplitude, not log amplitude: the noise of a lock-in
// reading is additive and roughly the same across the sweep, and the peak
// and the jumps, which carry ζ and β, are where the amplitude is large; a
// log scale would give the noise-dominated tails the same weight.
//
// Method: starting values from the data (peak frequency and height, the
// half-power width, and the lean of the peak: a grid of natural
// frequencies, each placed so that the peak lies on the backbone
// ω_pk² = ω0² + ¾βA_pk², and the natural frequency the two sweeps' jumps
// imply; see grid). From each of the best few, Levenberg–Marquardt
// (levmar) in the parameters ln f0, ln ζ, β/β_ref, ln F — first with two
// extra residuals that hold the model's folds to the jumps seen in the
// data (jumpRows), then without them — then gross outliers are left out
// and the fit refined (tryStart); the starts are compared by least trimmed
// squares. Standard uncertainties come from the Jacobian at the optimum,
// Cov = s²(JᵀJ)⁻¹ with s² = Σr²/(n − 4), carried to the fitted fields by
// the chain rule (delta method). They are statistical only: the model's
// own error near large amplitudes (first-order harmonic balance drops the
// third harmonic) is not in them, and the runs-test warning is the sign of
// it.
//
// Errors: ErrBadPoint, ErrNoSettled, ErrTooFewPoints (fewer than 6
// settled), ErrFewNearPeak (fewer than 3 settled points at or above 1/√2
// of the largest), ErrNoFit.
func Fit(pts []Point, opt FitOptions) (FitResult, error) {
	var res FitResult
	var used []int
	for i, p := range pts {
		if !(p.FreqHz > 0) || math.IsInf(p.FreqHz, 0) || !(p.Amp >= 0) || math.IsInf(p.Amp, 0) {
			return res, fmt.Errorf("%w: point %d has frequency %g Hz and amplitude %g; both must be finite, the frequency positive",
				ErrBadPoint, i, p.FreqHz, p.Amp)
		}
		if p.Settled {
			used = append(used, i)
		}
	}
	res.Used, res.Excluded = len(used), len(pts)-len(used)
	if len(used) == 0 {
		return res, fmt.Errorf("%w: %d points, none settled; lengthen the dwell or loosen the settle test", ErrNoSettled, len(pts))
	}
	if len(used) < 6 {
		return res, fmt.Errorf("%w: %d settled (%d excluded as not settled); the fit of 4 parameters needs at least 6",
			ErrTooFewPoints, len(used), res.Excluded)
	}
	SweepOrder(pts, used)
	f := &fitter{base: opt.Base}
	f.setPoints(pts, used)
	f.findJumps()
	pk := 0
	for i, a := range f.amp {
		if a > f.amp[pk] {
			pk = i
		}
	}
	aPk, fPk := f.amp[pk], f.freq[pk]
	half := aPk / math.Sqrt2
	near, loHalf, hiHalf := 0, math.Inf(1), math.Inf(-1)
	for i, a := range f.amp {
		if a >= half {
			near++
			loHalf = math.Min(loHalf, f.freq[i])
			hiHalf = math.Max(hiHalf, f.freq[i])
		}
	}
	if near < 3 {
		return res, fmt.Errorf("%w: %d settled points at or above %.4g (1/√2 of the largest, %.4g at %.6g Hz); need 3: step finer around the peak",
			ErrFewNearPeak, near, half, aPk, fPk)
	}
	f.fRef = fPk
	wPk := 2 * math.Pi * fPk
	f.bRef = wPk * wPk / (aPk * aPk)
	f.forceRef = wPk * wPk * aPk

	starts := f.grid(fPk, aPk, math.Max((hiHalf-loHalf)/(2*fPk), 1e-4))
	if len(starts) == 0 {
		return res, fmt.Errorf("%w: no trial model near the peak (%.6g Hz, %.4g) reached the data", ErrNoFit, fPk, aPk)
	}
	maxIter := opt.MaxIter
	if maxIter <= 0 {
		maxIter = 200
	}
	var best attempt
	best.lts = math.Inf(1)
	for _, q0 := range starts {
		if a := f.tryStart(pts, used, q0, aPk, maxIter); a.lts < best.lts {
			best = a
		}
	}
	if math.IsInf(best.lts, 1) {
		return res, fmt.Errorf("%w: the minimizer left the model's domain from every start", ErrNoFit)
	}
	if len(best.out) > 0 {
		keep := used[:0:0]
		for k, i := range used {
			if slices.Contains(best.out, k) {
				res.Outliers = append(res.Outliers, i)
			} else {
				keep = append(keep, i)
			}
		}
		slices.Sort(res.Outliers)
		used = keep
	}
	f.setPoints(pts, used)
	res.Used = len(used)
	f.finish(&res, best.res, pts, used, opt)
	return res, nil
}

// fitter holds the used points in sweep order and the reference scales of
// the internal parameters q = (ln(f0/fRef), ln ζ, β/bRef, ln(F/forceRef)).
type fitter struct {
	freq, amp []float64
	up        []bool

	base                 bool
	seen                 [2]jumpSeen // jumps in the data: up-sweep, down-sweep
	useJumps             bool        // jumpRows active
	central              bool        // central differences in jacobian
	fRef, bRef, forceRef float64
	hint, model          []float64
	modelH, modelL       []float64
	buf                  [3]Root
}

// attempt is the outcome of one start: the minimum, the positions (in the
// used points) of the gross outliers left out of it, and its trimmed cost.
type attempt struct {
	res lmResult
	out []int
	lts float64
}

// tryStart runs the minimizer from q0 on the used points: first, for at
// most 30 iterations, with the jump rows (when the data show jumps) to
// bring the model's folds to them, then without them from there; then it
// leaves out gross outliers (outliers) and refines again. The attempts from different starts are
// compared by their trimmed cost over all used points, the sum of the
// smallest n − ⌊n/10⌋ squared residuals (least trimmed squares, P. J.
// Rousseeuw, "Least median of squares regression", JASA 79 (1984)
// 871–880), so that a start that fits all but a few points near a fold
// is not beaten by one that bends the whole curve to reach them.
func (f *fitter) tryStart(pts []Point, used []int, q0 [nParam]float64, aPk float64, maxIter int) attempt {
	f.setPoints(pts, used)
	n := len(f.amp) + 2
	if f.seen[0].ok || f.seen[1].ok {
		f.useJumps = true
		r := levmar(f, q0, n, min(maxIter, 30))
		f.useJumps = false
		if !math.IsInf(r.cost, 1) {
			q0 = r.q
		}
	}
	r := levmar(f, q0, n, maxIter)
	if math.IsInf(r.cost, 1) {
		return attempt{lts: math.Inf(1)}
	}
	// Leave out the gross outliers and refine; then judge every point again
	// against the refined model (a point may have looked wild only
	// against the first minimum), at most three times.
	var out []int
	for round := 0; round < 3; round++ {
		next := f.outliers(r.q, aPk)
		if slices.Equal(next, out) {
			break
		}
		out = next
		keep := used[:0:0]
		for k, i := range used {
			if !slices.Contains(out, k) {
				keep = append(keep, i)
			}
		}
		f.setPoints(pts, keep)
		r2 := levmar(f, r.q, len(f.amp)+2, maxIter)
		f.setPoints(pts, used)
		if math.IsInf(r2.cost, 1) {
			out = nil
			break
		}
		r2.iters += r.iters
		r = r2
	}
	res := make([]float64, n)
	if !f.residuals(r.q, res) {
		return attempt{lts: math.Inf(1)}
	}
	sq := res[:len(f.amp)]
	for i, x := range sq {
		sq[i] = x * x
	}
	slices.Sort(sq)
	return attempt{res: r, out: out, lts: sum(sq[:len(sq)-len(sq)/10])}
}

func sum(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v
	}
	return s
}

// setPoints loads the points pts[idx] (in that order) and sizes the work
// buffers.
func (f *fitter) setPoints(pts []Point, idx []int) {
	f.freq, f.amp, f.up = f.freq[:0], f.amp[:0], f.up[:0]
	for _, i := range idx {
		f.freq = append(f.freq, pts[i].FreqHz)
		f.amp = append(f.amp, pts[i].Amp)
		f.up = append(f.up, pts[i].Up)
	}
	n := len(idx)
	f.hint = make([]float64, n)
	f.model = make([]float64, n)
	f.modelH = make([]float64, n)
	f.modelL = make([]float64, n)
}

// outliers returns the positions (in the loaded points) of residuals
// larger than 10 robust standard deviations (1.4826·median|r|, the normal
// consistent scale of the median absolute deviation; F. R. Hampel, "The
// influence curve and its role in robust estimation", JASA 69 (1974)
// 383–393) and than 0.1 % of the peak amplitude aPk. None are returned
// when more than a tenth of the points or fewer than 6 would remain.
func (f *fitter) outliers(q [nParam]float64, aPk float64) []int {
	n := len(f.amp)
	r := make([]float64, n+2)
	if !f.residuals(q, r) {
		return nil
	}
	r = r[:n]
	abs := make([]float64, n)
	for i, x := range r {
		abs[i] = math.Abs(x)
	}
	slices.Sort(abs)
	med := abs[n/2]
	if n%2 == 0 {
		med = 0.5 * (abs[n/2-1] + abs[n/2])
	}
	lim := math.Max(10*1.4826*med, 1e-3*aPk)
	var out []int
	for i, x := range r {
		if math.Abs(x) > lim {
			out = append(out, i)
		}
	}
	if len(out) > n/10 || n-len(out) < 6 {
		return nil
	}
	return out
}

func (f *fitter) params(q [nParam]float64) Params {
	return Params{F0Hz: f.fRef * math.Exp(q[0]), Zeta: math.Exp(q[1]), Beta: q[2] * f.bRef,
		Force: f.forceRef * math.Exp(q[3]), Base: f.base}
}

// eval fills out with the stable steady state nearest hint at each point;
// false when a point has no stable physical root or a value is not finite.
func (f *fitter) eval(p Params, hint, out []float64) bool {
	if p.Validate() != nil {
		return false
	}
	m := p.Nondim()
	xs, limit := p.Static(), m.physicalLimit()
	for i, fr := range f.freq {
		c := m.cubic(fr / p.F0Hz)
		ps, cnt := c.roots()
		h := hint[i]
		best, d := math.NaN(), math.Inf(1)
		for k := 0; k < cnt; k++ {
			if ps[k] >= limit {
				continue
			}
			if _, dh := c.eval(ps[k]); dh > 0 {
				if a := math.Sqrt(ps[k]) * xs; math.Abs(a-h) < d {
					best, d = a, math.Abs(a-h)
				}
			}
		}
		if math.IsNaN(best) || math.IsInf(best, 0) {
			return false
		}
		out[i] = best
	}
	return true
}

// residuals implements lmProblem: r[:n] = measured − model for the n
// loaded points, each against the model's stable state nearest to it;
// r[n], r[n+1] = the jump rows (jumpRows).
func (f *fitter) residuals(q [nParam]float64, r []float64) bool {
	p := f.params(q)
	if !f.eval(p, f.amp, f.model) {
		return false
	}
	n := len(f.amp)
	for i := 0; i < n; i++ {
		r[i] = f.amp[i] - f.model[i]
	}
	r[n], r[n+1] = f.jumpRows(p)
	return true
}

// jumpRows returns, for the up-sweep and the down-sweep, how far the
// model's fold lies outside the interval in which that sweep jumped in the
// data, e, in units of the interval's width w, times the size of the jump
// J: J·e²/(w(e + w)), zero inside the interval and about one jump height
// per frequency step far outside it — the cost of the points a misplaced
// fold would put on the wrong branch, made smooth. Without this the nearest-state pairing
// lets the model's bistable band reach past the data's jump at no cost
// (the points past the jump pair with the other branch), and the fit has
// local minima there. Zero where the data show no jump or the model has
// no fold for that sweep.
func (f *fitter) jumpRows(p Params) (up, down float64) {
	if !f.useJumps || (!f.seen[0].ok && !f.seen[1].ok) {
		return 0, 0
	}
	var rows [2]float64
	for _, fd := range p.Folds() {
		d := 1
		if fd.UpSweep {
			d = 0
		}
		j := f.seen[d]
		if !j.ok {
			continue
		}
		w := j.hi - j.lo
		e := 0.0
		switch {
		case fd.FreqHz < j.lo:
			e = j.lo - fd.FreqHz
		case fd.FreqHz > j.hi:
			e = fd.FreqHz - j.hi
		}
		// e²/(w(e + w)): smooth at the edge, ≈ e/w far out.
		rows[d] = j.size * e * e / (w * (e + w))
	}
	return rows[0], rows[1]
}

// jumpSeen is the interval [lo, hi] in which a sweep direction jumped in
// the data, and the size of the jump (amplitude unit).
type jumpSeen struct {
	lo, hi, size float64
	rise         bool // the amplitude rose at the jump
	ok           bool
}

// findJumps sets f.seen from the loaded points: in each direction the
// largest change of amplitude between neighbours in sweep order, by more
// than a factor 1.6, counts as that sweep's jump when the up-sweep's lies
// above the down-sweep's, the two go opposite ways, and at the up-sweep
// points between them the two directions differ by more than a factor 1.3
// (median): the mark of a bistable band, which the steep flanks of a sharp
// linear peak do not have.
func (f *fitter) findJumps() {
	f.seen = [2]jumpSeen{}
	var best [2]float64
	var at [2]int
	for i := 1; i < len(f.amp); i++ {
		if f.up[i] != f.up[i-1] || !(f.amp[i] > 0) || !(f.amp[i-1] > 0) {
			continue
		}
		d := 0
		if !f.up[i] {
			d = 1
		}
		if l := math.Abs(math.Log(f.amp[i] / f.amp[i-1])); l > best[d] {
			best[d], at[d] = l, i
		}
	}
	const minJump = 0.47 // ln 1.6
	if best[0] < minJump || best[1] < minJump {
		return
	}
	var js [2]jumpSeen
	for d, i := range at {
		a, b := f.freq[i-1], f.freq[i]
		js[d] = jumpSeen{lo: math.Min(a, b), hi: math.Max(a, b), size: math.Abs(f.amp[i] - f.amp[i-1]),
			rise: f.amp[i] > f.amp[i-1], ok: a != b}
	}
	if js[0].rise == js[1].rise || js[0].lo < js[1].hi || !js[0].ok || !js[1].ok {
		return
	}
	// Down-sweep amplitudes in ascending frequency, to interpolate.
	var df, da []float64
	for i := len(f.amp) - 1; i >= 0; i-- {
		if !f.up[i] {
			df = append(df, f.freq[i])
			da = append(da, f.amp[i])
		}
	}
	var ratios []float64
	for i, fr := range f.freq {
		if !f.up[i] || fr <= js[1].hi || fr >= js[0].lo {
			continue
		}
		k, ok := slices.BinarySearch(df, fr)
		if !ok && (k == 0 || k == len(df)) {
			continue
		}
		a := da[k%len(da)]
		if !ok {
			t := (fr - df[k-1]) / (df[k] - df[k-1])
			a = da[k-1] + t*(da[k]-da[k-1])
		}
		if a > 0 && f.amp[i] > 0 {
			ratios = append(ratios, math.Abs(math.Log(f.amp[i]/a)))
		}
	}
	if len(ratios) == 0 {
		return
	}
	slices.Sort(ratios)
	if ratios[len(ratios)/2] < math.Log(1.3) {
		return
	}
	f.seen = js
}

// jacobian implements lmProblem by differences with step 1e-6 in each
// internal parameter (the jump rows too): forward differences while
// minimizing, central ones (f.central) for the covariance at the end. The perturbed models follow the branch of the
// model at q (the root nearest the model value), and where one side of the
// difference lands on the other branch (a fold within the step) the
// one-sided difference of the other side is used.
func (f *fitter) jacobian(q [nParam]float64, r []float64, j *mat.Dense) {
	const h = 1e-6
	n := len(f.amp)
	for i := 0; i < n; i++ {
		f.hint[i] = f.amp[i] - r[i]
	}
	p0 := f.params(q)
	u0, d0 := f.jumpRows(p0)
	for c := 0; c < nParam; c++ {
		qh, ql := q, q
		qh[c] += h
		ql[c] -= h
		ph, pl := f.params(qh), f.params(ql)
		okH := f.eval(ph, f.hint, f.modelH)
		okL := false
		if f.central {
			okL = f.eval(pl, f.hint, f.modelL)
		} else {
			// Forward differences while minimizing; the backward side only
			// where the forward one may have crossed a fold.
			for i := 0; okH && i < n; i++ {
				if m := f.hint[i]; math.Abs(f.modelH[i]-m) > 1e-3*math.Abs(m) {
					okL = f.eval(pl, f.hint, f.modelL)
					break
				}
			}
		}
		uh, dh := f.jumpRows(ph)
		if f.central {
			ul, dl := f.jumpRows(pl)
			j.Set(n, c, (uh-ul)/(2*h))
			j.Set(n+1, c, (dh-dl)/(2*h))
		} else {
			j.Set(n, c, (uh-u0)/h)
			j.Set(n+1, c, (dh-d0)/h)
		}
		for i := 0; i < n; i++ {
			m := f.hint[i]
			dh, dl := f.modelH[i]-m, m-f.modelL[i]
			var d float64
			switch {
			case okH && okL:
				d = (dh + dl) / (2 * h)
				if math.Abs(dh) > 10*math.Abs(dl)+1e-3*math.Abs(m) {
					d = dl / h
				} else if math.Abs(dl) > 10*math.Abs(dh)+1e-3*math.Abs(m) {
					d = dh / h
				}
			case okH:
				d = dh / h
			case okL:
				d = dl / h
			}
			// The residual is measured − model.
			j.Set(i, c, -d)
		}
	}
}

// grid returns the starting points of the minimizer. Trial models: natural
// frequencies f0 = fPk/r, r from 0.55 to 1.6 in 28 steps of 4 %, and
// damping ratios ζ0·2^(k/2), k = −6…2 (ζ0 from the half-power width),
// each with β putting the peak on the backbone, β = (ω_pk² − ω0²)/(¾A_pk²),
// and F giving the peak height A_pk = F(ω_pk)/(2ζω0ω_pk). To them are
// added, for each ζ, the natural frequency that the jumps seen in the data
// imply (jumpF0). Returned: the three of lowest cost that are not
// neighbours on the grid (so that the starts lie in different basins of
// the cost, which has local minima where the model's bistable band reaches
// past the data's jump), and the best jump-based one.
func (f *fitter) grid(fPk, aPk, zeta0 float64) [][nParam]float64 {
	type cand struct {
		q        [nParam]float64
		cost     float64
		ir, iz   int
		fromJump bool
	}
	var cs []cand
	r := make([]float64, len(f.amp)+2)
	wPk := 2 * math.Pi * fPk
	try := func(w0, zeta float64, ir, iz int, fromJump bool) {
		beta := (wPk*wPk - w0*w0) / (0.75 * aPk * aPk)
		force := 2 * zeta * w0 * wPk * aPk
		if f.base {
			force *= w0 * w0 / (wPk * wPk)
		}
		q := [nParam]float64{math.Log(w0 / wPk), math.Log(zeta), beta / f.bRef, math.Log(force / f.forceRef)}
		if f.residuals(q, r) {
			cs = append(cs, cand{q, sumSq(r), ir, iz, fromJump})
		}
	}
	const nR = 28
	for ir := 0; ir < nR; ir++ {
		ratio := 0.55 * math.Pow(1.6/0.55, float64(ir)/(nR-1))
		for iz := -6; iz <= 2; iz++ {
			try(wPk/ratio, zeta0*math.Pow(2, float64(iz)/2), ir, iz, false)
		}
	}
	if f.seen[0].ok {
		fu := 0.5 * (f.seen[0].lo + f.seen[0].hi)
		fd := 0.5 * (f.seen[1].lo + f.seen[1].hi)
		soft := f.seen[0].rise
		for iz := -6; iz <= 2; iz++ {
			zeta := zeta0 * math.Pow(2, float64(iz)/2)
			if f0 := jumpF0(fu, fd, zeta, soft); f0 > 0 {
				try(2*math.Pi*f0, zeta, -100, iz, true)
			}
		}
	}
	slices.SortFunc(cs, func(a, b cand) int {
		switch {
		case a.cost < b.cost:
			return -1
		case a.cost > b.cost:
			return 1
		}
		return 0
	})
	var out [][nParam]float64
	var taken []cand
	jumpTaken := false
	for _, c := range cs {
		if c.fromJump {
			if !jumpTaken {
				out = append(out, c.q)
				jumpTaken = true
			}
			continue
		}
		if len(taken) == 3 {
			continue
		}
		near := false
		for _, t := range taken {
			if abs(c.ir-t.ir) < 3 && abs(c.iz-t.iz) < 2 {
				near = true
				break
			}
		}
		if !near {
			taken = append(taken, c)
			out = append(out, c.q)
		}
	}
	return out
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// jumpF0 returns the natural frequency implied by an up-sweep jump at fu
// and a down-sweep jump at fd for damping ratio zeta, from the closed-form
// approximations (ApproxPeakOmega, ApproxUndampedFold): γ is found by
// bisection so that their ratio is fu/fd, then f0 = fu/Ω_pk (hardening) or
// fd/Ω_pk (softening). 0 when no γ fits.
func jumpF0(fu, fd, zeta float64, soft bool) float64 {
	ratio := fu / fd
	pair := func(g float64) (up, down float64) {
		n := Nondim{Zeta: zeta, Gamma: g}
		return n.ApproxJumps()
	}
	gap := func(lg float64) float64 {
		g := math.Exp(lg)
		if soft {
			g = -g
		}
		u, d := pair(g)
		return u/d - ratio
	}
	lo, hi := math.Log(1e-9), math.Log(1e3)
	if soft {
		hi = math.Log(4 * zeta * zeta / 3 * (1 - 1e-9))
	}
	glo, ghi := gap(lo), gap(hi)
	if math.IsNaN(glo) || math.IsNaN(ghi) || (glo < 0) == (ghi < 0) {
		return 0
	}
	for i := 0; i < 100; i++ {
		mid := 0.5 * (lo + hi)
		if gm := gap(mid); (gm < 0) == (glo < 0) {
			lo, glo = mid, gm
		} else {
			hi = mid
		}
	}
	g := math.Exp(0.5 * (lo + hi))
	if soft {
		g = -g
	}
	u, d := pair(g)
	if soft {
		return fd / d // the down-sweep jump is ≈ Ω_pk·f0
	}
	return fu / u
}

// finish fills res from the chosen minimum: parameters, covariance,
// derived quantities and warnings.
func (f *fitter) finish(res *FitResult, best lmResult, pts []Point, used []int, opt FitOptions) {
	n := len(f.amp)
	p := f.params(best.q)
	res.Params = p
	res.Iterations, res.Converged = best.iters, best.converged
	rAll := make([]float64, n+2)
	f.residuals(best.q, rAll)
	r := rAll[:n]
	res.RMS = math.Sqrt(sumSq(r) / float64(n))
	res.Residuals = make([]float64, len(pts))
	for i := range res.Residuals {
		res.Residuals[i] = math.NaN()
	}
	for k, i := range used {
		res.Residuals[i] = r[k]
	}
	for _, i := range res.Outliers {
		m := math.NaN()
		d := math.Inf(1)
		for _, rt := range p.Roots(f.buf[:0], pts[i].FreqHz) {
			if rt.Stable && math.Abs(rt.Amp-pts[i].Amp) < d {
				m, d = rt.Amp, math.Abs(rt.Amp-pts[i].Amp)
			}
		}
		res.Residuals[i] = pts[i].Amp - m
	}

	// Covariance in q, then in the fitted fields, from the amplitudes (the
	// jump rows are off here: they only steered the search).
	j := mat.NewDense(n+2, nParam, nil)
	f.central = true
	f.jacobian(best.q, rAll, j)
	f.central = false
	var jtj mat.SymDense
	jtj.SymOuterK(1, j.T())
	var covQ mat.SymDense
	var chol mat.Cholesky
	nan := math.NaN()
	for a := 0; a < 4; a++ {
		for b := 0; b < 4; b++ {
			res.Cov[a][b], res.Corr[a][b] = nan, nan
		}
	}
	haveCov := false
	if chol.Factorize(&jtj) && chol.InverseTo(&covQ) == nil && chol.Cond() < 1e15 {
		haveCov = true
		s2 := sumSq(r) / float64(n-nParam)
		scale := [nParam]float64{p.F0Hz, p.Zeta, f.bRef, p.Force}
		for a := 0; a < nParam; a++ {
			for b := 0; b < nParam; b++ {
				res.Cov[a][b] = s2 * covQ.At(a, b) * scale[a] * scale[b]
			}
		}
		for a := 0; a < nParam; a++ {
			for b := 0; b < nParam; b++ {
				res.Corr[a][b] = res.Cov[a][b] / math.Sqrt(res.Cov[a][a]*res.Cov[b][b])
			}
		}
		covQ.ScaleSym(s2, &covQ)
	} else {
		res.Warnings = append(res.Warnings, Warning{WarnIllConditioned,
			"the data do not determine all four parameters (singular normal matrix); uncertainties are not available — sweep across the whole resonance"})
	}
	res.StdErr = Params{F0Hz: math.Sqrt(res.Cov[0][0]), Zeta: math.Sqrt(res.Cov[1][1]),
		Beta: math.Sqrt(res.Cov[2][2]), Force: math.Sqrt(res.Cov[3][3]), Base: p.Base}
	res.Q = p.Q()
	res.QStdErr = res.StdErr.Zeta / (2 * p.Zeta * p.Zeta)
	switch {
	case haveCov && math.Abs(p.Beta) <= 2*res.StdErr.Beta:
		res.Stiffness = Linear
	case p.Beta > 0:
		res.Stiffness = Hardening
	case p.Beta < 0:
		res.Stiffness = Softening
	}

	res.Folds = p.Folds()
	res.UpJumpHz, res.DownJumpHz = nan, nan
	res.UpJumpStdHz, res.DownJumpStdHz = nan, nan
	for _, fd := range res.Folds {
		if fd.UpSweep {
			res.UpJumpHz = fd.FreqHz
		} else {
			res.DownJumpHz = fd.FreqHz
		}
	}
	res.BandLoHz, res.BandHiHz, res.Bistable = p.Band()
	if haveCov {
		res.UpJumpStdHz = f.foldStd(best.q, &covQ, true)
		res.DownJumpStdHz = f.foldStd(best.q, &covQ, false)
	}
	f.warn(res, r, pts, used, opt)
}

// foldStd returns the standard uncertainty of the predicted jump of an
// up-sweep (up) or a down-sweep, by the delta method: the gradient of the
// fold frequency in q by central differences, σ² = gᵀ·Cov_q·g.
func (f *fitter) foldStd(q [nParam]float64, covQ *mat.SymDense, up bool) float64 {
	const h = 1e-6
	at := func(q [nParam]float64) float64 {
		for _, fd := range f.params(q).Folds() {
			if fd.UpSweep == up {
				return fd.FreqHz
			}
		}
		return math.NaN()
	}
	if math.IsNaN(at(q)) {
		return math.NaN()
	}
	var g [nParam]float64
	for c := range g {
		qh, ql := q, q
		qh[c] += h
		ql[c] -= h
		g[c] = (at(qh) - at(ql)) / (2 * h)
	}
	v := 0.0
	for a := 0; a < nParam; a++ {
		for b := 0; b < nParam; b++ {
			v += g[a] * covQ.At(a, b) * g[b]
		}
	}
	return math.Sqrt(v)
}

// warn appends the warnings about the fit.
func (f *fitter) warn(res *FitResult, r []float64, pts []Point, used []int, opt FitOptions) {
	p := res.Params
	add := func(c WarnCode, format string, a ...any) {
		res.Warnings = append(res.Warnings, Warning{c, fmt.Sprintf(format, a...)})
	}
	if !res.Converged {
		add(WarnNotConverged, "the minimizer stopped after %d iterations without meeting its convergence test; the parameters may not be at the best fit", res.Iterations)
	}
	if len(res.Outliers) > 0 {
		var fs []string
		for _, i := range res.Outliers {
			fs = append(fs, fmt.Sprintf("%.6g Hz", pts[i].FreqHz))
		}
		add(WarnOutliers, "%d settled point(s) far from every branch of the model were left out (%s); points next to a jump are expected among them, since the true folds lie slightly off the first-order ones", len(res.Outliers), strings.Join(fs, ", "))
	}
	ups := 0
	for _, i := range used {
		if pts[i].Up {
			ups++
		}
	}
	if ups == 0 || ups == len(used) {
		dir := "up"
		if ups == 0 {
			dir = "down"
		}
		add(WarnOneDirection, "all %d fitted points come from the %s-sweep; the other branch of any bistable band is not seen, so the uncertainties are wider and the jump the other sweep would make is a prediction only", len(used), dir)
	}
	if runs, mean, _, z := RunsTest(r); z < -3 {
		add(WarnResidualRuns, "the residuals change sign only %d times in sweep order where about %.0f are expected (runs test z = %.1f): the model misses structure in the data (harmonics, another mode, drift or unsettled points)", runs-1, mean-1, z)
	}
	check := func(name string, iv Interval, pred, std float64) {
		if !iv.given() {
			return
		}
		lo, hi := math.Min(iv.LoHz, iv.HiHz), math.Max(iv.LoHz, iv.HiHz)
		if math.IsNaN(pred) {
			add(WarnJumpMismatch, "the %s-sweep jumped between %.6g and %.6g Hz but the fitted model has no jump for that sweep", name, lo, hi)
			return
		}
		tol := hi - lo
		if !math.IsNaN(std) {
			tol = math.Max(tol, 3*std)
		}
		if pred < lo-tol || pred > hi+tol {
			add(WarnJumpMismatch, "the fitted model puts the %s-sweep jump at %.6g Hz, but it was seen between %.6g and %.6g Hz", name, pred, lo, hi)
		}
	}
	check("up", opt.UpJump, res.UpJumpHz, res.UpJumpStdHz)
	check("down", opt.DownJump, res.DownJumpHz, res.DownJumpStdHz)

	fsh, a3 := p.SuperharmonicPeak()
	if !math.IsNaN(fsh) && a3 >= res.RMS {
		lo, hi := fsh*(1-3*p.Zeta), fsh*(1+3*p.Zeta)
		for _, fr := range f.freq {
			if fr >= lo && fr <= hi {
				add(WarnSuperharmonic, "points near %.6g Hz (f0/3) sit on the superharmonic resonance, where the model puts a third harmonic of amplitude %.3g; the fit uses the fundamental only — look at the harmonic there", fsh, a3)
				break
			}
		}
	}
	if fp, ap, ok := p.Peak(); ok {
		if h := p.ThirdHarmonic(fp, ap); h > 0.05 {
			add(WarnLargeHarmonic, "the model's third harmonic at the peak is %.1f%% of the fundamental; first-order harmonic balance is then only approximate", 100*h)
		}
	}
}

// String summarizes the fit on a few lines.
func (r FitResult) String() string {
	var b strings.Builder
	p, s := r.Params, r.StdErr
	fmt.Fprintf(&b, "f0 = %.6g ± %.2g Hz, zeta = %.4g ± %.2g (Q = %.4g), beta = %.4g ± %.2g, F = %.4g ± %.2g; %s\n",
		p.F0Hz, s.F0Hz, p.Zeta, s.Zeta, r.Q, p.Beta, s.Beta, p.Force, s.Force, r.Stiffness)
	fmt.Fprintf(&b, "points used %d, excluded %d, residual rms %.3g", r.Used, r.Excluded, r.RMS)
	if r.Bistable {
		fmt.Fprintf(&b, "; bistable %.6g–%.6g Hz", r.BandLoHz, r.BandHiHz)
	}
	for _, w := range r.Warnings {
		fmt.Fprintf(&b, "\nwarning (%s): %s", w.Code, w.Text)
	}
	return b.String()
}

// SweepOrder sorts the indices idx of pts into sweep order: the up-sweep
// ascending in frequency, then the down-sweep descending (stable, so equal
// frequencies keep their order).
func SweepOrder(pts []Point, idx []int) {
	slices.SortStableFunc(idx, func(a, b int) int {
		pa, pb := pts[a], pts[b]
		if pa.Up != pb.Up {
			if pa.Up {
				return -1
			}
			return 1
		}
		c := 0
		switch {
		case pa.FreqHz < pb.FreqHz:
			c = -1
		case pa.FreqHz > pb.FreqHz:
			c = 1
		}
		if !pa.Up {
			c = -c
		}
		return c
	})
}
