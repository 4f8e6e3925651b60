package duffing

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The exact first-order fold frequencies of REFERENCES.md §5 ([CALC]:
// computed independently from the harmonic-balance relation
// [(1 − Ω² + ¾γY²)² + (2ζΩ)²]Y² = 1, which is given by a web tutorial on
// the Duffing oscillator [DOC] and by Brennan, Kovacic, Carrella, Waters,
// J. Sound Vib. 318 (2008) 1250–1261 in this scaling [MEM]).
func TestFoldsPublished(t *testing.T) {
	// The values are printed to 5 decimals: half a unit in the last place.
	const tolOmega = 5e-6
	cases := []struct {
		name         string
		zeta, gamma  float64
		lo, hi       float64
		yHi, tolYHi  float64 // amplitude at the upper fold where printed (0: not printed)
		yLo, tolYLo  float64 // amplitude at the lower fold where printed
		hiUpSweepJmp Jump    // what an up-sweep does at the upper fold
	}{
		// Y = 7.4894 is printed to 5 figures, but Ω is stationary in Y at a
		// fold, so a search over Y fixes Y only to about 1e-4 there (the
		// scan in TestFoldAmplitudeByScan gives 7.48933): tolerance 1.5e-4.
		{"z0.05 g0.018", 0.05, 0.018, 1.19366, 1.33003, 7.4894, 1.5e-4, 0, 0, JumpDown},
		{"z0.05 g0.01", 0.05, 0.01, 1.15772, 1.22710, 0, 0, 0, 0, JumpDown},
		{"z0.01 g0.001", 0.01, 0.001, 1.08150, 1.39924, 35.730, 5e-4, 0, 0, JumpDown},
		{"z0.01 g1e-4", 0.01, 1e-4, 1.03702, 1.07799, 0, 0, 0, 0, JumpDown},
		{"z0.02 g0.01", 0.02, 0.01, 1.16852, 1.64998, 0, 0, 0, 0, JumpDown},
		// Softening: REFERENCES says the up-sweep jumps UP at 0.96122 and
		// the down-sweep DOWN at 0.86577.
		{"z0.01 g-1e-4 softening", 0.01, -1e-4, 0.86577, 0.96122, 0, 0, 0, 0, JumpUp},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			fs := Nondim{Zeta: c.zeta, Gamma: c.gamma}.Folds()
			if len(fs) != 2 {
				t.Fatalf("got %d folds %+v, want 2", len(fs), fs)
			}
			lo, hi := fs[0], fs[1]
			if math.Abs(lo.FreqHz-c.lo) > tolOmega || math.Abs(hi.FreqHz-c.hi) > tolOmega {
				t.Errorf("folds at Ω = %.6f, %.6f; want %.5f, %.5f", lo.FreqHz, hi.FreqHz, c.lo, c.hi)
			}
			if c.tolYHi > 0 && math.Abs(hi.Amp-c.yHi) > c.tolYHi {
				t.Errorf("Y at the upper fold %.5f, want %.5g", hi.Amp, c.yHi)
			}
			if !hi.UpSweep || lo.UpSweep {
				t.Errorf("UpSweep flags lo %v hi %v; an up-sweep reaches the upper fold", lo.UpSweep, hi.UpSweep)
			}
			wantLo := JumpUp
			if c.hiUpSweepJmp == JumpUp {
				wantLo = JumpDown
			}
			if hi.Jump != c.hiUpSweepJmp || lo.Jump != wantLo {
				t.Errorf("jumps lo %v hi %v, want %v %v", lo.Jump, hi.Jump, wantLo, c.hiUpSweepJmp)
			}
			// The landing amplitude is the remaining stable root just past
			// the fold, on the far side of the three-root region.
			for _, f := range fs {
				past := f.FreqHz * (1 + 1e-6)
				if !f.UpSweep {
					past = f.FreqHz * (1 - 1e-6)
				}
				rs := Nondim{Zeta: c.zeta, Gamma: c.gamma}.Roots(nil, past)
				if len(rs) != 1 {
					t.Fatalf("just past the fold at %.6f: %d roots, want 1", f.FreqHz, len(rs))
				}
				// Tolerance: the root moves by dY/dΩ·1e-6 ≲ 1e-4 relative there.
				if math.Abs(rs[0].Amp-f.LandAmp) > 1e-4*f.LandAmp {
					t.Errorf("fold %.6f lands on %.6f, root just past is %.6f", f.FreqHz, f.LandAmp, rs[0].Amp)
				}
			}
		})
	}
}

// The amplitude at the upper fold by a different route: at fixed Y the
// curve has Ω² = κ − 2ζ² ± √(4ζ⁴ − 4ζ²κ + 1/Y²), κ = 1 + ¾γY² (the
// harmonic balance solved for Ω², derived here), and the upper fold is the
// largest Ω² on it; a dense scan over Y finds it.
func TestFoldAmplitudeByScan(t *testing.T) {
	z, g := 0.05, 0.018
	best, bestY := 0.0, 0.0
	for y := 7.0; y < 7.52; y += 1e-6 {
		p := y * y
		k := 1 + 0.75*g*p
		if d := 4*z*z*z*z - 4*z*z*k + 1/p; d >= 0 {
			if s := k - 2*z*z + math.Sqrt(d); s > best {
				best, bestY = s, y
			}
		}
	}
	fs := Nondim{Zeta: z, Gamma: g}.Folds()
	// Ω at the maximum is exact to rounding; Y only to the flatness of the
	// maximum (rounding of 1e-16 in Ω² moves it by ~1e-7) plus the 1e-6
	// step: 1e-5.
	if math.Abs(math.Sqrt(best)-fs[1].FreqHz) > 1e-10 || math.Abs(bestY-fs[1].Amp) > 1e-5 {
		t.Errorf("scan: Ω %.10f at Y %.6f; Folds: %.10f at %.6f", math.Sqrt(best), bestY, fs[1].FreqHz, fs[1].Amp)
	}
}

// Each fold is where the count of roots changes between 1 and 3, and the
// pair that merges there is a double root of the cubic (h = h' = 0).
func TestFoldsAreTurningPoints(t *testing.T) {
	for _, n := range []Nondim{{0.05, 0.018, false}, {0.01, -1e-4, false}, {0.05, 0.018, true}, {0.03, -0.002, true}} {
		for _, f := range n.Folds() {
			inside, outside := f.FreqHz*(1-1e-6), f.FreqHz*(1+1e-6)
			if !f.UpSweep {
				inside, outside = outside, inside
			}
			if a, b := len(n.Roots(nil, inside)), len(n.Roots(nil, outside)); a != 3 || b != 1 {
				t.Errorf("%+v fold at %.6f: %d roots inside, %d outside; want 3 and 1", n, f.FreqHz, a, b)
			}
			c := n.cubic(f.FreqHz)
			h, dh := c.eval(f.Amp * f.Amp)
			// Both vanish to rounding of terms of size phi and (k+3ep)².
			if math.Abs(h) > 1e-9*c.phi || math.Abs(dh) > 1e-9 {
				t.Errorf("%+v fold at %.6f: h = %g, h' = %g, want both 0", n, f.FreqHz, h, dh)
			}
		}
	}
}

// Hysteresis onset, exact for first-order harmonic balance (REFERENCES.md
// §5 [CALC-derived, verified]): ζ = 0.01 → γ_c = 1.72983e−5 at
// Ω_c = 1.01747; ζ = 0.05 → 2.66097e−3 at 1.09035.
func TestHysteresisOnset(t *testing.T) {
	cases := []struct{ zeta, gamma, omega float64 }{
		{0.01, 1.72983e-5, 1.01747},
		{0.05, 2.66097e-3, 1.09035},
	}
	for _, c := range cases {
		g, om := HysteresisOnset(c.zeta, false)
		// Printed to 6 significant figures / 5 decimals.
		if math.Abs(g-c.gamma) > 5e-6*c.gamma || math.Abs(om-c.omega) > 5e-6 {
			t.Errorf("ζ = %g: onset γ %.6g at Ω %.6f, want %.6g at %.5f", c.zeta, g, om, c.gamma, c.omega)
		}
		// Just above the onset a narrow band opens near Ω_c; just below
		// there is none (the fold quintic has no physical real root).
		for _, soft := range []bool{false, true} {
			g, om := HysteresisOnset(c.zeta, soft)
			above := Nondim{Zeta: c.zeta, Gamma: g * (1 + 1e-3)}.Folds()
			below := Nondim{Zeta: c.zeta, Gamma: g * (1 - 1e-3)}.Folds()
			if len(above) != 2 || len(below) != 0 {
				t.Fatalf("ζ = %g softening %v: %d folds above the onset, %d below; want 2 and 0", c.zeta, soft, len(above), len(below))
			}
			// The band width grows like √(γ − γ_c): at 1e-3 above onset it
			// stays within 1 % of Ω_c.
			for _, f := range above {
				if math.Abs(f.FreqHz-om) > 0.01*om {
					t.Errorf("ζ = %g softening %v: fold at %.5f, onset at %.5f", c.zeta, soft, f.FreqHz, om)
				}
			}
		}
	}
	// ≈ 16.42ζ³ as ζ → 0 (REFERENCES.md §5; 256/(9√3) = 16.4204).
	if g, _ := HysteresisOnset(1e-6, false); math.Abs(g/1e-18-16.42) > 0.005 {
		t.Errorf("γ_c(1e-6)/ζ³ = %.4f, want ≈ 16.42", g/1e-18)
	}
}

// Closed-form jump approximations against the values listed in
// REFERENCES.md §5 (derived there from Ω_pk² = [1 + √(1 + 3γ/(4ζ²))]/2 and
// Ω_u² = 1 + (3/2)(3γ/2)^(1/3); closed forms of this kind are given by
// Brennan et al., J. Sound Vib. 318 (2008) 1250–1261, whose printed forms
// are from memory there).
func TestApproxJumps(t *testing.T) {
	const tol = 5e-6 // 5 printed decimals
	cases := []struct {
		zeta, gamma       float64
		up, down, yPk, yT float64
	}{
		{0.05, 0.018, 1.32850, 1.20416, 7.5273, 5e-5},
		{0.01, 0.001, 1.39919, 1.08245, 0, 0},
	}
	for _, c := range cases {
		n := Nondim{Zeta: c.zeta, Gamma: c.gamma}
		up, down := n.ApproxJumps()
		if math.Abs(up-c.up) > tol || math.Abs(down-c.down) > tol {
			t.Errorf("%+v: approx up-sweep %.6f down-sweep %.6f, want %.5f %.5f", n, up, down, c.up, c.down)
		}
		if c.yT > 0 {
			// Y_pk = 1/(2ζΩ_pk)
			if y := 1 / (2 * c.zeta * up); math.Abs(y-c.yPk) > c.yT {
				t.Errorf("Y_pk = %.5f, want %.4f", y, c.yPk)
			}
		}
	}
	// Softening ζ = 0.01, γ = −1e−4: 1 + 3γ/(4ζ²) = 1/4, so Ω_pk² = 3/4
	// exactly; the down-sweep jump is ≈ Ω_pk (REFERENCES.md §5: √0.75).
	up, down := Nondim{Zeta: 0.01, Gamma: -1e-4}.ApproxJumps()
	if math.Abs(down-math.Sqrt(0.75)) > 1e-15 || !(up < 1) {
		t.Errorf("softening approximations up %.6f down %.6f, want down = √0.75 and up < 1", up, down)
	}
	// Undamped lower-branch fold amplitude Y_u = (2/(3γ))^(1/3)
	// (REFERENCES.md §5).
	if _, y := ApproxUndampedFold(0.018); math.Abs(y-math.Cbrt(2/(3*0.018))) > 1e-14 {
		t.Errorf("Y_u = %g", y)
	}
}

// β = 0 gives the linear response F/√((ω0² − ω²)² + (2ζω0ω)²) with phase
// −atan2(2ζω0ω, ω0² − ω²) (standard textbook result, e.g. any vibration
// text's single-degree-of-freedom forced response), and its peak
// Y = 1/(2ζ√(1 − ζ²)) at Ω² = 1 − 2ζ²; the base form multiplies the force
// by (ω/ω0)², with the peak at Ω² = 1/(1 − 2ζ²).
func TestLinearLimit(t *testing.T) {
	const tol = 1e-13 // relative; a direct formula, rounding only
	for _, base := range []bool{false, true} {
		p := Params{F0Hz: 37.5, Zeta: 0.03, Beta: 0, Force: 2.5, Base: base}
		w0 := p.Omega0()
		for f := 1.0; f < 120; f += 0.37 {
			w := 2 * math.Pi * f
			force := p.Force
			if base {
				force *= w * w / (w0 * w0)
			}
			z := complex(w0*w0-w*w, 2*p.Zeta*w0*w)
			want := force / cmplx.Abs(z)
			rs := p.Roots(nil, f)
			if len(rs) != 1 || !rs[0].Stable {
				t.Fatalf("f = %g: %+v, want one stable root", f, rs)
			}
			if math.Abs(rs[0].Amp-want) > tol*want {
				t.Errorf("base %v f = %g: amp %.15g, want %.15g", base, f, rs[0].Amp, want)
			}
			if ph := -cmplx.Phase(z); math.Abs(rs[0].PhaseRad-ph) > 1e-12 {
				t.Errorf("base %v f = %g: phase %.15g, want %.15g", base, f, rs[0].PhaseRad, ph)
			}
		}
		om, y, ok := p.Nondim().Peak()
		z2 := p.Zeta * p.Zeta
		wantOm := math.Sqrt(1 - 2*z2)
		if base {
			wantOm = 1 / wantOm
		}
		if wantY := 1 / (2 * p.Zeta * math.Sqrt(1-z2)); !ok || math.Abs(om-wantOm) > 1e-13 || math.Abs(y-wantY) > 1e-12*wantY {
			t.Errorf("base %v: linear peak Ω %.15f Y %.15f, want %.15f %.15f", base, om, y, wantOm, wantY)
		}
	}
}

// The dimensional case of REFERENCES.md §5: f0 = 100 Hz, ζ = 0.05,
// x_s = F/ω0² = 1 µm, β = 7.1061e15 m⁻²s⁻² (γ = 0.018) → HB1 jumps at
// 133.003 Hz (down, on an up-sweep) and 119.366 Hz (up, on a down-sweep),
// peak 7.49 µm (the amplitude at the jump down).
func TestDimensional(t *testing.T) {
	w0 := 2 * math.Pi * 100
	p := Params{F0Hz: 100, Zeta: 0.05, Beta: 7.1061e15, Force: 1e-6 * w0 * w0}
	if g := p.Nondim().Gamma; math.Abs(g-0.018) > 1e-5*0.018 {
		t.Fatalf("γ = %.8f, want 0.018 (β printed to 5 figures)", g)
	}
	fs := p.Folds()
	if len(fs) != 2 {
		t.Fatalf("%d folds", len(fs))
	}
	const tolHz = 5e-4 // printed to 3 decimals of a Hz
	if math.Abs(fs[1].FreqHz-133.003) > tolHz || !fs[1].UpSweep || fs[1].Jump != JumpDown {
		t.Errorf("upper fold %+v, want an up-sweep jump down at 133.003 Hz", fs[1])
	}
	if math.Abs(fs[0].FreqHz-119.366) > tolHz || fs[0].UpSweep || fs[0].Jump != JumpUp {
		t.Errorf("lower fold %+v, want a down-sweep jump up at 119.366 Hz", fs[0])
	}
	if math.Abs(fs[1].Amp-7.49e-6) > 0.005e-6 {
		t.Errorf("amplitude at the jump down %.5g m, want 7.49 µm", fs[1].Amp)
	}
	lo, hi, ok := p.Band()
	if !ok || lo != fs[0].FreqHz || hi != fs[1].FreqHz {
		t.Errorf("band %g–%g %v", lo, hi, ok)
	}
	if q := p.Q(); q != 10 {
		t.Errorf("Q = %g, want 1/(2ζ) = 10", q)
	}
	// Backbone ω0√(1 + 3βA²/(4ω0²)) (the HB1 backbone of a web tutorial
	// on the Duffing oscillator, REFERENCES.md §5 [DOC]).
	a := 5e-6
	want := 100 * math.Sqrt(1+3*p.Beta*a*a/(4*w0*w0))
	if got := p.Backbone(a); math.Abs(got-want) > 1e-12*want {
		t.Errorf("backbone at 5 µm %.12g Hz, want %.12g", got, want)
	}
	if got := (Params{F0Hz: 100, Zeta: 0.05, Beta: -1e16, Force: 1}).Backbone(1e-2); !math.IsNaN(got) {
		t.Errorf("softening backbone past zero frequency = %g, want NaN", got)
	}
}

// The cubic's roots against the eigenvalues of its companion matrix from
// gonum/mat (a general-purpose reference library), for seeded random
// cases: every real eigenvalue that is a physical root is found, and no
// other.
func TestRootsAgainstEigen(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	var eig mat.Eigen
	three := 0
	for trial := 0; trial < 500; trial++ {
		n := Nondim{Zeta: math.Pow(10, -2.5+2*rng.Float64()), Gamma: math.Pow(10, -5+4*rng.Float64())}
		if rng.IntN(2) == 0 {
			n.Base = true
		}
		if rng.IntN(3) == 0 {
			n.Gamma = -n.Gamma // the raw cubic, before the softening cut
		}
		om := 0.5 + rng.Float64()
		c := n.cubic(om)
		// p³ + (2k/e)p² + ((k² + c2)/e²)p − phi/e² = 0
		e := c.e
		cm := mat.NewDense(3, 3, []float64{
			-2 * c.k / e, -(c.k*c.k + c.c2) / (e * e), c.phi / (e * e),
			1, 0, 0,
			0, 1, 0,
		})
		if !eig.Factorize(cm, mat.EigenNone) {
			t.Fatal("eigen failed")
		}
		var want []float64
		for _, v := range eig.Values(nil) {
			// Eigenvalues of a companion matrix carry relative errors near
			// √ε at near-double roots; 1e-6 of |v| separates real from complex.
			if math.Abs(imag(v)) <= 1e-6*cmplx.Abs(v) {
				want = append(want, real(v))
			}
		}
		got, cnt := c.roots()
		if cnt == 3 {
			three++
		}
		if cnt != len(want) {
			// A near-double root may be seen as real by one method and
			// complex by the other; it must then be near a fold.
			if _, dh := c.eval(got[0]); math.Abs(dh) > 1e-6 && cnt == 1 && len(want) == 3 {
				t.Errorf("%+v Ω %.4f: %d roots, eigen gives %v", n, om, cnt, want)
			}
			continue
		}
		for i := 0; i < cnt; i++ {
			best := math.Inf(1)
			for _, w := range want {
				best = math.Min(best, math.Abs(w-got[i]))
			}
			// Root of multiplicity 1 from eigenvalues: relative 1e-7 covers
			// the eigen solver's error at moderately close roots.
			if best > 1e-7*got[i] {
				t.Errorf("%+v Ω %.4f: root %.12g not among eigenvalues %v", n, om, got[i], want)
			}
		}
	}
	if three < 20 {
		t.Errorf("only %d of 500 cases had three roots; the draw does not test the bistable case", three)
	}
}

// Softening: the large-amplitude roots of the branch detached from the
// main resonance lie beyond the escape amplitude Y = 1/√|γ| and are
// dropped, as is its fold near Ω ≈ 0.500 (REFERENCES.md §5: ζ = 0.01,
// γ = −1e−4, spurious fold ≈ 0.500 with Y > 100).
func TestSofteningSpurious(t *testing.T) {
	n := Nondim{Zeta: 0.01, Gamma: -1e-4}
	esc := 1 / math.Sqrt(-n.Gamma)
	om := 0.45
	raw, cnt := n.cubic(om).roots()
	if cnt != 3 {
		t.Fatalf("raw cubic at Ω = %g has %d roots, want 3 (1 physical, 2 beyond escape)", om, cnt)
	}
	for i := 1; i < 3; i++ {
		if y := math.Sqrt(raw[i]); y <= esc {
			t.Errorf("raw root Y = %g not beyond escape %g", y, esc)
		}
	}
	rs := n.Roots(nil, om)
	// Physical root ≈ linear 1/(1 − Ω²) softened; well below escape.
	if len(rs) != 1 || rs[0].Amp > 2 {
		t.Errorf("Roots at Ω = %g: %+v, want the one small-amplitude root", om, rs)
	}
	for _, f := range n.Folds() {
		if f.FreqHz < 0.8 {
			t.Errorf("spurious fold kept: %+v", f)
		}
	}
}

// The peak is the largest amplitude along the curve: no stable root on a
// fine frequency grid exceeds it, and the grid comes within the grid's
// resolution of it (an independent brute-force maximum).
func TestPeakIsMaximum(t *testing.T) {
	for _, n := range []Nondim{{0.05, 0.018, false}, {0.01, -1e-4, false}, {0.05, 0.005, true}, {0.05, -0.002, true}} {
		om, y, ok := n.Peak()
		if !ok {
			t.Fatalf("%+v: no peak", n)
		}
		best, bestOm := 0.0, 0.0
		for x := 0.5; x < 2; x += 1e-5 {
			for _, r := range n.Roots(nil, x) {
				if r.Amp > best {
					best, bestOm = r.Amp, x
				}
			}
		}
		// The curve is flat at its maximum: a grid step of 1e-5 in Ω costs
		// at most ~1e-7 relative in amplitude.
		if best > y*(1+1e-9) || best < y*(1-1e-6) || math.Abs(bestOm-om) > 1e-3 {
			t.Errorf("%+v: peak %.7f at %.6f, grid max %.7f at %.6f", n, y, om, best, bestOm)
		}
	}
	// A hardening base-excited curve with 3γ/(16ζ²) ≥ 1 does not close.
	if _, _, ok := (Nondim{Zeta: 0.05, Gamma: 0.018, Base: true}).Peak(); ok {
		t.Error("open base curve reported a peak")
	}
}

func TestValidate(t *testing.T) {
	bad := []Params{
		{F0Hz: 0, Zeta: 0.1, Force: 1},
		{F0Hz: 1, Zeta: 0, Force: 1},
		{F0Hz: 1, Zeta: 0.1, Force: -1},
		{F0Hz: 1, Zeta: 0.1, Force: 1, Beta: math.NaN()},
		{F0Hz: math.Inf(1), Zeta: 0.1, Force: 1},
	}
	for _, p := range bad {
		if p.Validate() == nil {
			t.Errorf("%+v accepted", p)
		}
		if rs := p.Roots(make([]Root, 2), 1); len(rs) != 0 {
			t.Errorf("%+v: roots %+v from invalid params", p, rs)
		}
	}
	if err := (Params{F0Hz: 1, Zeta: 0.1, Force: 0}).Validate(); err != nil {
		t.Error(err)
	}
	if rs := (Params{F0Hz: 1, Zeta: 0.1, Beta: 5}).Roots(nil, 1); len(rs) != 1 || rs[0].Amp != 0 {
		t.Errorf("no forcing: %+v, want rest", rs)
	}
}

func TestRootsAllocs(t *testing.T) {
	p := Params{F0Hz: 100, Zeta: 0.05, Beta: 7106, Force: 394784}
	dst := make([]Root, 0, 3)
	if a := testing.AllocsPerRun(100, func() { dst = p.Roots(dst, 125) }); a != 0 {
		t.Errorf("Roots allocates %v times with a dst of capacity 3", a)
	}
}
