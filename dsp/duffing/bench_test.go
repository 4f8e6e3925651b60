package duffing

import (
	"math/rand/v2"
	"testing"
)

func BenchmarkRoots(b *testing.B) {
	p := hardening100()
	dst := make([]Root, 0, 3)
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		dst = p.Roots(dst, 80+float64(i%800)*0.1)
	}
}

func BenchmarkFolds(b *testing.B) {
	p := hardening100()
	b.ReportAllocs()
	for b.Loop() {
		p.Folds()
	}
}

// Fit of a 200-point record (100 frequencies, up and down), 0.27 % noise.
func BenchmarkFit200(b *testing.B) {
	pts := hbSweep(hardening100(), linspace(80, 160, 100), 0.02, rand.New(rand.NewPCG(1, 2)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Fit(pts, FitOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
