package report

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"slices"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/dsp/duffing"
	"github.com/sweeplock/sweeplock/dsp/jump"
)

// Run is a sweep record made ready for the fit and the figure.
type Run struct {
	Record *acquire.Record
	Name   string // the record's file name without its folder

	// Points are the record's points with a finite positive frequency and
	// a finite amplitude, in record order, as the fit takes them; Index[i]
	// is the index in Record.Points of Points[i].
	Points []duffing.Point
	Index  []int
	// Unusable counts record points left out of Points (no frequency or
	// amplitude); NotSettled the usable points the settle detector did not
	// pass (never fitted).
	Unusable, NotSettled int
	// Ups and Downs count the settled points of each direction.
	Ups, Downs int

	// UpJump and DownJump are the jumps seen in the record on the up- and
	// the down-sweep.
	UpJump, DownJump Jump

	// DriveAmp is the drive amplitude in the record's drive unit (NaN if
	// the record does not say).
	DriveAmp float64

	// Truth is the simulated rig's true model in the record's display unit,
	// nil unless the sidecar holds the simulated rig's parameters.
	Truth *duffing.Params
}

// Jump is a jump of one sweep direction as seen in the record.
type Jump struct {
	Found      bool
	LoHz, HiHz float64 // the interval between the points either side
	Rise       bool    // the amplitude rose
	// AmpBefore and AmpAfter are the amplitudes either side, in sweep
	// order (display unit).
	AmpBefore, AmpAfter float64
	// FromSidecar says the jump comes from the sidecar's summary (the
	// bench's own finding) rather than from the points here.
	FromSidecar bool
}

// Interval returns the jump as a duffing.Interval (the zero Interval when
// not found).
func (j Jump) Interval() duffing.Interval {
	if !j.Found {
		return duffing.Interval{}
	}
	return duffing.Interval{LoHz: j.LoHz, HiHz: j.HiHz}
}

// Open reads a sweep record (and its sidecar) and prepares it: see NewRun.
// Errors wrap ErrRead (the file cannot be read) or acquire.ErrNotRecord.
func Open(path string) (*Run, error) {
	rec, err := acquire.ReadRecord(path)
	if err != nil {
		if errors.Is(err, acquire.ErrNotRecord) {
			return nil, fmt.Errorf("report: %w (a sweep record is the CSV file that sweeplock sweep or the live screen writes)", err)
		}
		return nil, fmt.Errorf("%w: %v", ErrRead, err)
	}
	return NewRun(rec), nil
}

// NewRun prepares a record: the points as the fit takes them (frequency
// is the drive's set frequency, or the measured one where no set value is
// logged; amplitude is the fundamental), the direction of each point
// (Manual points take the direction of their step from the previous point,
// the first one that of the next step), the measured jumps (from the
// sidecar's summary, else found in the settled points of each direction by
// package jump with its default test), the drive amplitude and, for the
// simulated rig, its true parameters (see TruthFromSidecar).
func NewRun(rec *acquire.Record) *Run {
	r := &Run{Record: rec, Name: filepath.Base(rec.Path), DriveAmp: math.NaN()}
	prevF := math.NaN()
	for i, p := range rec.Points {
		f := p.FreqSetHz
		if !(f > 0) || math.IsInf(f, 0) {
			f = p.FreqMeasHz
		}
		a := math.NaN()
		if len(p.Amp) > 0 {
			a = p.Amp[0]
		}
		if !(f > 0) || math.IsInf(f, 0) || !(a >= 0) || math.IsInf(a, 0) {
			r.Unusable++
			continue
		}
		up := p.Direction == acquire.Up
		if p.Direction == acquire.Manual {
			up = !(f < prevF) // the first manual point: fixed below
		}
		prevF = f
		r.Points = append(r.Points, duffing.Point{FreqHz: f, Amp: a, Up: up, Settled: p.Settled})
		r.Index = append(r.Index, i)
	}
	// A first manual point takes the direction of the step that follows.
	if len(r.Points) > 1 && rec.Points[r.Index[0]].Direction == acquire.Manual {
		r.Points[0].Up = r.Points[1].FreqHz >= r.Points[0].FreqHz
	}
	for _, p := range r.Points {
		switch {
		case !p.Settled:
			r.NotSettled++
		case p.Up:
			r.Ups++
		default:
			r.Downs++
		}
	}
	r.findJumps()
	r.DriveAmp = driveAmp(rec)
	if t, ok := TruthFromSidecar(rec.Meta, r.DriveAmp); ok {
		r.Truth = &t
	}
	return r
}

// driveAmp returns the median drive amplitude of the points, or the
// plan's when the points do not log one.
func driveAmp(rec *acquire.Record) float64 {
	var a []float64
	for _, p := range rec.Points {
		if p.DriveAmp > 0 && !math.IsInf(p.DriveAmp, 0) {
			a = append(a, p.DriveAmp)
		}
	}
	if len(a) > 0 {
		slices.Sort(a)
		return median(a)
	}
	if rec.Meta != nil && rec.Meta.Plan != nil && rec.Meta.Plan.DriveAmp > 0 {
		return rec.Meta.Plan.DriveAmp
	}
	return math.NaN()
}

// findJumps sets UpJump and DownJump. From the sidecar, the jump of a
// direction with the largest amplitude ratio is taken (a refined run
// may list more than one); otherwise package jump looks at the settled
// points of each direction in logging order.
func (r *Run) findJumps() {
	if m := r.Record.Meta; m != nil && m.Summary != nil && len(m.Summary.Jumps) > 0 {
		var best [2]float64
		for _, j := range m.Summary.Jumps {
			d := 0
			switch j.Direction {
			case "up":
			case "down":
				d = 1
			default:
				continue
			}
			ratio := math.Abs(math.Log(j.AmpAfter / j.AmpBefore))
			if math.IsNaN(ratio) {
				ratio = 0
			}
			if ratio < best[d] || !(j.FromHz > 0) || !(j.ToHz > 0) {
				continue
			}
			best[d] = ratio
			jj := Jump{Found: true, LoHz: math.Min(j.FromHz, j.ToHz), HiHz: math.Max(j.FromHz, j.ToHz),
				Rise: j.Rise, AmpBefore: j.AmpBefore, AmpAfter: j.AmpAfter, FromSidecar: true}
			if d == 0 {
				r.UpJump = jj
			} else {
				r.DownJump = jj
			}
		}
		return
	}
	for d, up := range []bool{true, false} {
		var pts []jump.Point
		for _, p := range r.Points {
			if p.Settled && p.Up == up && p.Amp > 0 {
				pts = append(pts, jump.Point{FreqHz: p.FreqHz, Amp: p.Amp})
			}
		}
		js := jump.Find(pts, jump.DefaultConfig())
		var best float64
		for _, j := range js {
			if j.Ratio() <= best {
				continue
			}
			best = j.Ratio()
			jj := Jump{Found: true, LoHz: math.Min(j.FromHz, j.ToHz), HiHz: math.Max(j.FromHz, j.ToHz), Rise: j.Rise,
				AmpBefore: j.AmpBefore, AmpAfter: j.AmpAfter}
			if d == 0 {
				r.UpJump = jj
			} else {
				r.DownJump = jj
			}
		}
	}
}

// TruthFromSidecar returns the simulated rig's true model in the record's
// display unit from the sidecar's sim_params, for a displacement sensor:
// with m per unit = volts_per_unit/sens_v_per_m (the probe's calibration
// over the simulated sensor's sensitivity),
//
//	f0 = natural_hz, ζ = zeta (or 1/(2q)),
//	β_unit = beta_per_m2s2·(m per unit)²,
//	F_unit = gain_m_s2_per_unit·driveAmp/(m per unit),
//
// the force form (the simulated coil drives the mass). ok is false when a
// value is missing or not positive (β may have either sign) or driveAmp is
// not known.
func TruthFromSidecar(m *acquire.Sidecar, driveAmp float64) (duffing.Params, bool) {
	if m == nil || m.Rig.Params == nil || !(m.VoltsPerUnit > 0) || !(driveAmp > 0) {
		return duffing.Params{}, false
	}
	if m.SensorKind != "" && m.SensorKind != "displacement" {
		return duffing.Params{}, false
	}
	get := func(k string) (float64, bool) {
		v, ok := m.Rig.Params[k].(float64)
		return v, ok && !math.IsNaN(v) && !math.IsInf(v, 0)
	}
	f0, ok1 := get("natural_hz")
	beta, ok2 := get("beta_per_m2s2")
	gain, ok3 := get("gain_m_s2_per_unit")
	sens, ok4 := get("sens_v_per_m")
	zeta, ok5 := get("zeta")
	if !ok5 {
		if q, ok := get("q"); ok && q > 0 {
			zeta, ok5 = 1/(2*q), true
		}
	}
	if !(ok1 && ok2 && ok3 && ok4 && ok5) || !(f0 > 0) || !(gain > 0) || !(sens > 0) || !(zeta > 0) {
		return duffing.Params{}, false
	}
	perUnit := m.VoltsPerUnit / sens // metres per display unit
	return duffing.Params{F0Hz: f0, Zeta: zeta, Beta: beta * perUnit * perUnit, Force: gain * driveAmp / perUnit}, true
}
