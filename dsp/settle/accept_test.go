package settle

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"sort"
	"testing"
)

// trial is one randomly drawn drive change on a linear resonator.
type trial struct {
	st       step
	tol      float64
	noiseRel float64 // complex noise rms per block, relative to |z∞|
}

// drawTrial draws a drive change: Q log-uniform in [20, 200] at f0 = 100 Hz;
// a new frequency within ±4.5 half-power bandwidths of f0 (80 %) or 10–30 %
// away from it; blocks of M whole cycles with τ spanning 4 to 32 blocks
// (the runner's choice, so that the default 64-block window covers at
// least 2τ); a step from the steady state at a frequency 0.01 %–2 % away
// (90 %) or from rest; a random drive phase; tolerance 1e-3 (70 %) or
// 1e-2; complex Gaussian block noise of rms noise[i]·tol·|z∞|.
func drawTrial(rng *rand.Rand, noise []float64) trial {
	q := 20 * math.Pow(10, rng.Float64())
	r := linear{f0: 100, zeta: 1 / (2 * q), force: 1}
	var f float64
	if rng.Float64() < 0.8 {
		f = r.f0 * (1 + (3*rng.Float64()-1.5)*3/q)
	} else {
		d := 0.1 + 0.2*rng.Float64()
		if rng.Float64() < 0.5 {
			d = -d
		}
		f = r.f0 * (1 + d)
	}
	var m int
	for {
		m = 1 + rng.IntN(16)
		if tb := r.tau() * f / float64(m); tb >= 4 && tb <= 32 {
			break
		}
	}
	phi0 := 2 * math.Pi * rng.Float64()
	tr := trial{tol: 1e-3}
	if rng.Float64() < 0.3 {
		tr.tol = 1e-2
	}
	tr.noiseRel = tr.tol * noise[rng.IntN(len(noise))]
	var x0, v0 float64
	if rng.Float64() >= 0.1 {
		rel := math.Pow(10, -4+2.3*rng.Float64())
		if rng.Float64() < 0.5 {
			rel = -rel
		}
		x0, v0 = fromSteady(r, f*(1-rel), phi0)
	}
	tr.st = newStep(r, f, phi0, m, x0, v0)
	return tr
}

// noisy returns complex Gaussian noise with E|n|² = sigma².
func noisy(rng *rand.Rand, sigma float64) complex128 {
	s := sigma / math.Sqrt2
	return complex(s*rng.NormFloat64(), s*rng.NormFloat64())
}

// outcome of running the detector on one trial.
type outcome struct {
	settled bool    // Settled before the maximum dwell
	blocks  int     // blocks fed until Settled or GaveUp
	falseAt int     // block (1-based) declared Settled with true error > tol; 0 if none
	trueErr float64 // the true error there
	slow    bool    // Slow was reported on the way
}

func runTrial(tr trial, cfg Config, rng *rand.Rand) outcome {
	d := New(cfg)
	d.Reset(tr.st.blockS)
	zs := cmplx.Abs(tr.st.zinf)
	var o outcome
	for k := 0; ; k++ {
		s := d.Update(tr.st.block(k) + noisy(rng, tr.noiseRel*zs))
		o.slow = o.slow || s.State == Slow
		switch s.State {
		case Settled:
			o.settled, o.blocks = true, k+1
			if e := tr.st.relErr(k); e > tr.tol {
				o.falseAt, o.trueErr = k+1, e
			}
			return o
		case GaveUp:
			o.blocks = k + 1
			return o
		}
	}
}

// TestAcceptance is the project's acceptance check of the settle detector
// on the exact transient of a linear resonator (resonator_test.go, a
// standard textbook result) plus seeded noise.
//
// Criteria:
//   - no Settled while the true remaining error |z_k − z∞|/|z∞| of the
//     noiseless block exceeds the tolerance, in any trial;
//   - median decision time at most 1.5 times the analytic settling time.
//
// The decision time is the end of the block at which Settled is first
// reported, (k+1)·T. The analytic time is the envelope one: the block
// error is z_k − z∞ = c1·e^{skT} + c2·e^{s̄kT}, whose modulus is at most
// E(t) = (|c1| + |c2|)·e^{−t/τ}/|z∞|, τ = 1/(ζω0); E falls to the
// tolerance at t_tol = τ·ln(E(0)/tol) (REFERENCES.md §6). The ratio is
// taken over the trials with E(0) ≥ 10·tol (smaller steps settle at the
// minimum dwell; they count towards the first criterion only). A trial
// that gives up counts with the maximum dwell as its time.
func TestAcceptance(t *testing.T) {
	// maxMedian is the acceptance criterion itself.
	const maxMedian = 1.5
	cases := []struct {
		name      string
		knownTau  bool      // ExpectedTauS = the true τ, or unknown (0)
		noise     []float64 // block noise rms, in units of the tolerance
		allSettle bool      // every trial must settle before the maximum dwell
		trials    int
	}{
		{"expected tau known, noise up to 0.3 tol", true, []float64{0, 0.03, 0.1, 0.3}, true, 600},
		{"expected tau unknown, noise up to 0.3 tol", false, []float64{0, 0.03, 0.1, 0.3}, true, 600},
		// Noise equal to the tolerance on every block: beyond what the
		// detector is meant for; some points then give up (and run to
		// the maximum dwell, which makes this case slow), which is
		// allowed, but none may settle falsely.
		{"expected tau known, noise = tol", true, []float64{1}, false, 200},
	}
	for ci, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(uint64(ci)+1, 2))
			var ratios []float64
			gaveUp, slow := 0, 0
			for i := 0; i < c.trials; i++ {
				tr := drawTrial(rng, c.noise)
				tau := tr.st.r.tau()
				cfg := Config{
					Tol:       tr.tol,
					MinBlocks: 8,
					MaxDwellS: 20 * tau * math.Log(1/tr.tol),
				}
				if c.knownTau {
					cfg.ExpectedTauS = tau
				}
				o := runTrial(tr, cfg, rng)
				if o.falseAt > 0 {
					t.Errorf("trial %d (Q %.1f, f %.3f Hz, envelope %.3g, noise %.3g, tol %g): Settled at block %d with true error %.3g",
						i, 1/(2*tr.st.r.zeta), tr.st.w/(2*math.Pi), tr.st.envelope, tr.noiseRel, tr.tol, o.falseAt, o.trueErr)
				}
				if !o.settled {
					gaveUp++
				}
				if o.slow {
					slow++
				}
				if tr.st.envelope >= 10*tr.tol {
					ratios = append(ratios, float64(o.blocks)*tr.st.blockS/tr.st.tTol(tr.tol))
				}
			}
			sort.Float64s(ratios)
			med := ratios[len(ratios)/2]
			t.Logf("%d trials, %d timed: decision/analytic time median %.3f, 90th percentile %.3f, worst %.3f; gave up %d; reported Slow %d",
				c.trials, len(ratios), med, ratios[len(ratios)*9/10], ratios[len(ratios)-1], gaveUp, slow)
			if med > maxMedian {
				t.Errorf("median ratio %.3f > %.1f", med, maxMedian)
			}
			if c.allSettle && gaveUp > 0 {
				t.Errorf("%d trials gave up", gaveUp)
			}
			// A linear resonator at its expected τ is not slow; Slow is
			// advisory, and rare false alarms (about 1 in 3000 trials in
			// longer runs) are tolerated. The 1 % bound is a design
			// target, not a published figure.
			if c.knownTau && slow > c.trials/100 {
				t.Errorf("%d of %d trials reported Slow", slow, c.trials)
			}
		})
	}
}
