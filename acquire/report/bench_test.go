package report

import (
	"testing"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// The whole fit of a 202-point record (hard-0.2-fine): first-order fit,
// the refit with the third harmonic, its jumps, and the warnings.
func BenchmarkAnalyze200(b *testing.B) {
	run := openRecord(b, "hard-0.2-fine")
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Analyze(run, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// The first-order fit alone (duffing.Fit) on the same record.
func BenchmarkFirstOrder200(b *testing.B) {
	run := openRecord(b, "hard-0.2-fine")
	b.ReportAllocs()
	for b.Loop() {
		if _, err := duffing.Fit(run.Points, duffing.FitOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

// One two-term steady state from a first-order one (the inner step of the
// refit); it must not allocate.
func BenchmarkSolveTwoTerm(b *testing.B) {
	p := hardTruth()
	var buf [3]duffing.Root
	r := p.Roots(buf[:0], 130)
	start := r[len(r)-1]
	b.ReportAllocs()
	for b.Loop() {
		if _, ok := solveTwoTerm(p, 130, start); !ok {
			b.Fatal("no state")
		}
	}
}
