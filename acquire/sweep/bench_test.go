package sweep_test

import (
	"context"
	"math"
	"math/cmplx"
	"path/filepath"
	"testing"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/sweep"
)

// dwellEfficiency compares the time the sweep waited at each point with
// the time the linearised transient needs to fall from that step to the
// settle tolerance: τ·ln(|Δz|/(tol·|z|)) with τ = 1/(ζω0) (REFERENCES.md §6;
// the envelope of a linear resonator's transient, a textbook result).
// Points within two steps of a jump are left out: near a fold the transient
// slows down without bound. It returns the ratio of the waits (the dwell,
// from the drive change to the settle decision) to the ideal times, and
// the number of points.
func dwellEfficiency(res *sweep.Result, s *rig.Setup) (ratio float64, n int) {
	c := s.File.Sim
	tau := 1 / ((1 / (2 * c.Q)) * 2 * math.Pi * c.NaturalHz)
	tol := s.File.Plan.SettleTol
	step := s.File.Plan.StepHz
	near := func(f float64) bool {
		for _, j := range res.Jumps {
			if f > math.Min(j.FromHz, j.ToHz)-2*step && f < math.Max(j.FromHz, j.ToHz)+2*step {
				return true
			}
		}
		return false
	}
	var spent, ideal float64
	for i := 1; i < len(res.Points); i++ {
		p, q := res.Points[i], res.Points[i-1]
		if near(p.FreqSetHz) || p.Direction != q.Direction {
			continue
		}
		z := cmplx.Rect(p.Amp[0], p.PhaseDeg[0]*math.Pi/180)
		z0 := cmplx.Rect(q.Amp[0], q.PhaseDeg[0]*math.Pi/180)
		e0 := cmplx.Abs(z-z0) / cmplx.Abs(z)
		t := 0.0
		if e0 > tol {
			t = tau * math.Log(e0/tol)
		}
		spent += p.Dwell.Seconds()
		ideal += t
		n++
	}
	return spent / ideal, n
}

// BenchmarkDemoSweep runs the default demo up/down sweep on virtual time:
// ns/op is its wall time; dwell/ideal is the sweep's settle efficiency.
func BenchmarkDemoSweep(b *testing.B) {
	for i := 0; i < b.N; i++ {
		out := filepath.Join(b.TempDir(), "run.csv")
		s, err := rig.Open("demo", rig.Options{Virtual: true, RecordPath: out, RecordEager: true, Version: "bench"})
		if err != nil {
			b.Fatal(err)
		}
		res, err := sweep.Run(context.Background(), s.Source, s.Drive, s.Bench, sweep.Options{})
		if err != nil {
			b.Fatal(err)
		}
		r, _ := dwellEfficiency(res, s)
		b.ReportMetric(r, "dwell/ideal")
		b.ReportMetric(res.Points[len(res.Points)-1].TimeS, "sim-s")
		s.Close()
	}
}

// The settle detector must not make the sweep dwell much longer than the
// physics needs: away from the jumps, the waits add up to at most 1.5
// times the linearised transient times (the project's target; the times
// compared are simulated seconds, not wall-clock time).
func TestDwellEfficiency(t *testing.T) {
	res, s := runRig(t, "demo", rig.Override{})
	r, n := dwellEfficiency(res, s)
	t.Logf("dwell/ideal over %d points away from the jumps: %.3f", n, r)
	if n < 100 {
		t.Fatalf("only %d points compared", n)
	}
	if r > 1.5 {
		t.Errorf("the sweep waited %.2f times the linearised transient time (target 1.5)", r)
	}
	var _ acquire.Point
}
