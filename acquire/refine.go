package acquire

import (
	"fmt"
	"math"

	"github.com/sweeplock/sweeplock/dsp/jump"
)

// Refining a jump. On a hysteresis band going back changes the branch, so
// a jump can only be narrowed by re-approaching it from the side it was
// first approached from, on the branch it was first approached on (a fact
// of the trade). The bench therefore goes back beyond the band (beyond the
// other direction's jump when it is known, else to the leg's start), steps
// back towards the jump at the plan's step without logging, then crosses
// the jump interval in finer steps that are logged (note "refine N"). Each
// round divides the step by Plan.RefineFactor; Plan.RefineSteps rounds.

// planRefine inserts round `level` of the refinement of jump ji after the
// current step.
func (b *Bench) planRefine(ji, level int) {
	j := b.jumps[ji]
	dir := Up
	if j.Direction == "down" {
		dir = Down
	}
	lo, hi := math.Min(j.FromHz, j.ToHz), math.Max(j.FromHz, j.ToHz)
	step := b.cfg.Plan.stepNear(lo)
	fine := (hi - lo) / b.cfg.Plan.RefineFactor
	if fine <= 0 || step <= 0 {
		return
	}
	leg := b.cfg.Plan.legFreqs()
	legLo, legHi := leg[0], leg[len(leg)-1]
	var opp *JumpJSON
	for i := range b.jumps {
		if b.jumps[i].Direction != j.Direction {
			opp = &b.jumps[i]
		}
	}
	var steps []Step
	add := func(f float64, kind StepKind) {
		steps = append(steps, Step{FreqHz: f, Direction: dir, Kind: kind, Level: level})
	}
	cur := b.freq
	if dir == Up {
		back := legLo
		if opp != nil {
			back = math.Max(legLo, math.Min(opp.FromHz, opp.ToHz)-2*step)
		}
		for f := cur - step; f > back+1e-9; f -= step {
			add(f, StepReposition)
		}
		for f := back; f < lo-1e-9; f += step {
			add(f, StepReposition)
		}
		for f := lo; f <= hi+1e-9; f += fine {
			add(f, StepRefine)
		}
	} else {
		back := legHi
		if opp != nil {
			back = math.Min(legHi, math.Max(opp.FromHz, opp.ToHz)+2*step)
		}
		for f := cur + step; f < back-1e-9; f += step {
			add(f, StepReposition)
		}
		for f := back; f > hi+1e-9; f -= step {
			add(f, StepReposition)
		}
		for f := hi; f >= lo-1e-9; f -= fine {
			add(f, StepRefine)
		}
	}
	rest := append([]Step(nil), b.steps[b.planIdx+1:]...)
	b.steps = append(append(b.steps[:b.planIdx+1], steps...), rest...)
	b.refJump, b.refPts = ji, b.refPts[:0]
	b.say(fmt.Sprintf("refining the %s-sweep jump (%.4f..%.4f Hz), round %d: going back beyond the band and re-approaching in %.4g Hz steps",
		j.Direction, lo, hi, level, fine))
}

// refinePoint takes a logged refine point; after the round's last point it
// narrows the jump's interval and plans the next round.
func (b *Bench) refinePoint(p Point, st Step) {
	b.refPts = append(b.refPts, jump.Point{FreqHz: p.FreqSetHz, Amp: p.Amp[0]})
	if next := b.planIdx + 1; next < len(b.steps) && b.steps[next].Kind == StepRefine && b.steps[next].Level == st.Level {
		return
	}
	found := jump.Find(b.refPts, jump.Config{})
	j := &b.jumps[b.refJump]
	if len(found) != 1 {
		b.say(fmt.Sprintf("round %d of refining the %s-sweep jump found %d jumps in its finer steps: kept %.4f..%.4f Hz",
			st.Level, j.Direction, len(found), j.FromHz, j.ToHz))
		return
	}
	f := found[0]
	j.FromHz, j.ToHz, j.AmpBefore, j.AmpAfter = f.FromHz, f.ToHz, f.AmpBefore, f.AmpAfter
	j.Refined = st.Level
	b.say(fmt.Sprintf("refined the %s-sweep jump to %.4f..%.4f Hz (round %d)", j.Direction, f.FromHz, f.ToHz, st.Level))
	b.updateBand()
	if st.Level < b.cfg.Plan.RefineSteps {
		b.planRefine(b.refJump, st.Level+1)
	}
}
