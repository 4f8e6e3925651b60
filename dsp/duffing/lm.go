package duffing

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// nParam is the number of fitted parameters: f0, ζ, β, F.
const nParam = 4

// lmProblem is a nonlinear least-squares problem for levmar: residuals
// r(q) and their Jacobian at q, both into caller storage.
type lmProblem interface {
	// residuals fills r and returns false when the model is not defined
	// at q.
	residuals(q [nParam]float64, r []float64) bool
	// jacobian fills the len(r)×nParam matrix j at q, where r holds the
	// residuals at q.
	jacobian(q [nParam]float64, r []float64, j *mat.Dense)
}

// lmResult is the outcome of levmar.
type lmResult struct {
	q         [nParam]float64
	cost      float64 // Σr² at q
	iters     int
	converged bool
}

// levmar minimizes Σr(q)² from q0 by the Levenberg–Marquardt method
// (K. Levenberg, Q. Appl. Math. 2 (1944) 164–168; D. W. Marquardt, "An
// algorithm for least-squares estimation of nonlinear parameters", J. SIAM
// 11(2) (1963) 431–441): each step solves
//
//	(JᵀJ + λ·diag(JᵀJ))·δ = −Jᵀr
//
// (Marquardt's scaling by the diagonal, which makes the step independent
// of the units of the parameters, as in J. J. Moré, "The
// Levenberg–Marquardt algorithm: implementation and theory", in
// Numerical Analysis, Springer LNM 630 (1978) 105–116). λ follows the gain ratio
// ρ = actual/predicted decrease: on success λ ← λ·max(1/3, 1 − (2ρ − 1)³),
// on failure λ ← λ·ν, ν ← 2ν (the update of H. B. Nielsen, "Damping
// parameter in Marquardt's method", IMM-REP-1999-05, DTU; from memory).
// It stops when the gradient or the step is negligible, or after maxIter
// iterations.
func levmar(pr lmProblem, q0 [nParam]float64, n, maxIter int) lmResult {
	r := make([]float64, n)
	rTry := make([]float64, n)
	j := mat.NewDense(n, nParam, nil)
	var jtj mat.SymDense
	jtj.ReuseAsSym(nParam)
	var a mat.SymDense
	a.ReuseAsSym(nParam)
	var chol mat.Cholesky
	g := mat.NewVecDense(nParam, nil)
	delta := mat.NewVecDense(nParam, nil)

	q := q0
	if !pr.residuals(q, r) {
		return lmResult{q: q, cost: math.Inf(1)}
	}
	cost := sumSq(r)
	lambda, nu := -1.0, 2.0
	res := lmResult{q: q, cost: cost}
	fresh := true
	for it := 0; it < maxIter; it++ {
		res.iters = it + 1
		if fresh {
			pr.jacobian(q, r, j)
			jtj.SymOuterK(1, j.T())
			g.MulVec(j.T(), mat.NewVecDense(n, r))
			fresh = false
		}
		gmax := 0.0
		dmax := 0.0
		for i := 0; i < nParam; i++ {
			gmax = math.Max(gmax, math.Abs(g.AtVec(i)))
			dmax = math.Max(dmax, jtj.At(i, i))
		}
		if gmax <= 1e-13*math.Max(cost, 1e-300) || dmax == 0 {
			res.converged = true
			break
		}
		if lambda < 0 {
			lambda = 1e-3
		}
		accepted := false
		for !accepted {
			a.CopySym(&jtj)
			for i := 0; i < nParam; i++ {
				d := math.Max(jtj.At(i, i), 1e-12*dmax)
				a.SetSym(i, i, jtj.At(i, i)+lambda*d)
			}
			if !chol.Factorize(&a) {
				lambda *= nu
				nu *= 2
				if lambda > 1e16 {
					break
				}
				continue
			}
			g.ScaleVec(-1, g)
			err := chol.SolveVecTo(delta, g)
			g.ScaleVec(-1, g)
			if err != nil {
				lambda *= nu
				nu *= 2
				if lambda > 1e16 {
					break
				}
				continue
			}
			var qt [nParam]float64
			small := true
			for i := range qt {
				qt[i] = q[i] + delta.AtVec(i)
				if math.Abs(delta.AtVec(i)) > 1e-12*(math.Abs(q[i])+1e-12) {
					small = false
				}
			}
			if small {
				res.converged = true
				res.q, res.cost = q, cost
				return res
			}
			// predicted decrease δᵀJᵀJδ + 2λδᵀDδ
			pred := 0.0
			for i := 0; i < nParam; i++ {
				d := math.Max(jtj.At(i, i), 1e-12*dmax)
				pred += 2 * lambda * d * delta.AtVec(i) * delta.AtVec(i)
				for k := 0; k < nParam; k++ {
					pred += delta.AtVec(i) * jtj.At(i, k) * delta.AtVec(k)
				}
			}
			tryCost := math.Inf(1)
			if pr.residuals(qt, rTry) {
				tryCost = sumSq(rTry)
			}
			if rho := (cost - tryCost) / pred; tryCost < cost && pred > 0 {
				rel := (cost - tryCost) / cost
				q, cost = qt, tryCost
				copy(r, rTry)
				lambda *= math.Max(1.0/3, 1-math.Pow(2*rho-1, 3))
				nu = 2
				accepted = true
				fresh = true
				res.q, res.cost = q, cost
				if rel < 1e-14 {
					res.converged = true
					return res
				}
			} else {
				lambda *= nu
				nu *= 2
				if lambda > 1e16 {
					break
				}
			}
		}
		if !accepted {
			// No step decreases the cost: at a minimum to the precision
			// of the residuals.
			res.converged = true
			break
		}
	}
	return res
}

func sumSq(r []float64) float64 {
	s := 0.0
	for _, x := range r {
		s += x * x
	}
	return s
}
