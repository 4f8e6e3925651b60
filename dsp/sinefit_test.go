package dsp

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// sineCase is a known sinusoid y = amp·cos(2π·freq·t + phase) + offset.
type sineCase struct {
	name                      string
	freq, amp, phase, offset  float64
	n                         int
	rate, start, jitter       float64 // jitter: ± fraction of a sample interval
	shuffle                   bool
	guessOffsetBins, tolScale float64
}

// samples returns the sample times and values of the case; times are
// jittered uniformly (seeded) and optionally shuffled.
func (c sineCase) samples(seed uint64) (t, y []float64) {
	rng := rand.New(rand.NewPCG(seed, 99))
	t = make([]float64, c.n)
	y = make([]float64, c.n)
	for i := range t {
		t[i] = c.start + (float64(i)+c.jitter*(2*rng.Float64()-1))/c.rate
		y[i] = c.amp*math.Cos(2*math.Pi*c.freq*t[i]+c.phase) + c.offset
	}
	if c.shuffle {
		rng.Shuffle(len(t), func(i, j int) { t[i], t[j] = t[j], t[i]; y[i], y[j] = y[j], y[i] })
	}
	return t, y
}

// phaseDiff returns a-b wrapped to (-π, π].
func phaseDiff(a, b float64) float64 { return wrapPhase(a - b) }

func exactCases() []sineCase {
	return []sineCase{
		{name: "uniform", freq: 123.4, amp: 0.8, phase: 0.7, offset: 0.05, n: 1000, rate: 1000, guessOffsetBins: 0.4, tolScale: 1},
		{name: "negative phase, big offset", freq: 7.77, amp: 2.5, phase: -2.9, offset: -1.3, n: 4096, rate: 2000, guessOffsetBins: -0.45, tolScale: 1},
		{name: "jittered times", freq: 50.3, amp: 1, phase: 1.9, offset: 0, n: 2000, rate: 1000, jitter: 0.3, guessOffsetBins: 0.3, tolScale: 1},
		{name: "jittered and shuffled", freq: 311.1, amp: 0.01, phase: 3.0, offset: 0.002, n: 1500, rate: 5000, jitter: 0.45, shuffle: true, guessOffsetBins: -0.3, tolScale: 1},
		// A record 100 s from t = 0: the phase carried back to t = 0 goes
		// through ω·t̄ ≈ 3.1e4 rad, and any relative frequency error e moves
		// it by e·3.1e4 rad, so the phase tolerance is 10× looser.
		{name: "record far from t=0", freq: 49.9, amp: 1, phase: 0.1, offset: 0, n: 2000, rate: 4000, start: 100, guessOffsetBins: 0.2, tolScale: 10},
	}
}

// TestFit3Exact checks exact recovery of a noiseless sinusoid at the known
// frequency: the three-parameter fit of IEEE Std 1057 / 1241 is a linear
// least-squares problem whose exact solution is the generating sinusoid
// (zero residual), for uniform, jittered or shuffled times alike.
func TestFit3Exact(t *testing.T) {
	// Rounding in the normal equations of a few thousand points with a
	// scaled condition number near 1 is ~1e-13; 1e-10 leaves room.
	const tol = 1e-10
	for _, c := range exactCases() {
		t.Run(c.name, func(t *testing.T) {
			tt, y := c.samples(1)
			f := Fit3(tt, y, c.freq)
			tl := tol * c.tolScale
			if math.Abs(f.Amp/c.amp-1) > tl || math.Abs(phaseDiff(f.PhaseRad, c.phase)) > tl ||
				math.Abs(f.Offset-c.offset) > tl*c.amp || f.RMSResidual > tl*c.amp || f.FreqHz != c.freq || f.Iterations != 0 {
				t.Errorf("Fit3 = %+v, want amp %g phase %g offset %g", f, c.amp, c.phase, c.offset)
			}
		})
	}
}

// TestFit4Exact checks exact recovery with the frequency unknown, starting
// a fraction of a bin (1/record length) away: the four-parameter fit's least
// squares minimum of noiseless data is the generating sinusoid.
func TestFit4Exact(t *testing.T) {
	// Frequency relative error: Gauss–Newton ends at rounding level,
	// ~1e-13 of a bin; 1e-10 relative to f leaves room. Phase and amplitude
	// as in TestFit3Exact.
	const tol = 1e-10
	for _, c := range exactCases() {
		t.Run(c.name, func(t *testing.T) {
			tt, y := c.samples(2)
			guess := c.freq + c.guessOffsetBins*c.rate/float64(c.n)
			f, err := Fit4(tt, y, guess)
			if err != nil {
				t.Fatalf("Fit4(guess %g Hz): %v", guess, err)
			}
			tl := tol * c.tolScale
			if math.Abs(f.FreqHz/c.freq-1) > tl || math.Abs(f.Amp/c.amp-1) > tl ||
				math.Abs(phaseDiff(f.PhaseRad, c.phase)) > tl || math.Abs(f.Offset-c.offset) > tl*c.amp ||
				f.RMSResidual > tl*c.amp || f.Iterations < 2 {
				t.Errorf("Fit4 = %+v, want freq %g amp %g phase %g offset %g", f, c.freq, c.amp, c.phase, c.offset)
			}
			if got, want := f.Eval(tt[3]), y[3]; math.Abs(got-want) > tl*c.amp {
				t.Errorf("Eval(t[3]) = %.12g, want the sample %.12g", got, want)
			}
		})
	}
}

// TestFit4CramerRao checks the noisy four-parameter fit against the
// Cramér–Rao bounds for a real tone in white Gaussian noise (REFERENCES.md
// §3; Kay, Fundamentals of Statistical Signal Processing I, 1993, Ex. 3.14 —
// formulas from public code, textbook citation from memory), with
// η = A²/(2σ²), N samples, time in samples, phase at n = 0:
//
//	var(f̂) ≥ 12/((2π)²·η·N(N²-1))  (cycles/sample)²
//	var(Â) ≥ 2σ²/N
//	var(φ̂) ≥ 2(2N-1)/(η·N(N+1))
//
// for N = 1000, A = 1, σ = 0.1, f = 0.1234, φ = 0.7 (the REFERENCES vector).
// The fit is started from FreqGuess, so the whole chain is tested. Least
// squares is asymptotically efficient here (Händel 2000), so each sample
// variance over M trials should match its bound to within its own sampling
// error, relative sd √(2/(M-1)); the bounds are asserted at ±4 such sd. The
// formulas differ from the exact Fisher values by < 0.3 % (REFERENCES.md §3),
// well inside that. The known-frequency fit (Fit3) is checked the same way
// against var(φ̂) ≥ 1/(N·η).
func TestFit4CramerRao(t *testing.T) {
	const (
		n     = 1000
		amp   = 1.0
		sigma = 0.1
		freq  = 0.1234
		phase = 0.7
		m     = 400
	)
	eta := amp * amp / (2 * sigma * sigma)
	crbF := 12 / (4 * math.Pi * math.Pi * eta * n * (n*n - 1))
	crbA := 2 * sigma * sigma / n
	crbP := 2 * (2*n - 1) / (eta * n * (n + 1))
	crbP3 := 1 / (n * eta)
	rng := rand.New(rand.NewPCG(2024, 6))
	tt := make([]float64, n)
	y := make([]float64, n)
	for i := range tt {
		tt[i] = float64(i)
	}
	var fs, as, ps, p3s []float64
	for trial := 0; trial < m; trial++ {
		for i := range y {
			y[i] = amp*math.Cos(2*math.Pi*freq*tt[i]+phase) + sigma*rng.NormFloat64()
		}
		guess := FreqGuess(y, 1)
		fit, err := Fit4(tt, y, guess)
		if err != nil {
			t.Fatalf("trial %d: Fit4 from guess %g: %v", trial, guess, err)
		}
		fs = append(fs, fit.FreqHz-freq)
		as = append(as, fit.Amp-amp)
		ps = append(ps, phaseDiff(fit.PhaseRad, phase))
		p3s = append(p3s, phaseDiff(Fit3(tt, y, freq).PhaseRad, phase))
	}
	tolRatio := 4 * math.Sqrt(2.0/(m-1))
	for _, c := range []struct {
		name  string
		errs  []float64
		bound float64
	}{
		{"Fit4 frequency", fs, crbF},
		{"Fit4 amplitude", as, crbA},
		{"Fit4 phase", ps, crbP},
		{"Fit3 phase (known f)", p3s, crbP3},
	} {
		mean, v := meanVar(c.errs)
		if r := v / c.bound; math.Abs(r-1) > tolRatio {
			t.Errorf("%s: variance %.4g is %.3f × the Cramér–Rao bound %.4g, want 1 ± %.3f", c.name, v, r, c.bound, tolRatio)
		}
		// Unbiased: the mean error within 4 standard errors of zero.
		if se := math.Sqrt(c.bound / m); math.Abs(mean) > 4*se {
			t.Errorf("%s: mean error %.3g, want |·| < 4·%.3g", c.name, mean, se)
		}
	}
}

func meanVar(x []float64) (mean, v float64) {
	for _, e := range x {
		mean += e
	}
	mean /= float64(len(x))
	for _, e := range x {
		v += (e - mean) * (e - mean)
	}
	return mean, v / float64(len(x)-1)
}

// TestFit4CaptureRange checks that guesses within ±0.5 bin of the truth
// converge to it (the range Fit4's doc promises) and that a guess too far
// off is reported, not silently accepted.
func TestFit4CaptureRange(t *testing.T) {
	const tol = 1e-9 // relative frequency error; exact recovery as above
	c := sineCase{freq: 12.34, amp: 1.3, phase: 0.7, offset: 0.2, n: 1000, rate: 1000}
	tt, y := c.samples(3)
	bin := c.rate / float64(c.n)
	for _, off := range []float64{-0.5, -0.25, -0.05, 0.05, 0.25, 0.5} {
		f, err := Fit4(tt, y, c.freq+off*bin)
		if err != nil || math.Abs(f.FreqHz/c.freq-1) > tol {
			t.Errorf("guess %+.2f bin: Fit4 = %.10f Hz, %v; want %g Hz", off, f.FreqHz, err, c.freq)
		}
	}
	// Two bins off this record, Gauss–Newton wanders between sidelobes of
	// the cost and the 30-iteration limit stops it.
	f, err := Fit4(tt, y, c.freq+2*bin)
	if !errors.Is(err, ErrNotConverged) || f.Iterations != 30 {
		t.Errorf("guess 2 bins off: Fit4 = %+v, %v; want ErrNotConverged after 30 iterations", f, err)
	}
}

func TestFitErrors(t *testing.T) {
	tt := []float64{0, 1, 2, 3, 4, 5, 6, 7}
	y := []float64{1, -1, 1, -1, 1, -1, 1, -1}
	for _, g := range []float64{0, -3, math.NaN(), math.Inf(1)} {
		if _, err := Fit4(tt, y, g); !errors.Is(err, ErrFreqGuess) {
			t.Errorf("Fit4 guess %g: error %v, want ErrFreqGuess", g, err)
		}
	}
	same := []float64{2, 2, 2, 2}
	if _, err := Fit4(same, same, 1); !errors.Is(err, ErrSingularFit) {
		t.Errorf("Fit4 with equal times: error %v, want ErrSingularFit", err)
	}
	// Uniform samples at exactly Nyquist make sin(πn) = 0: the sine column
	// vanishes and the three-parameter problem is singular. So is f = 0,
	// where the cosine column equals the constant one.
	for _, f := range []float64{0.5, 0} {
		if got := Fit3(tt, y, f); !math.IsNaN(got.Amp) || !math.IsNaN(got.RMSResidual) {
			t.Errorf("Fit3 at %g Hz = %+v, want NaN (singular)", f, got)
		}
	}
	for name, f := range map[string]func(){
		"Fit3 length mismatch": func() { Fit3(tt, y[:7], 1) },
		"Fit3 too short":       func() { Fit3(tt[:2], y[:2], 1) },
		"Fit4 too short":       func() { Fit4(tt[:3], y[:3], 1) },
	} {
		t.Run(name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Errorf("%s did not panic", name)
				}
			}()
			f()
		})
	}
}

// TestFreqGuess checks the spectrum-peak start against a noiseless tone
// between bins with a DC offset. The Hann two-bin interpolation (Grandke
// 1983) is exact but for the image at -f, 2f ≈ 247 bins away, which leaks
// 1/(π·247³) ≈ 2e-8 of the tone (large-N Hann kernel): 1e-6 bin covers it.
func TestFreqGuess(t *testing.T) {
	const tolBins = 1e-6
	c := sineCase{freq: 123.4567, amp: 0.5, phase: 2, offset: 3, n: 1000, rate: 1000}
	_, y := c.samples(4)
	bin := c.rate / float64(c.n)
	if got := FreqGuess(y, c.rate); math.Abs(got-c.freq) > tolBins*bin {
		t.Errorf("FreqGuess = %.9f Hz, want %.9f Hz ± %g bin", got, c.freq, tolBins)
	}
	if got := FreqGuess(y[:5], c.rate); got != 0 {
		t.Errorf("FreqGuess of 5 samples = %g, want 0", got)
	}
	if got := FreqGuess(make([]float64, 64), c.rate); got != 0 {
		t.Errorf("FreqGuess of zeros = %g, want 0", got)
	}
}

func TestFitAllocs(t *testing.T) {
	c := sineCase{freq: 50.3, amp: 1, phase: 1, n: 1024, rate: 1000, jitter: 0.2}
	tt, y := c.samples(5)
	if a := testing.AllocsPerRun(10, func() { Fit3(tt, y, 50.3) }); a != 0 {
		t.Errorf("Fit3 allocates %v times per call, want 0", a)
	}
	if a := testing.AllocsPerRun(10, func() { _, _ = Fit4(tt, y, 50.4) }); a != 0 {
		t.Errorf("Fit4 allocates %v times per call, want 0", a)
	}
}
