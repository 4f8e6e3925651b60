package lockin

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// TestCramerRao measures the efficiency of the Sync amplitude estimate: over
// many seeded trials of a tone A·cos(2πφ+ψ) in white Gaussian noise of
// variance σ², the variance of |Z_1| against the Cramér–Rao bound for the
// amplitude of a real tone, var(Â) ≥ 2σ²/N (REFERENCES.md §3; Rife &
// Boorstyn, IEEE Trans. Inf. Theory 20(5), 1974, for the complex tone; the
// real-tone form from Kay, Fundamentals of Statistical Signal Processing I,
// 1993, Ex. 3.14, from memory). N is the block's frame count. The fit is
// the least-squares (here maximum-likelihood) estimate, so the ratio should
// be 1; it must be at most 1.15 (the project's requirement) and at least
// 0.85 (a ratio clearly below 1 would mean the test or the noise is wrong).
// With 2000 trials the sample variance itself scatters by √(2/1999) = 3.2 %,
// so the band is ±4.7 of its standard deviations.
func TestCramerRao(t *testing.T) {
	const (
		trials = 2000
		amp    = 1.0
		sigma  = 0.1
		rate   = 1000.0
	)
	cases := []struct {
		name   string
		f      float64
		jitter float64
	}{
		{"coherent", 50, 0},
		{"non-coherent", 50.37, 0},
		{"jittered", 50.37, 0.6},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(2024, 6))
			l, err := New(Config{Cycles: 20, RateHz: rate}) // Default harmonics
			if err != nil {
				t.Fatal(err)
			}
			n := int(22 * rate / tc.f)
			tt := make([]float64, n)
			ph := make([]float64, n)
			x := make([]float64, n)
			var sum, sum2 float64
			frames := 0
			for k := 0; k < trials; k++ {
				psi := 2 * math.Pi * rng.Float64()
				for i := range ph {
					tt[i] = (float64(i) + tc.jitter*(rng.Float64()-0.5)) / rate
					ph[i] = tc.f * tt[i]
					x[i] = amp*math.Cos(2*math.Pi*ph[i]+psi) + sigma*rng.NormFloat64()
				}
				l.Reset()
				rs := collect(l, x, tt, ph, n)
				if len(rs) == 0 {
					t.Fatal("no block")
				}
				a := cmplx.Abs(rs[0].At(0, 0))
				sum += a
				sum2 += a * a
				frames += rs[0].Samples
			}
			mean := sum / trials
			v := (sum2 - trials*mean*mean) / (trials - 1)
			N := float64(frames) / trials
			crb := 2 * sigma * sigma / N
			ratio := v / crb
			t.Logf("N = %.1f: var(Â) = %.4e, CRB = %.4e, ratio %.4f, mean Â = %.6f", N, v, crb, ratio, mean)
			if ratio > 1.15 || ratio < 0.85 {
				t.Errorf("variance/CRB = %.4f, want within [0.85, 1.15]", ratio)
			}
			// The mean is unbiased to O(σ²/(A·N)) = 2.5e−5; its own
			// scatter is √(CRB/trials) = 1.6e−4: allow 4 of those.
			if math.Abs(mean-amp) > 4*math.Sqrt(crb/trials) {
				t.Errorf("mean amplitude %.6f, want %g", mean, amp)
			}
		})
	}
}
