package dsp

import (
	"math"
	"testing"
)

// TestTHDModelica checks THD and THDR against the test vector of the
// Modelica Standard Library, Modelica.Blocks.Examples.TotalHarmonicDistortion
// (REFERENCES.md §2, [DOC]): fundamental V1 = 100, third harmonic V3 = 20
// (no second) → THD_F = 0.2, THD_R = 20/√(100²+20²) = 0.196116.
func TestTHDModelica(t *testing.T) {
	const tolF = 1e-15            // 0.2 is exact: √400/100; rounding only
	const tolR = 0.5e-6           // published to 6 decimals
	amps := []float64{100, 0, 20} // A1, A2, A3
	if got := THD(amps); math.Abs(got-0.2) > tolF {
		t.Errorf("THD = %.17g, want 0.2", got)
	}
	if got := THDR(amps); math.Abs(got-0.196116) > tolR {
		t.Errorf("THDR = %.9g, want 0.196116", got)
	}
}

// TestTHDForms checks the definitions on a table: THD_F = √ΣA_k²/A_1 and
// the identity THD_R = THD_F/√(1+THD_F²) that follows from the two
// definitions (exact algebra). Peak and RMS inputs give the same ratio.
func TestTHDForms(t *testing.T) {
	const tol = 1e-15 // a few operations on O(1) numbers
	for _, tc := range []struct {
		name string
		amps []float64
		thdF float64
	}{
		{"pure tone", []float64{1}, 0},
		{"3-4-5", []float64{5, 3, 4}, 1},                 // √(9+16)/5
		{"1 % third", []float64{2, 0, 0.02, 0, 0}, 0.01}, // odd harmonic only
		{"rms scaling", []float64{5 / math.Sqrt2, 3 / math.Sqrt2, 4 / math.Sqrt2}, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f, r := THD(tc.amps), THDR(tc.amps)
			if math.Abs(f-tc.thdF) > tol {
				t.Errorf("THD = %.17g, want %.17g", f, tc.thdF)
			}
			if want := tc.thdF / math.Sqrt(1+tc.thdF*tc.thdF); math.Abs(r-want) > tol {
				t.Errorf("THDR = %.17g, want THD/√(1+THD²) = %.17g", r, want)
			}
		})
	}
	if !math.IsInf(THD([]float64{0, 1}), 1) {
		t.Errorf("THD with zero fundamental = %g, want +Inf", THD([]float64{0, 1}))
	}
}

// TestRatiosDB checks each amplitude over the fundamental and the decibel
// conversion 20·log10 (definition: 0.1 → -20 dB, 1e-3 → -60 dB exactly).
func TestRatiosDB(t *testing.T) {
	const tol = 1e-14
	amps := []float64{0.5, 0.05, 0.0005}
	got := Ratios(nil, amps)
	want := []float64{1, 0.1, 0.001}
	for i := range want {
		if math.Abs(got[i]-want[i]) > tol {
			t.Errorf("Ratios[%d] = %g, want %g", i, got[i], want[i])
		}
	}
	for _, c := range []struct{ r, db float64 }{{1, 0}, {0.1, -20}, {0.001, -60}, {10, 20}} {
		if g := DB(c.r); math.Abs(g-c.db) > tol {
			t.Errorf("DB(%g) = %.17g, want %g", c.r, g, c.db)
		}
	}
	// In place.
	Ratios(amps, amps)
	if math.Abs(amps[1]-0.1) > tol || amps[0] != 1 {
		t.Errorf("in-place Ratios = %v, want [1 0.1 0.001]", amps)
	}
	if a := testing.AllocsPerRun(10, func() { Ratios(amps, amps) }); a != 0 {
		t.Errorf("Ratios with dst allocates %v times, want 0", a)
	}
	for name, f := range map[string]func(){
		"THD empty":       func() { THD(nil) },
		"THDR empty":      func() { THDR(nil) },
		"Ratios mismatch": func() { Ratios(make([]float64, 2), amps) },
		"Ratios empty":    func() { Ratios(nil, nil) },
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

// TestTHDFromSpectrum measures the harmonics of a synthetic distorted tone
// with Spectrum and Peak and checks THD against the generating amplitudes
// (an exact result: THD of a_1 cos θ + a_3 cos 3θ + a_5 cos 5θ is
// √(a_3²+a_5²)/a_1).
func TestTHDFromSpectrum(t *testing.T) {
	// Blackman–Harris between bins: Peak's amplitude error is ~1e-8 (see
	// TestPeakRefinement), far below the 1e-6 allowed on a THD of 0.0125.
	const tol = 1e-6
	const n, rate = 8192, 48000.0
	f0 := 997.3
	x := make([]float64, n)
	a := []float64{1, 0, 0.01, 0, 0.0075}
	for i := range x {
		th := 2 * math.Pi * f0 * float64(i) / rate
		for k, ak := range a {
			x[i] += ak * math.Cos(float64(k+1)*th+0.3*float64(k))
		}
	}
	s := NewSpectrum(n, BlackmanHarris, rate)
	amp := s.Amplitude(nil, x)
	meas := make([]float64, len(a))
	bin := s.BinHz()
	for k := range a {
		c := int(math.Round(float64(k+1) * f0 / bin))
		_, meas[k] = s.Peak(amp, c-3, c+4)
	}
	meas[1], meas[3] = 0, 0 // even harmonics absent: only leakage there
	want := math.Sqrt(0.01*0.01+0.0075*0.0075) / 1
	if got := THD(meas); math.Abs(got-want) > tol {
		t.Errorf("THD from spectrum = %.9f, want %.9f", got, want)
	}
}
