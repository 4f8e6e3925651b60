package tui

import (
	"math"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/dsp/settle"
)

// The five screens the golden files hold. Each is a hand-made snapshot of
// the illustrative resonance in fixture_test.go.

func sceneSettling() acquire.Snapshot {
	s := baseSnap()
	pts, _ := sweepPoints(100, 101.5, 0.5, 4, 0)
	for i := range pts {
		pts[i].Direction = acquire.Manual
	}
	s.Points = pts
	liveAt(&s, 102, false)
	s.Messages = []string{
		"drive on: " + acquire.SafetyNote,
		"logged point 2 at 101.0000 Hz: 0.07237 mm (settled) to memory",
		"logged point 3 at 101.5000 Hz: 0.0757 mm (settled) to memory",
	}
	return s
}

func sceneSettled() acquire.Snapshot {
	s := sceneSettling()
	s.Phase = acquire.PhaseHolding
	s.Settle = settle.Status{State: settle.Settled, Blocks: 180, ElapsedS: 3.3, Progress: 1, RemainingS: 0, TauS: 0.131, ErrEst: 2e-4}
	s.SinceSetS = 3.3
	s.AutoLog = false
	s.NextNote = "after re-clamping"
	s.RecordPath = "run-20250314-100000.csv"
	s.Messages = append(s.Messages, "step is now 0.5 Hz")
	return s
}

func sceneThird() acquire.Snapshot {
	s := sceneSettled()
	// stepped down by hand from 118 Hz on the upper branch: the third
	// harmonic grows with the amplitude and passes 1 % near the peak
	pts, _ := sweepPoints(100, 118, 0.5, 0, 26)
	for i := range pts {
		pts[i].Direction = acquire.Manual
	}
	s.Points = pts
	liveAt(&s, 105, true)
	s.Messages = append(s.Messages, "logged point 25 at 105.5000 Hz: 1.029 mm (settled) to run-20250314-100000.csv")
	return s
}

func sceneSweepJump() acquire.Snapshot {
	s := baseSnap()
	pts, jumps := sweepPoints(100, 130, 0.5, 61, 56)
	s.Points = pts
	s.Jumps = jumps
	s.BandLoHz, s.BandHiHz = bandOf(jumps)
	s.Mode = acquire.ModeSweep
	s.Direction = acquire.Down
	s.PlanDone, s.PlanTotal = len(pts), 122
	s.AutoLog = false
	s.RecordPath = "run-20250314-100000.csv"
	s.StepHz = 0.5
	f := 130 - 56*0.5
	liveAt(&s, f, false)
	s.Settle = settle.Status{State: settle.Slow, Progress: 0.2, RemainingS: math.NaN(), TauS: 1.9, ErrEst: 0.05}
	s.SinceSetS = 6.2
	s.Messages = []string{
		"sweep started: 122 points",
		"jump up on the up sweep between 115.0000 and 115.5000 Hz",
		"logged point 116 at 102.5000 Hz: 0.0865 mm (settled) to run-20250314-100000.csv",
	}
	if len(jumps) > 1 {
		s.Messages = append(s.Messages, "jump down on the down sweep between 104.0000 and 103.5000 Hz")
	}
	return s
}

func sceneError() acquire.Snapshot {
	s := sceneSweepJump()
	s.Mode = acquire.ModeDone
	s.DriveOn = false
	s.AmpNow = 0.031
	s.Phase = acquire.PhaseOff
	s.Settle = settle.Status{TauS: math.NaN(), RemainingS: math.NaN(), ErrEst: math.NaN()}
	s.ThirdFlag = false
	s.Stats.Gaps = 2
	s.Err = "displacement 1.512 mm passed the limit 1.5 mm at 112.0000 Hz: sweep stopped, drive ramped down"
	s.Messages = append(s.Messages, "error: "+s.Err)
	return s
}
