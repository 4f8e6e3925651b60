package tui

import (
	"math"
	"testing"
)

// TestFixtureFolds checks the illustrative resonance the screen tests
// draw against published check values, so the pictures are of a real
// softening curve: for ζ = 0.01, γ = −1e−4 the one-term harmonic balance
// has three steady amplitudes exactly on [0.86577, 0.96122] (REFERENCES.md
// §5, [CALC]: "Softening ζ=0.01, γ=−1e−4: [0.86577, 0.96122]").
func TestFixtureFolds(t *testing.T) {
	// The folds are published to 5 decimals: half a unit in the last place.
	const tolFold = 5e-6 + 1e-7
	count := func(om float64) int { return len(hbAmps(om)) }
	// bisect for where the count of steady amplitudes changes
	edge := func(a, b float64) float64 {
		ca := count(a)
		for i := 0; i < 60; i++ {
			m := (a + b) / 2
			if count(m) == ca {
				a = m
			} else {
				b = m
			}
		}
		return (a + b) / 2
	}
	lo := edge(0.80, 0.90)
	hi := edge(0.90, 1.00)
	if math.Abs(lo-0.86577) > tolFold || math.Abs(hi-0.96122) > tolFold {
		t.Errorf("folds %.6f, %.6f; published 0.86577, 0.96122", lo, hi)
	}
	if n := count(0.9); n != 3 {
		t.Errorf("inside the band at Ω=0.9: %d amplitudes, want 3", n)
	}
	if n := count(1.05); n != 1 {
		t.Errorf("outside the band at Ω=1.05: %d amplitudes, want 1", n)
	}
}

// TestCubicRoots checks the root finder on cubics with known roots
// (expand (x−r1)(x−r2)(x−r3)).
func TestCubicRoots(t *testing.T) {
	// Double precision with a few operations per root.
	const tol = 1e-9
	for _, tc := range []struct {
		name       string
		a, b, c, d float64
		want       []float64
	}{
		{"three real 1,2,3", 1, -6, 11, -6, []float64{1, 2, 3}},
		{"one real 2 (x²+1)", 1, -2, 1, -2, []float64{2}},
		{"scaled 2(x+1)(x−0.5)(x−4)", 2, -7, -5, 4, []float64{-1, 0.5, 4}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := cubicRoots(tc.a, tc.b, tc.c, tc.d)
			if len(got) != len(tc.want) {
				t.Fatalf("roots %v, want %v", got, tc.want)
			}
			for _, w := range tc.want {
				ok := false
				for _, g := range got {
					ok = ok || math.Abs(g-w) < tol
				}
				if !ok {
					t.Errorf("root %g missing from %v", w, got)
				}
			}
		})
	}
}
