package lockin

import "math"

// Sync mode.
//
// A block spans the drive phases [B, B+C) with C = Config.Cycles and B a
// whole cycle: the first boundary is the first whole cycle at or after the
// first frame's phase, the next ones follow every C cycles. Over a block the
// LockIn fits, by weighted least squares, the model
//
//	x(φ) ≈ c + Σ_h Re{Z_h·e^{j2πk_hφ/L}}
//
// to the frames. The weights are those of the trapezoid rule for ∫_B^{B+C}
// … dφ: each frame's weight is the integral over the block of its
// linear-interpolation hat function, half the phase interval to each
// neighbour; the interval that straddles a boundary is split there, and the
// two frames on either side of it share the part inside the block in
// proportion to their hat functions (so both frames at a boundary count,
// with small weights, in both blocks). A frame that lies on a boundary
// (within linTol) belongs wholly to the block it starts, so with uniform,
// coherent sampling each block holds exactly its N frames, all with equal
// weight, the model's basis is orthogonal under them, and the fit is the
// plain demodulation sum Z_h = (2/N)·Σ x_n·e^{−j2πk_hφ_n/L}.
// Otherwise the least-squares step removes the cross-talk the discrete sum
// leaves between the configured harmonics (and the offset): a noiseless
// signal made of them is recovered exactly (to rounding) for any sampling,
// coherent or not, jittered or not, and with white noise the fit is the
// maximum-likelihood estimate. The weights (rather than equal ones) make the
// discrete inner product approximate the continuous one, so harmonics that
// are not configured leak into the configured ones much less.
//
// The normal equations need, besides the demodulation sums Y_h = Σw·x·e^{−jθ_h},
// the sums E_m = Σw·e^{−j2πmφ/L} for every m that is a harmonic index or a
// sum or difference of two. Over a run of frames whose phase is linear,
// φ_i = φ_0 + i·d (a phase accumulator, or a fitted phase at uniform times),
// all weights are d, E_m is a Dirichlet kernel in closed form and Y_h comes
// from a Goertzel recurrence: one multiplication and two additions per
// sample and harmonic. Frames whose phase is not linear to within a few
// units in the last place (linTol) take the per-sample path (a rotor and
// its powers per frame, every sum accumulated), exact for any phases and
// about 20 times slower.

// pushSync is Push for Sync mode.
func (l *LockIn) pushSync(x, t, ph []float64) (int, bool) {
	F := len(ph)
	for i := 0; i < F; {
		if !l.started {
			l.begin(x, t, ph, i)
			i++
			continue
		}
		h := ph[i] - l.pend.ph
		if !(h >= 0 && h < l.cyc) {
			l.restarts++
			l.begin(x, t, ph, i)
			i++
			continue
		}
		if ph[i] >= l.bEdge {
			done := l.cross(x, t, ph, i)
			i++
			if done {
				return i, true
			}
			continue
		}
		// Frames i, i+1, … up to the one before the boundary or the end of
		// the call: all but the last get their weight now. The search
		// assumes rising phases; the chunks check that (a linear chunk
		// rises; the per-sample path checks every step and stops early).
		k := searchEdge(ph, i+1, l.bEdge)
		if l.inBlock {
			k = l.bulk(x, ph, i, k-1) + 1
		}
		l.setPending(x, t, ph, i, k-1)
		i = k
	}
	return F, false
}

// searchEdge returns the first index ≥ lo of rising phases ph at or past
// edge, or len(ph).
func searchEdge(ph []float64, lo int, edge float64) int {
	hi := len(ph)
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if ph[m] >= edge {
			hi = m
		} else {
			lo = m + 1
		}
	}
	return lo
}

// begin starts over at frame i: no block open, frame i pending. A frame
// whose phase is not finite is skipped (the next one starts).
func (l *LockIn) begin(x, t, ph []float64, i int) {
	l.inBlock, l.runOn = false, false
	l.clearBlock()
	p := ph[i]
	l.started = !math.IsNaN(p) && !math.IsInf(p, 0)
	if !l.started {
		return
	}
	copy(l.pend.x, x[i*l.nch:(i+1)*l.nch])
	l.pend.ph, l.pend.phL, l.pend.t = p, p, l.timeAt(t, i)
	l.pend.wl, l.pend.regular, l.pend.mirror = 0, false, false
	b := math.Round(p)
	if math.Abs(p-b) <= linTol(b, b) {
		// The first frame lies on a whole cycle: the block starts here,
		// and the frame's left half-interval, before the first sample, is
		// taken equal to its right one (as in a plain sum).
		l.pend.mirror = true
		l.inBlock = true
		l.tStart = l.pend.t
		l.setBoundary(b + l.cyc)
		return
	}
	l.setBoundary(math.Ceil(p))
}

// setBoundary sets the next block boundary. A frame within linTol of it
// counts as lying on it (bEdge): sampling chosen to be coherent stays so
// although its phases carry rounding.
func (l *LockIn) setBoundary(b float64) {
	l.bNext = b
	l.bEdge = b - linTol(b, b)
}

// setPending makes frame j (≥ i) pending after frames i..j−1 were handled.
func (l *LockIn) setPending(x, t, ph []float64, i, j int) {
	phL := l.pend.ph
	if j > i {
		phL = ph[j-1]
	}
	copy(l.pend.x, x[j*l.nch:(j+1)*l.nch])
	l.pend.ph, l.pend.phL, l.pend.t = ph[j], phL, l.timeAt(t, j)
	l.pend.wl = (ph[j] - phL) / 2
	l.pend.regular, l.pend.mirror = true, false
}

// cross handles the interval from the pending frame p to frame i, which
// contains the boundary bNext, and reports whether a block completed.
//
// The interval's trapezoid, split at the boundary B, gives p and q (frame
// i) the weights β − β²/2h and β²/2h in the block that ends (β = B − φ_p,
// h = φ_q − φ_p) and (h−β)²/2h and (h²−β²)/2h in the one that starts. A
// frame lying on the boundary (within linTol) belongs to the block it
// starts, with its whole left half-interval, as blocks are half-open
// [B, B+C): with uniform coherent sampling each block is then exactly the
// plain sum over its N frames, and consecutive blocks share no frame.
func (l *LockIn) cross(x, t, ph []float64, i int) bool {
	p := &l.pend
	xq := x[i*l.nch : (i+1)*l.nch]
	h := ph[i] - p.ph
	tq := l.timeAt(t, i)
	tie := ph[i]-l.bNext <= linTol(l.bNext, l.bNext)
	beta := l.bNext - p.ph // 0 < β ≤ h
	tB := p.t + (tq-p.t)*(beta/h)
	if tie {
		beta, tB = h, tq
	}
	if p.mirror {
		p.wl = h / 2
	}
	done := false
	if l.inBlock {
		l.addFrame(p.x, p.ph, p.wl+beta-beta*beta/(2*h))
		l.owned++
		if !tie {
			l.addFrame(xq, ph[i], beta*beta/(2*h))
		}
		l.finish(tB)
		done = true
	}
	l.clearBlock()
	l.inBlock = true
	l.tStart = tB
	l.setBoundary(l.bNext + l.cyc)
	wq := h / 2
	if !tie {
		if w := (h - beta) * (h - beta) / (2 * h); w > 0 {
			l.addFrame(p.x, p.ph, w)
		}
		wq = (h - beta) * (h + beta) / (2 * h)
	}
	copy(p.x, xq)
	p.phL, p.ph, p.t = p.ph, ph[i], tq
	p.wl, p.regular, p.mirror = wq, false, false
	return done
}

// bulk gives their weights to the pending frame and to frames i..j−1 of the
// call; frame j is the right neighbour of the last of them. It returns the
// index of the frame that is to become pending: j, or an earlier one whose
// step to the next frame is bad or crosses the boundary.
func (l *LockIn) bulk(x, ph []float64, i, j int) int {
	p := &l.pend
	var px []float64
	if p.regular {
		px = p.x
	} else {
		w := p.wl + (ph[i]-p.ph)/2
		if p.mirror {
			w = ph[i] - p.ph
		}
		l.addFrame(p.x, p.ph, w)
		l.owned++
	}
	left := p.ph
	if px != nil {
		left = p.phL
	}
	a := i // next frame of the call to hand to a chunk
	for a < j || px != nil {
		n := 0
		phs := l.phs
		phs[0] = left
		if px != nil {
			phs[1] = p.ph
			n = 1
		}
		b := min(j, a+maxGoertzel-n)
		n += copy(phs[n+1:], ph[a:b])
		phs[n+1] = ph[b]
		done := l.chunk(px, x, a, phs[:n+2])
		if done < n {
			// Stopped before frame done of the chunk. The prefix's step
			// was checked before, so it is never the one refused.
			if px != nil {
				done = max(done-1, 0)
			}
			return a + done
		}
		left = phs[n]
		px = nil
		a = b
	}
	return j
}

// chunk handles a chunk of frames with standard weights: the frame whose
// samples are px (if not nil) followed by frames a, a+1, … of x. phs holds
// the left neighbour's phase, the chunk's phases and the right neighbour's.
// It returns the number of frames it took: all of them, or on the
// per-sample path the frames before the first whose step to its right
// neighbour is bad (not a rising step shorter than a block, or reaching
// the boundary).
func (l *LockIn) chunk(px, x []float64, a int, phs []float64) int {
	c := len(phs) - 2
	lo, hi := phs[0], phs[c+1]
	tol := linTol(lo, hi)
	if !(hi < l.bEdge) {
		// Only phases that are not rising can get here (searchEdge
		// assumes they rise); the per-sample path finds the boundary.
		l.closeRun()
		return l.perSample(px, x, a, phs)
	}
	if l.runOn {
		if linear(phs, l.runA+float64(l.runN-1)*l.runD, l.runD, tol) {
			l.fast(px, x, a, c)
			return c
		}
		l.closeRun()
	}
	d := (hi - lo) / float64(c+1)
	if d >= 0 && linear(phs, lo, d, tol) {
		l.runOn, l.runA, l.runD, l.runN = true, lo+d, d, 0
		l.fast(px, x, a, c)
		return c
	}
	return l.perSample(px, x, a, phs)
}

// perSample is chunk's per-sample path.
func (l *LockIn) perSample(px, x []float64, a int, phs []float64) int {
	c := len(phs) - 2
	for n := 1; n <= c; n++ {
		if st := phs[n+1] - phs[n]; !(st >= 0 && st < l.cyc && phs[n+1] < l.bEdge) {
			return n - 1
		}
		xs := px
		if px == nil || n > 1 {
			f := a + n - 1
			if px != nil {
				f--
			}
			xs = x[f*l.nch : (f+1)*l.nch]
		}
		l.addFrame(xs, phs[n], (phs[n+1]-phs[n-1])/2)
		l.owned++
	}
	return c
}

// linTol is how far, in cycles, the phases of a chunk that starts at phase
// lo and ends at hi may lie from a straight line for the chunk to count as
// linear: 8·2⁻⁵² of the largest |phase| (at least of 1 cycle), i.e. 8 to
// 16 units in the last place. Phases from a phase accumulator or from a
// fitted frequency at uniform times lie within 1 to 3 units of a line; the
// model phases used for such a run then differ from the given ones by a
// few times the given ones' own rounding. (A phase error δ cycles moves
// harmonic r by 2πrδ radians: at 1e4 cycles, 8·2⁻⁵²·1e4 = 1.8e−11 cycles
// is 5.6e−10 rad for the 5th harmonic.)
func linTol(lo, hi float64) float64 {
	return 8 * 0x1p-52 * math.Max(1, math.Max(math.Abs(lo), math.Abs(hi)))
}

// linear reports whether |phs[i] − (p0 + i·d)| ≤ tol for every i (false
// if a phase is not finite). Forming the line costs at most 1.5 units in
// the last place, well inside linTol.
func linear(phs []float64, p0, d, tol float64) bool {
	d2, d3 := 2*d, 3*d
	fi := 0.0
	i := 0
	for ; i+3 < len(phs); i += 4 {
		q := phs[i : i+4 : i+4]
		base := p0 + fi*d
		e0 := math.Abs(q[0] - base)
		e1 := math.Abs(q[1] - (base + d))
		e2 := math.Abs(q[2] - (base + d2))
		e3 := math.Abs(q[3] - (base + d3))
		if !(e0 <= tol && e1 <= tol && e2 <= tol && e3 <= tol) {
			return false
		}
		fi += 4
	}
	for ; i < len(phs); i++ {
		if !(math.Abs(phs[i]-(p0+fi*d)) <= tol) {
			return false
		}
		fi++
	}
	return true
}

// fast adds a chunk of c frames lying on the open run's line to the block:
// Y_h by Goertzel recurrences with the model phases, the Gram sums when the
// run closes.
func (l *LockIn) fast(px, x []float64, a, c int) {
	d := l.runD
	last := l.runA + float64(l.runN+c-1)*d
	for h, k := range l.k {
		kf := float64(k)
		l.sig[2*h], l.sig[2*h+1] = l.rot.at(kf * d)
		l.rho[2*h], l.rho[2*h+1] = l.rot.at(kf * last)
		lookAhead(l.gk[4*h:], 2*l.sig[2*h])
	}
	cnt := c
	if px != nil {
		cnt--
	}
	for ch := 0; ch < l.nch; ch++ {
		xc := x[a*l.nch+ch:]
		y := l.ys[ch*l.nb : (ch+1)*l.nb]
		pre := 0.0
		if px != nil {
			pre = px[ch]
		}
		sum := pre
		// Recurrences in threes (the most a loop holds in registers),
		// then a pair or a single one.
		h := 0
		for ; h+2 < l.nh; h += 3 {
			st := [6]float64{pre, 0, pre, 0, pre, 0}
			goertzel3(xc, l.nch, cnt, (*[12]float64)(l.gk[4*h:4*h+12]), &st)
			l.goertzelOut(y, h, d, st[0], st[1])
			l.goertzelOut(y, h+1, d, st[2], st[3])
			l.goertzelOut(y, h+2, d, st[4], st[5])
		}
		switch l.nh - h {
		case 2:
			st := [4]float64{pre, 0, pre, 0}
			sum += goertzel2(xc, l.nch, cnt, (*[8]float64)(l.gk[4*h:4*h+8]), &st)
			l.goertzelOut(y, h, d, st[0], st[1])
			l.goertzelOut(y, h+1, d, st[2], st[3])
		case 1:
			st := [4]float64{pre, 0}
			sum += goertzel1(xc, l.nch, cnt, (*[8]float64)(l.gk[4*h:4*h+8]), &st)
			l.goertzelOut(y, h, d, st[0], st[1])
		default:
			sum += sumStride(xc, l.nch, cnt)
		}
		y[0] += d * sum
	}
	l.runN += c
	l.owned += c
}

// goertzelOut adds d·e^{−jθ_last}·(s1 − e^{−jω}·s2) to harmonic h's sum.
func (l *LockIn) goertzelOut(y []float64, h int, d, s1, s2 float64) {
	sr, si := l.sig[2*h], l.sig[2*h+1]
	ur, ui := s1-sr*s2, -si*s2
	rr, ri := l.rho[2*h], l.rho[2*h+1]
	y[1+2*h] += d * (rr*ur - ri*ui)
	y[2+2*h] += d * (rr*ui + ri*ur)
}

// closeRun adds the open run's Gram sums in closed form:
//
//	Σ_{i<N} d·e^{−j2πm(φ_0+id)/L} = d·e^{−j2πmφ_c/L}·sin(πmNd/L)/sin(πmd/L),
//
// φ_c = φ_0 + (N−1)d/2 the run's centre (the Dirichlet kernel).
func (l *LockIn) closeRun() {
	if !l.runOn {
		return
	}
	l.runOn = false
	n, d := float64(l.runN), l.runD
	l.es[0] += n * d
	centre := l.runA + (n-1)*d/2
	for p, m := range l.mset {
		mf := float64(m)
		// rot.at(q) has imaginary part −sin(2πq/L).
		sr, si := l.rot.at(mf * d / 2)
		nr, ni := l.rot.at(mf * n * d / 2)
		var dk float64
		if math.Abs(si) > 1e-12 {
			dk = ni / si
		} else {
			// sin x → 0 at x = qπ: the kernel tends to N·cos(Nx)/cos(x).
			dk = n * nr / sr
		}
		cr, ci := l.rot.at(mf * centre)
		l.es[1+2*p] += d * dk * cr
		l.es[2+2*p] += d * dk * ci
	}
}

// addFrame adds one frame with weight w to the block's sums (the
// per-sample path).
func (l *LockIn) addFrame(xs []float64, ph, w float64) {
	pw := l.pw
	if !l.pwOK || ph != l.pwPh {
		// The frames at a boundary come twice: keep their powers.
		pw[0], pw[1] = 1, 0
		pw[2], pw[3] = l.rot.at(ph)
		l.mChain.run(pw)
		l.pwPh, l.pwOK = ph, true
	}
	l.es[0] += w
	for p, m := range l.mset {
		l.es[1+2*p] += w * pw[2*m]
		l.es[2+2*p] += w * pw[2*m+1]
	}
	for ch, v := range xs {
		wx := w * v
		y := l.ys[ch*l.nb : (ch+1)*l.nb]
		y[0] += wx
		for h, k := range l.k {
			y[1+2*h] += wx * pw[2*k]
			y[2+2*h] += wx * pw[2*k+1]
		}
	}
}

// clearBlock empties the block's sums.
func (l *LockIn) clearBlock() {
	clear(l.ys)
	clear(l.es)
	l.owned = 0
	l.runOn, l.runN = false, 0
}

// finish solves the completed block into l.res and empties the sums.
func (l *LockIn) finish(tEnd float64) {
	l.closeRun()
	r := &l.res
	r.StartS, r.EndS = l.tStart, tEnd
	r.Samples = l.owned
	r.Cycles = l.cfg.Cycles
	r.FreqHz = l.cyc / (tEnd - l.tStart)
	r.OK = l.factor()
	for ch := 0; ch < l.nch; ch++ {
		if !r.OK {
			for h := 0; h < l.nh; h++ {
				r.z[ch*l.nh+h] = complex(math.NaN(), math.NaN())
			}
			r.mean[ch] = math.NaN()
			continue
		}
		copy(l.coef, l.ys[ch*l.nb:(ch+1)*l.nb])
		l.solve(l.coef)
		r.mean[ch] = l.coef[0]
		for h := 0; h < l.nh; h++ {
			r.z[ch*l.nh+h] = complex(l.coef[1+2*h], l.coef[2+2*h])
		}
	}
	l.clearBlock()
}
