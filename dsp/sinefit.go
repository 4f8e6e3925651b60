package dsp

import (
	"errors"
	"fmt"
	"math"
)

// Sine-fit errors. Fit4 wraps them with the values involved.
var (
	// ErrNotConverged: the four-parameter iteration did not settle within
	// its iteration limit.
	ErrNotConverged = errors.New("dsp: sine fit did not converge")
	// ErrSingularFit: the fit's columns are linearly dependent, e.g. all
	// sample times equal, or a uniformly sampled tone exactly at 0 Hz or at
	// the Nyquist frequency.
	ErrSingularFit = errors.New("dsp: sine fit is singular")
	// ErrFreqGuess: the frequency guess is not a positive finite number.
	ErrFreqGuess = errors.New("dsp: sine fit needs a positive frequency guess")
)

// Limits of the four-parameter iteration, as in the sfit4 routine of the
// IEEE 1241 MATLAB framework (Kollár and Márkus): at most 30 iterations,
// converged when the frequency step is below 1e-6 of the sample rate, a step
// of 5 % of the frequency or more scaled down by 0.05.
const (
	fit4MaxIter  = 30
	fit4StepTol  = 1e-6 // × 2π/Ts, rad/s
	fit4BigStep  = 0.05 // steps >= this fraction of ω are damped …
	fit4Damping  = 0.05 // … by this factor
	fitPivotTiny = 1e-13
	// fitColumnTiny: Σcos² or Σsin² below this fraction of N is rounding
	// noise (cos(π/2) = 6e-17 squares to 4e-33).
	fitColumnTiny = 1e-24
)

// SineFit is a fitted sinusoid
//
//	y(t) ≈ Amp·cos(2π·FreqHz·t + PhaseRad) + Offset
//
// with t in seconds, Amp ≥ 0 and Offset in the units of y, and PhaseRad in
// (-π, π] referred to t = 0. RMSResidual is √(Σ r²/N), r = y - fit (IEEE Std
// 1241-2000's rms noise, eq. 93). Iterations counts the four-parameter steps
// (0 for Fit3).
type SineFit struct {
	FreqHz, Amp, PhaseRad, Offset, RMSResidual float64
	Iterations                                 int
}

// Eval returns the fitted sinusoid at time t in seconds.
func (f SineFit) Eval(t float64) float64 {
	return f.Amp*math.Cos(2*math.Pi*f.FreqHz*t+f.PhaseRad) + f.Offset
}

// Fit3 fits y ≈ A·cos ωt + B·sin ωt + C at the known frequency freqHz by
// linear least squares: the three-parameter sine fit of IEEE Std 1057 and
// IEEE Std 1241-2010 (Annex B.1), with columns [cos ωt_n, sin ωt_n, 1] and
// x = (DᵀD)⁻¹Dᵀy. Then Amp = √(A²+B²) and PhaseRad = atan2(-B, A).
//
// The sample times t (seconds) need not be uniform or sorted. Internally
// they are taken about their mean t̄, which keeps the normal equations
// well-conditioned for records far from t = 0, and the phase is carried back
// to t = 0 (so its precision is that of ω·t̄). The 3×3 normal equations are
// equilibrated and solved by Gaussian elimination; Fit3 allocates nothing.
//
// If the columns are dependent (freqHz = 0, all t equal, a uniformly
// sampled tone exactly at Nyquist) the fit's Amp, PhaseRad, Offset and
// RMSResidual are NaN. Fit3 panics if len(t) != len(y) or len(t) < 3.
func Fit3(t, y []float64, freqHz float64) SineFit {
	checkFit(t, y, 3, "Fit3")
	t0 := mean(t)
	w := 2 * math.Pi * freqHz
	a, b, c, ok := fit3(t, y, t0, w)
	if !ok {
		nan := math.NaN()
		return SineFit{FreqHz: freqHz, Amp: nan, PhaseRad: nan, Offset: nan, RMSResidual: nan}
	}
	return finish(t, y, t0, w, a, b, c, 0)
}

// Fit4 fits y ≈ Amp·cos(ωt + φ) + Offset with the frequency free: the
// four-parameter sine fit of IEEE Std 1057 / IEEE Std 1241-2010 (Annex B),
// in the form of the sfit4 routine of the IEEE 1241 MATLAB framework
// (Kollár and Márkus). It starts from a three-parameter fit at freqGuessHz
// and iterates Gauss–Newton steps with columns
//
//	D_i = [cos ω_{i-1}t, sin ω_{i-1}t, 1, -A_{i-1}·t·sin ω_{i-1}t + B_{i-1}·t·cos ω_{i-1}t]
//
// solving for [A_i, B_i, C_i, Δω_i] and setting ω_i = ω_{i-1} + Δω_i, with a
// step of 5 % of ω or more damped by 0.05. It has converged when
// |Δω| < 2π·1e-6/Ts, Ts the mean sample interval (max t - min t)/(N-1); it
// then takes one more step (the criterion lets a noiseless fit stop ~1e-5
// of a bin short; Gauss–Newton's quadratic convergence makes the extra step
// exact to rounding) and refits A, B, C at the final ω. Without convergence
// in 30 iterations it returns ErrNotConverged. Iterations counts the steps
// taken. Near the
// Cramér–Rao bound in white Gaussian noise (Händel, "Properties of the IEEE-
// STD-1057 four-parameter sine wave fit algorithm", IEEE Trans. Instrum.
// Meas. 49(6), 2000) when the record holds a few periods or more.
//
// Times as for Fit3 (non-uniform allowed). The guess must be close: within
// about half of 1/(record length) in hertz, i.e. half a DFT bin of the
// record, for a sure start; FreqGuess gives one from a spectrum peak. Errors: ErrFreqGuess (guess not positive and finite),
// ErrSingularFit, ErrNotConverged (the last estimate is still returned).
// Fit4 panics if len(t) != len(y) or len(t) < 4. It allocates nothing.
func Fit4(t, y []float64, freqGuessHz float64) (SineFit, error) {
	checkFit(t, y, 4, "Fit4")
	if !(freqGuessHz > 0) || math.IsInf(freqGuessHz, 0) {
		return SineFit{}, fmt.Errorf("%w, got %g Hz", ErrFreqGuess, freqGuessHz)
	}
	t0 := mean(t)
	tmin, tmax := t[0], t[0]
	for _, v := range t {
		tmin, tmax = math.Min(tmin, v), math.Max(tmax, v)
	}
	ts := (tmax - tmin) / float64(len(t)-1)
	if !(ts > 0) {
		return SineFit{}, fmt.Errorf("%w: all %d sample times are equal (%g s)", ErrSingularFit, len(t), tmin)
	}
	tol := 2 * math.Pi * fit4StepTol / ts
	w := 2 * math.Pi * freqGuessHz
	a, b, c, ok := fit3(t, y, t0, w)
	if !ok {
		return SineFit{}, fmt.Errorf("%w at the guess %g Hz", ErrSingularFit, freqGuessHz)
	}
	var dw float64
	converged := false
	for it := 1; it <= fit4MaxIter; it++ {
		x, ok := step4(t, y, t0, w, a, b)
		if !ok {
			return finish(t, y, t0, w, a, b, c, it), fmt.Errorf("%w at iteration %d, %g Hz", ErrSingularFit, it, w/(2*math.Pi))
		}
		a, b, c, dw = x[0], x[1], x[2], x[3]
		step := dw
		if math.Abs(dw) >= fit4BigStep*w {
			step *= fit4Damping
		}
		w += step
		if !(w > 0) || math.IsInf(w, 0) {
			return SineFit{}, fmt.Errorf("%w: frequency left the positive axis at iteration %d (guess %g Hz)", ErrNotConverged, it, freqGuessHz)
		}
		if converged {
			// This was the polishing step after convergence.
			a, b, c, ok = fit3(t, y, t0, w)
			if !ok {
				return SineFit{}, fmt.Errorf("%w at %g Hz", ErrSingularFit, w/(2*math.Pi))
			}
			return finish(t, y, t0, w, a, b, c, it), nil
		}
		converged = math.Abs(dw) < tol
	}
	if converged {
		// Converged on the last allowed iteration: no polishing step left.
		if a, b, c, ok = fit3(t, y, t0, w); ok {
			return finish(t, y, t0, w, a, b, c, fit4MaxIter), nil
		}
	}
	return finish(t, y, t0, w, a, b, c, fit4MaxIter), fmt.Errorf(
		"%w after %d iterations: last step %.3g Hz at %.9g Hz (guess %g Hz); give a closer guess or a longer record",
		ErrNotConverged, fit4MaxIter, dw/(2*math.Pi), w/(2*math.Pi), freqGuessHz)
}

// FreqGuess returns a starting frequency in hertz for Fit4 from uniformly
// spaced samples y at rateHz: the mean is removed, the block is Hann
// windowed, and the largest non-DC bin is refined by Spectrum.Peak
// (interpolated DFT, Grandke 1983). It needs a tone of at least about two
// periods in the record to separate it from DC, and returns 0 if y has fewer
// than 8 samples or no non-DC content. It allocates a Spectrum and two
// len(y) slices per call; for repeated use keep a Spectrum and call Peak.
// It panics if rateHz is not positive and finite.
func FreqGuess(y []float64, rateHz float64) float64 {
	if len(y) < 8 {
		return 0
	}
	s := NewSpectrum(len(y), Hann, rateHz)
	x := make([]float64, len(y))
	m := mean(y)
	for i, v := range y {
		x[i] = v - m
	}
	amp := s.Amplitude(nil, x)
	f, a := s.Peak(amp, 1, len(amp))
	if !(a > 0) {
		return 0
	}
	return f
}

// step4 solves one Gauss–Newton step of the four-parameter fit at ω = w
// with the previous cosine and sine coefficients a, b, returning
// [A, B, C, Δω].
func step4(t, y []float64, t0, w, a, b float64) ([4]float64, bool) {
	var g [16]float64
	var r [4]float64
	for i, ti := range t {
		tau := ti - t0
		sn, cs := math.Sincos(w * tau)
		row := [4]float64{cs, sn, 1, tau * (b*cs - a*sn)}
		accumulate(g[:], r[:], row[:], y[i])
	}
	return solveSym(g, r, 4)
}

// fit3 solves the three-parameter problem in the centred time τ = t - t0.
func fit3(t, y []float64, t0, w float64) (a, b, c float64, ok bool) {
	var g [16]float64
	var r [4]float64
	for i, ti := range t {
		sn, cs := math.Sincos(w * (ti - t0))
		row := [4]float64{cs, sn, 1}
		accumulate(g[:], r[:], row[:3], y[i])
	}
	x, ok := solveSym(g, r, 3)
	return x[0], x[1], x[2], ok
}

// finish turns centred-time coefficients into a SineFit and computes the
// rms residual.
func finish(t, y []float64, t0, w, a, b, c float64, iter int) SineFit {
	var ss float64
	for i, ti := range t {
		sn, cs := math.Sincos(w * (ti - t0))
		r := y[i] - (a*cs + b*sn + c)
		ss += r * r
	}
	return SineFit{
		FreqHz:      w / (2 * math.Pi),
		Amp:         math.Hypot(a, b),
		PhaseRad:    wrapPhase(math.Atan2(-b, a) - w*t0),
		Offset:      c,
		RMSResidual: math.Sqrt(ss / float64(len(t))),
		Iterations:  iter,
	}
}

// accumulate adds row·rowᵀ to the upper triangle of the 4×4 matrix g and
// row·yi to r.
func accumulate(g, r, row []float64, yi float64) {
	for j, vj := range row {
		r[j] += vj * yi
		for k := j; k < len(row); k++ {
			g[4*j+k] += vj * row[k]
		}
	}
}

// solveSym solves the m×m symmetric system g·x = r (upper triangle of g
// filled, row stride 4) after scaling it to unit diagonal, by Gaussian
// elimination with partial pivoting. The first three columns are cos, sin
// and 1 over N = g[10] samples; one of the first two with energy below
// fitColumnTiny·N is rounding noise (a sine sampled only at its zeros) and
// makes the system singular, as does a scaled pivot below fitPivotTiny.
func solveSym(g [16]float64, r [4]float64, m int) (x [4]float64, ok bool) {
	if g[0] < fitColumnTiny*g[10] || g[5] < fitColumnTiny*g[10] {
		return x, false
	}
	var d [4]float64
	for j := 0; j < m; j++ {
		if !(g[5*j] > 0) {
			return x, false
		}
		d[j] = 1 / math.Sqrt(g[5*j])
	}
	for j := 0; j < m; j++ {
		for k := j; k < m; k++ {
			v := g[4*j+k] * d[j] * d[k]
			g[4*j+k], g[4*k+j] = v, v
		}
		r[j] *= d[j]
	}
	for col := 0; col < m; col++ {
		p := col
		for i := col + 1; i < m; i++ {
			if math.Abs(g[4*i+col]) > math.Abs(g[4*p+col]) {
				p = i
			}
		}
		if math.Abs(g[4*p+col]) < fitPivotTiny {
			return x, false
		}
		if p != col {
			for k := 0; k < m; k++ {
				g[4*p+k], g[4*col+k] = g[4*col+k], g[4*p+k]
			}
			r[p], r[col] = r[col], r[p]
		}
		for i := col + 1; i < m; i++ {
			f := g[4*i+col] / g[4*col+col]
			for k := col; k < m; k++ {
				g[4*i+k] -= f * g[4*col+k]
			}
			r[i] -= f * r[col]
		}
	}
	for i := m - 1; i >= 0; i-- {
		v := r[i]
		for k := i + 1; k < m; k++ {
			v -= g[4*i+k] * x[k]
		}
		x[i] = v / g[4*i+i]
	}
	for j := 0; j < m; j++ {
		x[j] *= d[j]
	}
	return x, true
}

// checkFit panics on a caller's size mismatch.
func checkFit(t, y []float64, min int, name string) {
	if len(t) != len(y) {
		panic(fmt.Sprintf("dsp: %s has %d times but %d samples", name, len(t), len(y)))
	}
	if len(t) < min {
		panic(fmt.Sprintf("dsp: %s needs at least %d samples, got %d", name, min, len(t)))
	}
}

func mean(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v
	}
	return s / float64(len(x))
}

// wrapPhase returns p reduced to (-π, π].
func wrapPhase(p float64) float64 {
	p = math.Remainder(p, 2*math.Pi)
	if p <= -math.Pi {
		p += 2 * math.Pi
	}
	return p
}
