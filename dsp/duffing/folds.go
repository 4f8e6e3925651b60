package duffing

import (
	"math"
	"slices"
)

// Jump says which way the amplitude goes when a sweep runs off the end of
// its branch at a fold.
type Jump int

const (
	// JumpDown: the large-amplitude branch ends; the response falls.
	JumpDown Jump = iota
	// JumpUp: the small-amplitude branch ends; the response rises.
	JumpUp
)

// String returns "jump down" or "jump up".
func (j Jump) String() string {
	switch j {
	case JumpDown:
		return "jump down"
	case JumpUp:
		return "jump up"
	}
	return "jump(?)"
}

// Fold is a turning point of the response curve, where a stable and the
// unstable steady state merge and a sweep that reaches it jumps.
type Fold struct {
	FreqHz  float64 // drive frequency of the fold, Hz (Ω in the scaled form)
	Amp     float64 // amplitude of the merging pair (Y in the scaled form)
	LandAmp float64 // amplitude of the stable state the response jumps to
	UpSweep bool    // true: an up-sweep reaches this fold; false: a down-sweep does
	Jump    Jump    // which way the response jumps
}

// Folds returns the folds of the physical response curve in ascending
// frequency: none (no hysteresis), two (the ends of the bistable band), or
// one (a base-excited hardening curve that does not close).
//
// Hardening: an up-sweep jumps down at the upper fold and a down-sweep
// jumps up at the lower one; softening: an up-sweep jumps up at the upper
// fold and a down-sweep jumps down at the lower one.
func (p Params) Folds() []Fold {
	if p.Validate() != nil {
		return nil
	}
	fs := p.Nondim().Folds()
	xs := p.Static()
	for i := range fs {
		fs[i].FreqHz *= p.F0Hz
		fs[i].Amp *= xs
		fs[i].LandAmp *= xs
	}
	return fs
}

// Band returns the bistable band [loHz, hiHz], where two stable steady
// states coexist; ok is false when the curve has no pair of folds.
func (p Params) Band() (loHz, hiHz float64, ok bool) {
	fs := p.Folds()
	if len(fs) != 2 {
		return 0, 0, false
	}
	return fs[0].FreqHz, fs[1].FreqHz, true
}

// ApproxJumps returns closed-form approximations of the frequency at which
// an up-sweep and a down-sweep jump (Hz), from Nondim.ApproxJumps; NaN where
// the approximation does not apply.
func (p Params) ApproxJumps() (upSweepHz, downSweepHz float64) {
	u, d := p.Nondim().ApproxJumps()
	return u * p.F0Hz, d * p.F0Hz
}

// Folds returns the folds of the physical response curve in ascending Ω
// (Fold.FreqHz holds Ω, Fold.Amp and Fold.LandAmp hold Y).
//
// Method (derived here, exact for first-order harmonic balance): a fold is
// a double root of the cubic h(p) = p((k + ¾γp)² + 4ζ²Ω²) − Ω^(2m), so
// h = 0 and h' = 0. With w = k + ¾γp (k = 1 − Ω²), h' = 0 gives
// p = −N(w)/((3/2)γ(w + 2ζ²)) with N(w) = w² − 4ζ²w + 4ζ², and
// Ω² = w(1 − (3/2)w)/(w + 2ζ²); h = 0 then leaves one polynomial in w,
//
//	force: w·N(w)² + (3γ/2)(w + 2ζ²)² = 0                 (degree 5),
//	base:  N(w)² + (3γ/2)·w·(1 − (3/2)w)² = 0             (degree 4),
//
// whose real roots are isolated between the real roots of its derivative
// (recursively) and polished by safeguarded Newton. Roots with p ≤ 0,
// Ω² ≤ 0 or beyond the softening limit (physicalLimit) are dropped. The
// state the response lands on is the third root of the cubic,
// p₃ = −8k/(3γ) − 2p (sum of the roots).
func (n Nondim) Folds() []Fold {
	if !(n.Zeta > 0) || n.Gamma == 0 || math.IsNaN(n.Gamma) || math.IsInf(n.Gamma, 0) {
		return nil
	}
	z2 := n.Zeta * n.Zeta
	nw := []float64{4 * z2, -4 * z2, 1} // N(w), ascending powers
	g := 1.5 * n.Gamma
	var poly []float64
	if n.Base {
		// N² + g·w·(1 − 1.5w)² = N² + g·(w − 3w² + 2.25w³)
		poly = polyAdd(polyMul(nw, nw), []float64{0, g, -3 * g, 2.25 * g})
	} else {
		// w·N² + g·(w + 2ζ²)²
		poly = polyAdd(polyMul([]float64{0, 1}, polyMul(nw, nw)),
			[]float64{g * 4 * z2 * z2, g * 4 * z2, g})
	}
	limit := n.physicalLimit()
	var out []Fold
	for _, w := range polyRealRoots(poly) {
		d := w + 2*z2
		if d == 0 {
			continue
		}
		nn := w*w - 4*z2*w + 4*z2
		pp := -nn / (g * d)
		s := w * (1 - 1.5*w) / d
		if !(pp > 0) || !(s > 0) || pp >= limit {
			continue
		}
		k := 1 - s
		p3 := -8*k/(3*n.Gamma) - 2*pp
		land := 0.0
		if p3 > 0 {
			land = math.Sqrt(p3)
		}
		f := Fold{FreqHz: math.Sqrt(s), Amp: math.Sqrt(pp), LandAmp: land, Jump: JumpUp}
		if p3 < pp {
			f.Jump = JumpDown
		}
		out = append(out, f)
	}
	slices.SortFunc(out, func(a, b Fold) int {
		switch {
		case a.FreqHz < b.FreqHz:
			return -1
		case a.FreqHz > b.FreqHz:
			return 1
		}
		return 0
	})
	// Drop duplicates from a root found twice.
	out = slices.CompactFunc(out, func(a, b Fold) bool {
		return math.Abs(a.FreqHz-b.FreqHz) <= 1e-12*a.FreqHz
	})
	switch len(out) {
	case 2:
		// The three-root region lies between the folds: an up-sweep
		// reaches the upper one.
		out[1].UpSweep = true
	case 1:
		// Open base-excited curve: three roots above the fold (hardening),
		// reached by a down-sweep; below it for softening.
		out[0].UpSweep = n.Gamma < 0
	}
	return out
}

// ApproxJumps returns closed-form approximations of the scaled frequency
// at which an up-sweep and a down-sweep jump, for the force form, in the
// manner of the closed forms of M. J. Brennan, I. Kovacic, A. Carrella,
// T. P. Waters, "On the jump-up and jump-down frequencies of the Duffing
// oscillator", J. Sound Vib. 318 (2008) 1250–1261 (their printed forms are
// not reproduced here; these are derived here): the large-amplitude branch
// ends near the peak, Ω_pk (ApproxPeakOmega), and the small-amplitude
// branch ends near the undamped fold Ω_u (ApproxUndampedFold). Hardening:
// up-sweep Ω_pk, down-sweep Ω_u; softening the other way round. Both are NaN
// for the base form and where the formulas have no real value.
func (n Nondim) ApproxJumps() (upSweep, downSweep float64) {
	if n.Base || n.Gamma == 0 {
		return math.NaN(), math.NaN()
	}
	pk := ApproxPeakOmega(n.Zeta, n.Gamma)
	u, _ := ApproxUndampedFold(n.Gamma)
	if n.Gamma > 0 {
		return pk, u
	}
	return u, pk
}

// ApproxPeakOmega returns the scaled frequency where the backbone
// Ω² = 1 + ¾γY² meets the linear peak height Y = 1/(2ζΩ):
//
//	Ω_pk² = [1 + √(1 + 3γ/(4ζ²))]/2,
//
// an approximation of the jump of the large-amplitude branch (derived
// here); NaN when 1 + 3γ/(4ζ²) < 0 (softening beyond escape).
func ApproxPeakOmega(zeta, gamma float64) float64 {
	r := 1 + 3*gamma/(4*zeta*zeta)
	if r < 0 {
		return math.NaN()
	}
	return math.Sqrt((1 + math.Sqrt(r)) / 2)
}

// ApproxUndampedFold returns the fold of the small-amplitude branch of the
// undamped curve, an approximation of its jump when ζ is small (derived
// here: with ζ = 0, h' = 0 off the backbone needs k = −(9/4)γp, then h = 0
// gives p³ = 4/(9γ²)):
//
//	Ω_u² = 1 + (3/2)·∛(3γ/2),   Y_u = ∛(2/(3|γ|)).
//
// NaN when Ω_u² ≤ 0.
func ApproxUndampedFold(gamma float64) (omega, y float64) {
	s := 1 + 1.5*math.Cbrt(1.5*gamma)
	if !(s > 0) || gamma == 0 {
		return math.NaN(), math.NaN()
	}
	return math.Sqrt(s), math.Cbrt(2 / (3 * math.Abs(gamma)))
}

// HysteresisOnset returns the smallest |γ| at which the force-form curve
// with damping ratio zeta has a bistable band, and the scaled frequency Ω_c
// where the band is born (the cusp, where h = h′ = h″ = 0):
//
//	hardening: Ω_c = √3ζ + √(1 + 3ζ²),  γ_c = 256ζ³Ω_c³/(9√3)  (≈ 16.42ζ³),
//	softening: Ω_c = −√3ζ + √(1 + 3ζ²), γ_c = −256ζ³Ω_c³/(9√3).
//
// Exact for first-order harmonic balance (derived here: h″ = 0 gives
// w = k/3, h′ = 0 then c² = k²/3, i.e. 1 − Ω² = ∓2√3ζΩ, and h = 0 gives
// γ = −32k³/81).
func HysteresisOnset(zeta float64, softening bool) (gamma, omega float64) {
	r := math.Sqrt(1 + 3*zeta*zeta)
	sign := 1.0
	if softening {
		sign = -1
	}
	omega = sign*math.Sqrt(3)*zeta + r
	gamma = sign * 256 * zeta * zeta * zeta * omega * omega * omega / (9 * math.Sqrt(3))
	return gamma, omega
}

// polyMul returns the product of polynomials in ascending powers.
func polyMul(a, b []float64) []float64 {
	out := make([]float64, len(a)+len(b)-1)
	for i, x := range a {
		for j, y := range b {
			out[i+j] += x * y
		}
	}
	return out
}

// polyAdd returns the sum of polynomials in ascending powers.
func polyAdd(a, b []float64) []float64 {
	if len(a) < len(b) {
		a, b = b, a
	}
	out := slices.Clone(a)
	for i, y := range b {
		out[i] += y
	}
	return out
}

// polyEval returns c(x) and c'(x) by Horner's rule.
func polyEval(c []float64, x float64) (v, d float64) {
	for i := len(c) - 1; i >= 0; i-- {
		d = d*x + v
		v = v*x + c[i]
	}
	return v, d
}

// polyRealRoots returns the real roots of c (ascending powers), in
// ascending order. The real roots of c' split the line into intervals on
// which c is monotone (Rolle's theorem); a root lies in an interval exactly
// when c changes sign across it. The outer intervals are closed by the
// Cauchy bound 1 + max|c_i/c_n|. A root of even multiplicity where c only
// touches zero is found only when it coincides with a root of c'.
func polyRealRoots(c []float64) []float64 {
	for len(c) > 0 && c[len(c)-1] == 0 {
		c = c[:len(c)-1]
	}
	deg := len(c) - 1
	if deg < 1 {
		return nil
	}
	if deg == 1 {
		return []float64{-c[0] / c[1]}
	}
	bound := 0.0
	for i := 0; i < deg; i++ {
		bound = math.Max(bound, math.Abs(c[i]/c[deg]))
	}
	bound++
	der := make([]float64, deg)
	for i := 1; i <= deg; i++ {
		der[i-1] = float64(i) * c[i]
	}
	edges := []float64{-bound}
	for _, r := range polyRealRoots(der) {
		if r > -bound && r < bound {
			edges = append(edges, r)
		}
	}
	edges = append(edges, bound)
	var out []float64
	for i := 0; i+1 < len(edges); i++ {
		a, b := edges[i], edges[i+1]
		fa, _ := polyEval(c, a)
		fb, _ := polyEval(c, b)
		switch {
		case fa == 0:
			if len(out) == 0 || out[len(out)-1] != a {
				out = append(out, a)
			}
		case fb == 0:
			// taken as the left end of the next interval, or below
			if i+2 == len(edges) {
				out = append(out, b)
			}
		case (fa < 0) != (fb < 0):
			out = append(out, polySolve(c, a, b, fa))
		}
	}
	return out
}

// polySolve finds the root of c in [a, b], with c(a) = fa of the other sign
// from c(b), by Newton kept inside the bracket, bisecting when a step would
// leave it or shrink it too slowly (as hbCubic.solve).
func polySolve(c []float64, a, b, fa float64) float64 {
	xl, xh := a, b
	if fa > 0 {
		xl, xh = b, a
	}
	x := 0.5 * (a + b)
	dxOld := math.Abs(b - a)
	dx := dxOld
	f, df := polyEval(c, x)
	for i := 0; i < 300 && f != 0; i++ {
		if ((x-xh)*df-f)*((x-xl)*df-f) > 0 || math.Abs(2*f) > math.Abs(dxOld*df) {
			dxOld = dx
			dx = 0.5 * (xh - xl)
			x = xl + dx
		} else {
			dxOld = dx
			dx = f / df
			x -= dx
		}
		if math.Abs(dx) <= 1e-16*math.Abs(x) || dx == 0 {
			break
		}
		f, df = polyEval(c, x)
		if f < 0 {
			xl = x
		} else {
			xh = x
		}
	}
	return x
}
