package jump

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestHBReference checks the harmonic-balance harness: the cubic's roots
// against the eigenvalues of its companion matrix (gonum mat.Eigen, a
// general-purpose reference), and the number of branches on either side
// of the fold frequencies listed in REFERENCES.md §5 ([CALC], exact HB1).
func TestHBReference(t *testing.T) {
	// rootTol: both methods are accurate to rounding; the eigenvalues of
	// a companion matrix of a cubic with coefficients of order 1..1e-4
	// carry errors of order 1e-12 relative.
	const rootTol = 1e-8
	// foldStep: the folds in REFERENCES are given to 5 decimals, so the
	// branch count must change within ±5e-5 of them.
	const foldStep = 5e-5
	cases := []struct {
		zeta, gamma  float64
		lower, upper float64 // fold frequencies Ω
	}{
		{0.05, 0.018, 1.19366, 1.33003},
		{0.05, 0.01, 1.15772, 1.22710},
		{0.01, 0.001, 1.08150, 1.39924},
		{0.01, 1e-4, 1.03702, 1.07799},
		{0.02, 0.01, 1.16852, 1.64998},
		{0.01, -1e-4, 0.86577, 0.96122},
	}
	for _, c := range cases {
		// Roots against gonum.
		for om := 0.5; om < 2; om += 0.0137 {
			k := 1 - om*om
			a, b, cc, d := 9*c.gamma*c.gamma/16, 3*c.gamma*k/2, k*k+4*c.zeta*c.zeta*om*om, -1.0
			got := cubicRoots(a, b, cc, d)
			comp := mat.NewDense(3, 3, []float64{
				0, 0, -d / a,
				1, 0, -cc / a,
				0, 1, -b / a,
			})
			var eig mat.Eigen
			if !eig.Factorize(comp, mat.EigenNone) {
				t.Fatal("eigen failed")
			}
			var want []float64
			for _, v := range eig.Values(nil) {
				if math.Abs(imag(v)) <= 1e-9*math.Abs(real(v)) {
					want = append(want, real(v))
				}
			}
			if len(got) != len(want) {
				t.Fatalf("ζ %v γ %v Ω %.4f: %d real roots, gonum %d (%v vs %v)", c.zeta, c.gamma, om, len(got), len(want), got, want)
			}
			for _, w := range want {
				best := math.Inf(1)
				for _, g := range got {
					best = math.Min(best, math.Abs(g-w))
				}
				if best > rootTol*math.Max(1, math.Abs(w)) {
					t.Errorf("ζ %v γ %v Ω %.4f: root %g not found in %v", c.zeta, c.gamma, om, w, got)
				}
			}
		}
		// Branch counts about the folds.
		for _, fold := range []float64{c.lower, c.upper} {
			in := hbAmplitudes(c.zeta, c.gamma, (c.lower+c.upper)/2)
			if len(in) != 3 {
				t.Errorf("ζ %v γ %v: %d amplitudes inside the band", c.zeta, c.gamma, len(in))
			}
			inside, outside := fold+foldStep, fold-foldStep
			if fold == c.upper {
				inside, outside = fold-foldStep, fold+foldStep
			}
			if n := len(hbAmplitudes(c.zeta, c.gamma, inside)); n != 3 {
				t.Errorf("ζ %v γ %v: %d amplitudes at Ω %.5f, just inside the fold %.5f", c.zeta, c.gamma, n, inside, fold)
			}
			if n := len(hbAmplitudes(c.zeta, c.gamma, outside)); n != 1 {
				t.Errorf("ζ %v γ %v: %d amplitudes at Ω %.5f, just outside the fold %.5f", c.zeta, c.gamma, n, outside, fold)
			}
		}
	}
	// The upper-branch amplitude at the fold of ζ 0.05, γ 0.018 is 7.4894
	// (REFERENCES.md §5); just inside the fold the largest root is within
	// the 5-decimal rounding of it (dY/dΩ is infinite at the fold, so
	// allow 2e-2).
	ys := hbAmplitudes(0.05, 0.018, 1.33003-1e-6)
	if y := ys[len(ys)-1]; math.Abs(y-7.4894) > 2e-2 {
		t.Errorf("upper amplitude at the fold %.4f, want 7.4894", y)
	}
}

// sweepPoints builds the points of a sweep at f0·Ω with amplitudes amp(Ω),
// times (1 + noise·N(0,1)).
func sweepPoints(f0 float64, oms, amps []float64, noise float64, rng *rand.Rand) []Point {
	pts := make([]Point, len(oms))
	for i := range oms {
		a := amps[i]
		if noise > 0 {
			a *= 1 + noise*rng.NormFloat64()
		}
		pts[i] = Point{FreqHz: f0 * oms[i], Amp: a}
	}
	return pts
}

func grid(from, to, step float64) []float64 {
	n := int(math.Round(math.Abs(to-from) / step))
	out := make([]float64, n+1)
	for i := range out {
		out[i] = from + math.Copysign(step, to-from)*float64(i)
	}
	return out
}

// TestLinearFlanksAreNotJumps: the exact response of a linear resonator,
// |H(ω)| = F/√((ω0² − ω²)² + (2ζω0ω)²) (standard), swept up and down in
// steps of 0.05 %, 0.1 % and 0.3 % of f0 and in uneven steps of 0.02–0.1 %,
// Q up to 200, with 0, 1 and 3 % amplitude noise: no jumps. At Q 200 the
// 0.3 % steps are 1.2 half-power bandwidths and neighbouring points differ
// by up to ×1.8, more than MinRatio: the trend test alone keeps them.
func TestLinearFlanksAreNotJumps(t *testing.T) {
	const f0 = 100.0
	rng := rand.New(rand.NewPCG(1, 2))
	for _, q := range []float64{2, 10, 50, 100, 200} {
		zeta := 1 / (2 * q)
		h := func(om float64) float64 { return 1 / math.Hypot(1-om*om, 2*zeta*om) }
		for _, step := range []float64{0.001, 0.0005, 0.003, 0} {
			for _, noise := range []float64{0, 0.01, 0.03} {
				for _, up := range []bool{true, false} {
					var oms []float64
					if step > 0 {
						oms = grid(0.5, 1.5, step)
					} else {
						// Uneven steps of 0.02 %–0.1 %.
						for om := 0.5; om <= 1.5; om += 0.0002 + 0.0008*rng.Float64() {
							oms = append(oms, om)
						}
					}
					if !up {
						for i, j := 0, len(oms)-1; i < j; i, j = i+1, j-1 {
							oms[i], oms[j] = oms[j], oms[i]
						}
					}
					amps := make([]float64, len(oms))
					for i, om := range oms {
						amps[i] = h(om)
					}
					pts := sweepPoints(f0, oms, amps, noise, rng)
					if js := Find(pts, DefaultConfig()); len(js) != 0 {
						t.Errorf("Q %v step %v noise %v up %v: %d jumps, first %v", q, step, noise, up, len(js), js[0])
					}
					lags := []int{DefaultLag}
					if step > 0 && step <= 0.001 {
						// Deciding at once works for steps up to about
						// a fifth of the half-power bandwidth.
						lags = append(lags, 0, 2)
					}
					for _, lag := range lags {
						d := NewDetector(DefaultConfig(), lag)
						var js []Jump
						for _, p := range pts {
							if j, ok := d.Add(p); ok {
								js = append(js, j)
							}
						}
						if js = append(js, d.Flush()...); len(js) != 0 {
							t.Errorf("Q %v step %v noise %v up %v: streaming with lag %d: %v", q, step, noise, up, lag, js)
						}
					}
				}
			}
		}
	}
}

// TestStepIsFound is the control for the test above: the same linear
// response with its amplitude doubled above one frequency (a step that is
// not in the physics) is flagged there and only there.
func TestStepIsFound(t *testing.T) {
	const f0 = 100.0
	zeta := 1 / (2 * 100.0)
	oms := grid(0.9, 1.1, 0.001)
	amps := make([]float64, len(oms))
	at := 137
	for i, om := range oms {
		amps[i] = 1 / math.Hypot(1-om*om, 2*zeta*om)
		if i >= at {
			amps[i] *= 2
		}
	}
	js := Find(sweepPoints(f0, oms, amps, 0, nil), DefaultConfig())
	if len(js) != 1 || js[0].Index != at || !js[0].Rise {
		t.Fatalf("got %v, want one rise at index %d", js, at)
	}
}

// TestDuffingJumps: the up- and down-sweeps a stepped sweep follows on the
// first-order harmonic-balance response (hb_test.go) jump exactly once
// each, between the two grid points that bracket the fold frequency listed
// in REFERENCES.md §5, in the right direction; with 0, 1 and 3 % amplitude
// noise, steps of ΔΩ = 0.1 % to 1 %, and in the streaming form.
func TestDuffingJumps(t *testing.T) {
	const f0 = 100.0
	cases := []struct {
		name        string
		zeta, gamma float64
		from, to    float64
		steps       []float64 // ΔΩ
		upFold      float64   // where the up-sweep jumps
		upRise      bool
		downFold    float64 // where the down-sweep jumps
		downRise    bool
	}{
		{"hardening ζ 0.05 γ 0.018", 0.05, 0.018, 0.8, 1.6, []float64{0.001, 0.002, 0.005, 0.01}, 1.33003, false, 1.19366, true},
		{"hardening ζ 0.05 γ 0.01", 0.05, 0.01, 0.8, 1.6, []float64{0.001, 0.002, 0.005}, 1.22710, false, 1.15772, true},
		{"hardening ζ 0.01 γ 0.001", 0.01, 0.001, 0.8, 1.6, []float64{0.001, 0.002, 0.005}, 1.39924, false, 1.08150, true},
		{"hardening ζ 0.02 γ 0.01", 0.02, 0.01, 0.8, 1.9, []float64{0.001, 0.002, 0.005}, 1.64998, false, 1.16852, true},
		// Softening: the band is 0.0955 wide and the resonance ζ = 0.01
		// narrow; steps up to a fifth of the half-power bandwidth.
		{"softening ζ 0.01 γ −1e−4", 0.01, -1e-4, 0.8, 1.2, []float64{0.001, 0.002}, 0.96122, true, 0.86577, false},
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for _, c := range cases {
		for _, step := range c.steps {
			for _, dir := range []string{"up", "down"} {
				oms := grid(c.from, c.to, step)
				fold, rise := c.upFold, c.upRise
				if dir == "down" {
					oms = grid(c.to, c.from, step)
					fold, rise = c.downFold, c.downRise
				}
				amps := hbSweep(c.zeta, c.gamma, oms)
				for _, noise := range []float64{0, 0.01, 0.03} {
					pts := sweepPoints(f0, oms, amps, noise, rng)
					check := func(how string, js []Jump) {
						t.Helper()
						if len(js) != 1 {
							t.Errorf("%s step %v %s-sweep noise %v %s: %d jumps %v, want 1", c.name, step, dir, noise, how, len(js), js)
							return
						}
						j := js[0]
						lo, hi := math.Min(j.FromHz, j.ToHz), math.Max(j.FromHz, j.ToHz)
						if !(lo < f0*fold && f0*fold < hi) || j.Rise != rise || j.Index != j.Prev+1 {
							t.Errorf("%s step %v %s-sweep noise %v %s: %v, want the step across %.5f Hz, rise %v", c.name, step, dir, noise, how, j, f0*fold, rise)
						}
					}
					check("Find", Find(pts, DefaultConfig()))
					lags := []int{DefaultLag}
					if step <= 0.002 {
						// Deciding at once, or after 2 points, is tested
						// on the finer steps only (see Detector).
						lags = append(lags, 0, 2)
					}
					for _, lag := range lags {
						d := NewDetector(DefaultConfig(), lag)
						var js []Jump
						for _, p := range pts {
							if j, ok := d.Add(p); ok {
								js = append(js, j)
							}
						}
						js = append(js, d.Flush()...)
						check(fmt.Sprintf("Detector lag %d", lag), js)
					}
				}
			}
		}
	}
}

// TestSkipsUnusablePoints: non-finite or non-positive amplitudes and
// repeated frequencies are skipped, and indices still refer to the input.
func TestSkipsUnusablePoints(t *testing.T) {
	pts := []Point{
		{100, 1}, {101, 1.01}, {102, 1.02}, {103, math.NaN()}, {104, 1.03},
		{105, 1.04}, {105, 9}, {106, 0}, {107, 3.2}, {108, 3.25}, {109, 3.3}, {110, 3.35},
	}
	js := Find(pts, DefaultConfig())
	if len(js) != 1 || js[0].Index != 8 || js[0].Prev != 5 || !js[0].Rise {
		t.Fatalf("got %v, want one rise from point 5 to point 8", js)
	}
	d := NewDetector(DefaultConfig(), DefaultLag)
	for pass := 0; pass < 2; pass++ { // the second pass after Reset
		var got []Jump
		for _, p := range pts {
			if j, ok := d.Add(p); ok {
				got = append(got, j)
			}
		}
		got = append(got, d.Flush()...)
		if len(got) != 1 || got[0] != js[0] {
			t.Fatalf("pass %d: Detector %v, Find %v", pass, got, js)
		}
		d.Reset()
	}
	defer func() {
		if recover() == nil {
			t.Error("NewDetector with a negative lag did not panic")
		}
	}()
	NewDetector(DefaultConfig(), -1)
}

func TestConfigValidate(t *testing.T) {
	if err := DefaultConfig().Validate(); err != nil {
		t.Fatal(err)
	}
	if err := (Config{}).Validate(); err != nil {
		t.Fatalf("zero Config (defaults): %v", err)
	}
	for _, c := range []Config{
		{K: -1}, {MinRatio: 0.5}, {MinRatio: 1}, {Span: -2}, {MinDev: -1}, {MinAmp: -1}, {K: math.NaN()},
	} {
		if err := c.Validate(); !errors.Is(err, ErrConfig) {
			t.Errorf("%+v: %v, want ErrConfig", c, err)
		}
	}
	defer func() {
		if recover() == nil {
			t.Error("Find with a bad config did not panic")
		}
	}()
	Find(nil, Config{K: -1})
}

func TestJumpString(t *testing.T) {
	j := Jump{Index: 5, Prev: 4, FromHz: 133.0, ToHz: 133.2, AmpBefore: 7.48, AmpAfter: 1.3}
	want := "jump down ×5.75 between 133 Hz and 133.2 Hz (points 4–5, 7.48 → 1.3)"
	if got := j.String(); got != want {
		t.Errorf("got %q, want %q", got, want)
	}
}

func BenchmarkFind(b *testing.B) {
	oms := grid(0.8, 1.6, 0.001)
	pts := sweepPoints(100, oms, hbSweep(0.05, 0.018, oms), 0.01, rand.New(rand.NewPCG(1, 1)))
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		Find(pts, DefaultConfig())
	}
}

func BenchmarkDetectorAdd(b *testing.B) {
	oms := grid(0.8, 1.6, 0.001)
	pts := sweepPoints(100, oms, hbSweep(0.05, 0.018, oms), 0.01, rand.New(rand.NewPCG(1, 1)))
	d := NewDetector(DefaultConfig(), DefaultLag)
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if i%len(pts) == 0 {
			d.Reset()
		}
		d.Add(pts[i%len(pts)])
	}
}
