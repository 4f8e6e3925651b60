package acquire

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
)

// Direction is the way a sweep moves through frequency.
type Direction int

const (
	// Up sweeps from low to high frequency.
	Up Direction = iota
	// Down sweeps from high to low frequency.
	Down
	// UpDown sweeps up, then back down over the same points.
	UpDown
	// Manual marks points the user stepped to by hand.
	Manual
)

// String returns the plain name used in rig files and records.
func (d Direction) String() string {
	switch d {
	case Up:
		return "up"
	case Down:
		return "down"
	case UpDown:
		return "up-down"
	case Manual:
		return "manual"
	}
	return fmt.Sprintf("Direction(%d)", int(d))
}

// ParseDirection reads "up", "down" or "up-down".
func ParseDirection(s string) (Direction, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "up":
		return Up, nil
	case "down":
		return Down, nil
	case "up-down", "updown", "up-then-down":
		return UpDown, nil
	}
	return 0, fmt.Errorf("acquire: direction %q: allowed are up, down, up-down", s)
}

// Spacing is how the points of a plan are spread between start and stop.
type Spacing int

const (
	// Linear spacing: equal steps in hertz.
	Linear Spacing = iota
	// Log spacing: equal ratios between neighbouring points.
	Log
)

// String returns "linear" or "log".
func (s Spacing) String() string {
	if s == Log {
		return "log"
	}
	return "linear"
}

// ParseSpacing reads "linear" or "log".
func ParseSpacing(s string) (Spacing, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "linear", "lin":
		return Linear, nil
	case "log", "logarithmic":
		return Log, nil
	}
	return 0, fmt.Errorf("acquire: spacing %q: allowed are linear, log", s)
}

// Plan is a stepped sweep: which frequencies, in what order, and how long
// to dwell at each.
type Plan struct {
	StartHz, StopHz float64
	// StepHz is the linear step; when zero, Points sets the count.
	StepHz float64
	// Points is the number of points per direction when StepHz is zero.
	Points    int
	Spacing   Spacing
	Direction Direction
	// MinDwellCycles is the least number of drive cycles to wait after a
	// change before the settle detector may call the response settled.
	MinDwellCycles int
	// MaxDwell is the longest wait for a point to settle; after it the
	// point is logged as not settled.
	MaxDwell time.Duration
	// MeasureCycles is the least number of whole drive cycles a logged
	// measurement spans.
	MeasureCycles int
	// SettleTol is the remaining relative error of the fundamental's
	// complex amplitude below which the response counts as settled.
	SettleTol float64
	// Refine: after a jump, go back beyond it and re-approach from the
	// same side with smaller steps to narrow the jump interval.
	Refine bool
	// RefineSteps is how many times the step is divided by RefineFactor.
	RefineSteps  int
	RefineFactor float64
}

// ErrPlan wraps every plan validation error.
var ErrPlan = errors.New("acquire: bad sweep plan")

// Validate reports the first thing wrong with the plan, naming the field,
// its value and what is allowed.
func (p Plan) Validate() error {
	bad := func(field string, v any, allowed string) error {
		return fmt.Errorf("%w: %s = %v: %s", ErrPlan, field, v, allowed)
	}
	switch {
	case !(p.StartHz > 0) || math.IsInf(p.StartHz, 0):
		return bad("start_hz", p.StartHz, "must be a positive frequency")
	case !(p.StopHz > 0) || math.IsInf(p.StopHz, 0):
		return bad("stop_hz", p.StopHz, "must be a positive frequency")
	case p.StepHz < 0 || math.IsNaN(p.StepHz):
		return bad("step_hz", p.StepHz, "must be positive (or 0 with points set)")
	case p.StepHz == 0 && p.Points < 2:
		return bad("points", p.Points, "give step_hz > 0 or points >= 2")
	case p.Direction == Up && p.StartHz > p.StopHz:
		return bad("start_hz", p.StartHz, fmt.Sprintf("an up sweep needs start_hz below stop_hz (%g); use direction = \"down\" or swap them", p.StopHz))
	case p.Direction == Down && p.StartHz < p.StopHz:
		return bad("start_hz", p.StartHz, fmt.Sprintf("a down sweep needs start_hz above stop_hz (%g); use direction = \"up\" or swap them", p.StopHz))
	case p.Direction == UpDown && p.StartHz >= p.StopHz:
		return bad("start_hz", p.StartHz, fmt.Sprintf("an up-down sweep needs start_hz below stop_hz (%g)", p.StopHz))
	case p.StartHz == p.StopHz:
		return bad("stop_hz", p.StopHz, "must differ from start_hz")
	case p.MinDwellCycles < 0:
		return bad("min_dwell_cycles", p.MinDwellCycles, "must be 0 or more")
	case p.MaxDwell <= 0:
		return bad("max_dwell", p.MaxDwell, "must be a positive duration such as \"30s\"")
	case p.MeasureCycles < 1:
		return bad("measure_cycles", p.MeasureCycles, "must be at least 1")
	case !(p.SettleTol > 0 && p.SettleTol < 0.5):
		return bad("settle_tol", p.SettleTol, "must be between 0 and 0.5 (a fraction, e.g. 0.002)")
	case p.Refine && p.RefineSteps < 1:
		return bad("refine_steps", p.RefineSteps, "must be at least 1 when refine is on")
	case p.Refine && !(p.RefineFactor > 1):
		return bad("refine_factor", p.RefineFactor, "must be above 1 when refine is on")
	}
	if n := len(p.legFreqs()); n > 100000 {
		return bad("step_hz", p.StepHz, fmt.Sprintf("gives %d points; at most 100000", n))
	}
	return nil
}

// legFreqs returns the frequencies of one leg from the lower to the upper
// end of the plan's range.
func (p Plan) legFreqs() []float64 {
	lo, hi := math.Min(p.StartHz, p.StopHz), math.Max(p.StartHz, p.StopHz)
	var out []float64
	switch {
	case p.StepHz > 0 && p.Spacing == Linear:
		n := int(math.Floor((hi-lo)/p.StepHz + 1e-9))
		if n > 200000 {
			n = 200000
		}
		for i := 0; i <= n; i++ {
			out = append(out, lo+float64(i)*p.StepHz)
		}
		if hi-out[len(out)-1] > 1e-9*hi {
			out = append(out, hi)
		}
	case p.StepHz > 0: // log spacing with a step: step is taken at the start
		ratio := 1 + p.StepHz/lo
		for f := lo; f < hi*(1-1e-12) && len(out) < 200000; f *= ratio {
			out = append(out, f)
		}
		out = append(out, hi)
	default:
		n := p.Points
		for i := 0; i < n; i++ {
			x := float64(i) / float64(n-1)
			if p.Spacing == Log {
				out = append(out, lo*math.Pow(hi/lo, x))
			} else {
				out = append(out, lo+(hi-lo)*x)
			}
		}
	}
	return out
}

// Step is one planned point: a target frequency and the leg it belongs to.
type Step struct {
	FreqHz    float64
	Direction Direction // Up or Down
	Kind      StepKind
	// Level counts refinement rounds: 0 for plan points, 1.. for refine
	// points of that round.
	Level int
}

// StepKind says what a step is for.
type StepKind int

const (
	// StepPlan is a point of the plan: settle, measure, log.
	StepPlan StepKind = iota
	// StepReposition moves the drive back beyond a jump to re-approach it
	// on the original branch: settle, do not log.
	StepReposition
	// StepRefine is a finer point near a jump: settle, measure, log.
	StepRefine
)

// Steps lists the planned points in the order they are visited. An up-down
// plan visits the top point once: the down leg starts one step below it.
func (p Plan) Steps() []Step {
	leg := p.legFreqs()
	var out []Step
	up := func() {
		for _, f := range leg {
			out = append(out, Step{FreqHz: f, Direction: Up})
		}
	}
	down := func(skipTop bool) {
		for i := len(leg) - 1; i >= 0; i-- {
			if skipTop && i == len(leg)-1 {
				continue
			}
			out = append(out, Step{FreqHz: leg[i], Direction: Down})
		}
	}
	switch p.Direction {
	case Up:
		up()
	case Down:
		down(false)
	case UpDown:
		up()
		down(true)
	}
	return out
}

// Step size near frequency f: the linear step, or for log spacing the local
// ratio times f.
func (p Plan) stepNear(f float64) float64 {
	leg := p.legFreqs()
	if len(leg) < 2 {
		return 0
	}
	if p.Spacing == Linear {
		return leg[1] - leg[0]
	}
	return f * (leg[1]/leg[0] - 1)
}

// CoherentFreq returns the frequency nearest to targetHz at which a block
// of cycles whole drive cycles spans a whole number of samples at rateHz,
// and that number of cycles and samples. It tries the cycle counts from
// minCycles up to maxCycles that are multiples of multiple (so that every
// subharmonic k/multiple completes whole cycles too) and takes the first
// whose frequency lies within tolHz of the target, else the closest found. Coherent sampling makes the
// block's harmonics exactly orthogonal in the sum (common practice; the
// method of IEEE Std 1241, "coherent sampling").
func CoherentFreq(targetHz, rateHz float64, minCycles, maxCycles, multiple int, tolHz float64) (freqHz float64, cycles, samples int) {
	if multiple < 1 {
		multiple = 1
	}
	if minCycles < multiple {
		minCycles = multiple
	}
	minCycles = (minCycles + multiple - 1) / multiple * multiple
	if maxCycles < minCycles {
		maxCycles = minCycles
	}
	freqHz = targetHz
	bestErr := math.Inf(1)
	for k := minCycles; k <= maxCycles; k += multiple {
		n := int(math.Round(float64(k) * rateHz / targetHz))
		if n < 2 {
			continue
		}
		f := float64(k) * rateHz / float64(n)
		e := math.Abs(f - targetHz)
		if e < bestErr {
			bestErr, freqHz, cycles, samples = e, f, k, n
		}
		if e <= tolHz {
			return f, k, n
		}
	}
	return freqHz, cycles, samples
}
