package lockin

import "math"

// The weighted least-squares system of a block. With the basis
// b = (1, cos θ_1, −sin θ_1, cos θ_2, …), θ_h = 2πk_hφ/L, and the sums
// C_m = Σw·cos(2πmφ/L), S_m = Σw·sin(2πmφ/L) (C_m = Re E_m, S_m = −Im E_m),
// the Gram matrix G = Σw·b·bᵀ has the entries
//
//	⟨1,1⟩ = Σw,  ⟨1,cos_h⟩ = C_{k_h},  ⟨1,−sin_h⟩ = −S_{k_h},
//	⟨cos_h,cos_g⟩   = ½(C_{k_h−k_g} + C_{k_h+k_g}),
//	⟨−sin_h,−sin_g⟩ = ½(C_{k_h−k_g} − C_{k_h+k_g}),
//	⟨cos_h,−sin_g⟩  = −½(S_{k_g+k_h} + S_{k_g−k_h}),
//
// (product-to-sum identities; C_{−m} = C_m, S_{−m} = −S_m, C_0 = Σw), and
// the right-hand side Σw·x·b is (Σw·x, Re Y_1, Im Y_1, …). The solution is
// (c, Re Z_1, Im Z_1, …). G is factored by Cholesky (G = LLᵀ) once per
// block and shared by the channels.

// gramTerm sets one lower-triangle entry of G: g[dst] = ca·es[ia] + cb·es[ib].
type gramTerm struct {
	dst, ia, ib int
	ca, cb      float64
}

// gramTerms lists the entries of G as combinations of the sums es, from the
// formulas above.
func (l *LockIn) gramTerms() []gramTerm {
	nb := l.nb
	// cs returns the es index and sign of C_m (sel 0) or S_m (sel 1).
	cs := func(m, sel int) (int, float64) {
		sign := 1.0
		if m < 0 {
			m = -m
			if sel == 1 {
				sign = -1
			}
		}
		if m == 0 {
			if sel == 1 {
				return 0, 0
			}
			return 0, 1
		}
		if sel == 1 {
			return 2 + 2*l.mpos[m], -sign // S_m = −Im E_m
		}
		return 1 + 2*l.mpos[m], 1
	}
	term := func(dst int, m1, s1 int, c1 float64, m2, s2 int, c2 float64) gramTerm {
		ia, sa := cs(m1, s1)
		ib, sb := cs(m2, s2)
		return gramTerm{dst, ia, ib, c1 * sa, c2 * sb}
	}
	ts := []gramTerm{{0, 0, 0, 1, 0}}
	for h, a := range l.k {
		i := 1 + 2*h
		ts = append(ts, term(i*nb, a, 0, 1, 0, 1, 0), term((i+1)*nb, a, 1, -1, 0, 1, 0))
		for j, b := range l.k[:h+1] {
			jj := 1 + 2*j
			ts = append(ts,
				term(i*nb+jj, a-b, 0, 0.5, a+b, 0, 0.5),        // ⟨cos_h, cos_g⟩
				term((i+1)*nb+jj+1, a-b, 0, 0.5, a+b, 0, -0.5), // ⟨−sin_h, −sin_g⟩
				term((i+1)*nb+jj, a+b, 1, -0.5, a-b, 1, -0.5))  // ⟨−sin_h, cos_g⟩
			if j < h {
				ts = append(ts, term(i*nb+jj+1, b+a, 1, -0.5, b-a, 1, -0.5)) // ⟨cos_h, −sin_g⟩
			}
		}
	}
	return ts
}

// factor builds G and factors it in place (lower triangle). It reports
// false when G is not numerically positive definite: a pivot fell below
// 1e−10 of its diagonal entry, i.e. one basis function is, over this block's
// samples, a combination of the others to within 1e−5 of its norm.
func (l *LockIn) factor() bool {
	nb := l.nb
	g := l.gram
	es := l.es
	for _, t := range l.terms {
		g[t.dst] = t.ca*es[t.ia] + t.cb*es[t.ib]
	}
	for i := 0; i < nb; i++ {
		l.diag[i] = g[i*nb+i]
	}
	for j := 0; j < nb; j++ {
		s := g[j*nb+j]
		for k := 0; k < j; k++ {
			s -= g[j*nb+k] * g[j*nb+k]
		}
		if !(s > 1e-10*l.diag[j]) || math.IsInf(s, 0) {
			return false
		}
		s = math.Sqrt(s)
		g[j*nb+j] = s
		for i := j + 1; i < nb; i++ {
			v := g[i*nb+j]
			for k := 0; k < j; k++ {
				v -= g[i*nb+k] * g[j*nb+k]
			}
			g[i*nb+j] = v / s
		}
	}
	return true
}

// solve overwrites v with G⁻¹v using the factor from factor.
func (l *LockIn) solve(v []float64) {
	nb := l.nb
	g := l.gram
	for i := 0; i < nb; i++ {
		s := v[i]
		for k := 0; k < i; k++ {
			s -= g[i*nb+k] * v[k]
		}
		v[i] = s / g[i*nb+i]
	}
	for i := nb - 1; i >= 0; i-- {
		s := v[i]
		for k := i + 1; k < nb; k++ {
			s -= g[k*nb+i] * v[k]
		}
		v[i] = s / g[i*nb+i]
	}
}
