package lockin

// Goertzel recurrences for the Sync fast path.
//
// Over a run of frames whose drive phase is linear, φ_i = φ_0 + i·d, the
// demodulation sum of harmonic k is a single-frequency DFT term:
//
//	Σ_i x_i·e^{−j2πkφ_i/L} = e^{−j2πkφ_{c−1}/L}·(s_{c−1} − e^{−jω}·s_{c−2}),
//	s_i = x_i + 2cos ω·s_{i−1} − s_{i−2},  s_{−1} = s_{−2} = 0,  ω = 2πkd/L
//
// (G. Goertzel, "An algorithm for the evaluation of finite trigonometric
// series", Amer. Math. Monthly 65(1), 1958). It costs one multiplication and
// two additions per sample and harmonic against a complex rotor and a
// complex multiply-add for direct demodulation. The recurrence is run four
// samples per step: with c = 2cos ω, U_0 = 1, U_1 = c, U_{k+1} = c·U_k − U_{k−1},
//
//	s_{i+k} = U_{k+1}·s_{i−1} − U_k·s_{i−2} + Σ_{m≤k} U_{k−m}·x_{i+m},
//
// of which only s_{i+2} and s_{i+3} are formed; that cuts the loop-carried
// latency (one multiplication and one addition per four samples), which
// otherwise bounds the speed. Its rounding error grows with the
// run length and as ω → 0; runs are cut at maxGoertzel samples, where the
// error measured against a compensated direct sum stays below 1e−11 of
// the sum's scale down to ω = 1e−5 rad (see TestGoertzelAccuracy).
const maxGoertzel = 1024

// goertzel2 advances two recurrences over cnt samples x[0], x[stride], …;
// k holds c, U_2, U_3, U_4 of the first then of the second (see
// lookAhead), st their s_{i−1}, s_{i−2}. The coefficients are read through
// k rather than held in registers: the loop needs every register for its
// states and samples, and loads are cheaper than spills. It returns Σx over
// the samples (the offset's sum; one more addition per four samples).
func goertzel2(x []float64, stride, cnt int, k *[8]float64, st *[4]float64) (sum float64) {
	if cnt <= 0 {
		return 0
	}
	x = x[:(cnt-1)*stride+1]
	a1, a2, b1, b2 := st[0], st[1], st[2], st[3]
	i := 0
	for ; i+3*stride < len(x); i += 4 * stride {
		v0, v1, v2, v3 := x[i], x[i+stride], x[i+2*stride], x[i+3*stride]
		sum += (v0 + v1) + (v2 + v3)
		da, db := v0-a2, v0-b2
		sa2 := (v2 + k[0]*v1 + k[1]*da) + k[2]*a1
		sa3 := (v3 + k[0]*v2 + k[1]*v1 + k[2]*da) + k[3]*a1
		sb2 := (v2 + k[4]*v1 + k[5]*db) + k[6]*b1
		sb3 := (v3 + k[4]*v2 + k[5]*v1 + k[6]*db) + k[7]*b1
		a1, a2 = sa3, sa2
		b1, b2 = sb3, sb2
	}
	for ; i < len(x); i += stride {
		v := x[i]
		sum += v
		a1, a2 = (v-a2)+k[0]*a1, a1
		b1, b2 = (v-b2)+k[4]*b1, b1
	}
	st[0], st[1], st[2], st[3] = a1, a2, b1, b2
	return sum
}

// goertzel3 is goertzel2 for three recurrences (k[0:12], st[0:6]).
func goertzel3(x []float64, stride, cnt int, k *[12]float64, st *[6]float64) {
	if cnt <= 0 {
		return
	}
	x = x[:(cnt-1)*stride+1]
	a1, a2, b1, b2, c1, c2 := st[0], st[1], st[2], st[3], st[4], st[5]
	i := 0
	for ; i+3*stride < len(x); i += 4 * stride {
		v0, v1, v2, v3 := x[i], x[i+stride], x[i+2*stride], x[i+3*stride]
		da, db, dc := v0-a2, v0-b2, v0-c2
		sa2 := (v2 + k[0]*v1 + k[1]*da) + k[2]*a1
		sa3 := (v3 + k[0]*v2 + k[1]*v1 + k[2]*da) + k[3]*a1
		sb2 := (v2 + k[4]*v1 + k[5]*db) + k[6]*b1
		sb3 := (v3 + k[4]*v2 + k[5]*v1 + k[6]*db) + k[7]*b1
		sc2 := (v2 + k[8]*v1 + k[9]*dc) + k[10]*c1
		sc3 := (v3 + k[8]*v2 + k[9]*v1 + k[10]*dc) + k[11]*c1
		a1, a2 = sa3, sa2
		b1, b2 = sb3, sb2
		c1, c2 = sc3, sc2
	}
	for ; i < len(x); i += stride {
		v := x[i]
		a1, a2 = (v-a2)+k[0]*a1, a1
		b1, b2 = (v-b2)+k[4]*b1, b1
		c1, c2 = (v-c2)+k[8]*c1, c1
	}
	st[0], st[1], st[2], st[3], st[4], st[5] = a1, a2, b1, b2, c1, c2
}

// goertzel1 is goertzel2 for one recurrence (k[0:4], st[0:2]); it does
// the same arithmetic as goertzel2's first.
func goertzel1(x []float64, stride, cnt int, k *[8]float64, st *[4]float64) (sum float64) {
	if cnt <= 0 {
		return 0
	}
	x = x[:(cnt-1)*stride+1]
	a1, a2 := st[0], st[1]
	i := 0
	for ; i+3*stride < len(x); i += 4 * stride {
		v0, v1, v2, v3 := x[i], x[i+stride], x[i+2*stride], x[i+3*stride]
		sum += (v0 + v1) + (v2 + v3)
		da := v0 - a2
		sa2 := (v2 + k[0]*v1 + k[1]*da) + k[2]*a1
		sa3 := (v3 + k[0]*v2 + k[1]*v1 + k[2]*da) + k[3]*a1
		a1, a2 = sa3, sa2
	}
	for ; i < len(x); i += stride {
		v := x[i]
		sum += v
		a1, a2 = (v-a2)+k[0]*a1, a1
	}
	st[0], st[1] = a1, a2
	return sum
}

// lookAhead fills k[0:4] with c, U_2, U_3, U_4 of U_0 = 1, U_1 = c,
// U_{k+1} = c·U_k − U_{k−1} (Chebyshev polynomials of the second kind at
// c/2; near ω = 0 they approach 2, 3, 4, 5, so nothing cancels).
func lookAhead(k []float64, c float64) {
	u2 := c*c - 1
	u3 := c*u2 - c
	k[0], k[1], k[2], k[3] = c, u2, u3, c*u3-u2
}

// sumStride returns Σ x[i·stride] for i < cnt.
func sumStride(x []float64, stride, cnt int) float64 {
	if cnt <= 0 {
		return 0
	}
	x = x[:(cnt-1)*stride+1]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+3*stride < len(x); i += 4 * stride {
		s0 += x[i]
		s1 += x[i+stride]
		s2 += x[i+2*stride]
		s3 += x[i+3*stride]
	}
	for ; i < len(x); i += stride {
		s0 += x[i]
	}
	return (s0 + s1) + (s2 + s3)
}
