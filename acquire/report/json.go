package report

import (
	"encoding/json"
	"io"
	"math"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// JSON is the report as WriteJSON writes it: the same content as the
// table, with numbers that are not known left out (null).
type JSON struct {
	Format    string     `json:"format"` // "sweeplock-fit/1"
	Record    string     `json:"record"`
	Rig       string     `json:"rig,omitempty"`
	Unit      string     `json:"unit"`
	DriveUnit string     `json:"drive_unit"`
	DriveAmp  *float64   `json:"drive_amp"`
	Form      string     `json:"form"` // "force" or "base"
	Units     UnitsJSON  `json:"units"`
	Points    PointsJSON `json:"points"`

	FirstOrder ParamsJSON  `json:"first_order"`
	Corrected  *ParamsJSON `json:"with_third_harmonic"`
	Truth      *ParamsJSON `json:"rig_true_values"`
	Best       string      `json:"best"` // which of the two fits to quote

	Stiffness string      `json:"stiffness"`
	UpSweep   JumpJSON    `json:"up_sweep"`
	DownSweep JumpJSON    `json:"down_sweep"`
	Band      *[2]float64 `json:"bistable_band_hz"`

	Superharmonic *SuperJSON    `json:"superharmonic,omitempty"`
	Warnings      []WarningJSON `json:"warnings"`
}

// UnitsJSON names the units of the parameters.
type UnitsJSON struct {
	F0    string `json:"f0"`
	Beta  string `json:"beta"`
	Force string `json:"force"`
	Amp   string `json:"amplitude"`
}

// PointsJSON counts the points.
type PointsJSON struct {
	Logged     int       `json:"logged"`
	Fitted     int       `json:"fitted"`
	Up         int       `json:"up"`
	Down       int       `json:"down"`
	NotSettled int       `json:"not_settled"`
	Unusable   int       `json:"unusable"`
	OutliersHz []float64 `json:"outliers_hz"`
}

// Value is a number with its standard uncertainty.
type Value struct {
	Value *float64 `json:"value"`
	Std   *float64 `json:"std"`
}

// ParamsJSON is one set of parameters.
type ParamsJSON struct {
	F0Hz        Value     `json:"f0_hz"`
	Zeta        Value     `json:"zeta"`
	Q           Value     `json:"q"`
	Beta        Value     `json:"beta"`
	Force       Value     `json:"force"`
	ResidualRMS *float64  `json:"residual_rms,omitempty"`
	Converged   *bool     `json:"converged,omitempty"`
	Iterations  int       `json:"iterations,omitempty"`
	ThirdPct    *float64  `json:"third_harmonic_max_pct,omitempty"`
	Used        int       `json:"points_fitted,omitempty"`
	OutliersHz  []float64 `json:"outliers_hz,omitempty"`
}

// JumpJSON is one sweep direction's jump, predicted and measured.
type JumpJSON struct {
	Kind        string   `json:"kind,omitempty"`   // "jump up" / "jump down" (predicted)
	PredictedHz *float64 `json:"predicted_hz"`     // by the model "best" names
	StdHz       *float64 `json:"predicted_std_hz"` // its standard uncertainty
	FirstHz     *float64 `json:"first_order_hz"`   // by the first-order fit
	FirstStdHz  *float64 `json:"first_order_std_hz"`
	Seen        bool     `json:"seen"`
	SeenLoHz    *float64 `json:"seen_lo_hz"`
	SeenHiHz    *float64 `json:"seen_hi_hz"`
	SeenRise    *bool    `json:"seen_rise"`
}

// SuperJSON is the superharmonic check.
type SuperJSON struct {
	Found    bool    `json:"found"`
	CenterHz float64 `json:"center_hz"`
	PeakHz   float64 `json:"peak_hz"`
	PeakPct  float64 `json:"peak_pct"`
	BasePct  float64 `json:"around_pct"`
	Points   int     `json:"points"`
}

// WarningJSON is one warning.
type WarningJSON struct {
	Code string `json:"code"`
	Text string `json:"text"`
}

// num returns a pointer to v, nil for NaN or ±Inf (JSON has neither).
func num(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

func paramsJSON(p, s duffing.Params, q, qs float64) ParamsJSON {
	return ParamsJSON{
		F0Hz: Value{num(p.F0Hz), num(s.F0Hz)}, Zeta: Value{num(p.Zeta), num(s.Zeta)},
		Q: Value{num(q), num(qs)}, Beta: Value{num(p.Beta), num(s.Beta)}, Force: Value{num(p.Force), num(s.Force)},
	}
}

// JSON returns the report in the layout WriteJSON writes.
func (r *Report) JSON() JSON {
	run, fit, c := r.Run, &r.Fit, r.Corrected
	cols := run.Record.Columns
	uF0, _, uBeta, uForce := Units(cols.Unit, true)
	out := JSON{Format: "sweeplock-fit/1", Record: run.Name, Unit: cols.Unit, DriveUnit: cols.DriveUnit,
		DriveAmp: num(run.DriveAmp), Form: "force",
		Units: UnitsJSON{F0: uF0, Beta: uBeta, Force: uForce, Amp: cols.Unit},
		Points: PointsJSON{Logged: len(run.Record.Points), Fitted: fit.Used,
			Up: countDir(run, fit.Outliers, true), Down: countDir(run, fit.Outliers, false),
			NotSettled: run.NotSettled, Unusable: run.Unusable, OutliersHz: []float64{}},
		Stiffness: fit.Stiffness.String(), Warnings: []WarningJSON{}, Best: "first_order",
	}
	if m := run.Record.Meta; m != nil {
		out.Rig = m.Rig.Name
	}
	if r.Options.Base {
		out.Form = "base"
	}
	for _, i := range fit.Outliers {
		out.Points.OutliersHz = append(out.Points.OutliersHz, run.Points[i].FreqHz)
	}
	out.FirstOrder = paramsJSON(fit.Params, fit.StdErr, fit.Q, fit.QStdErr)
	out.FirstOrder.ResidualRMS = num(fit.RMS)
	conv := fit.Converged
	out.FirstOrder.Converged, out.FirstOrder.Iterations, out.FirstOrder.Used = &conv, fit.Iterations, fit.Used
	if c != nil {
		pj := paramsJSON(c.Params, c.StdErr, c.Q, c.QStdErr)
		pj.ResidualRMS = num(c.RMS)
		conv := c.Converged
		pj.Converged, pj.Iterations, pj.ThirdPct, pj.Used = &conv, c.Iterations, num(c.ThirdPct), c.Used
		for _, i := range c.Outliers {
			pj.OutliersHz = append(pj.OutliersHz, run.Points[i].FreqHz)
		}
		out.Corrected = &pj
		if !math.IsNaN(c.StdErr.F0Hz) {
			out.Best = "with_third_harmonic"
		}
	}
	if t := run.Truth; t != nil {
		nan := math.NaN()
		pj := paramsJSON(*t, duffing.Params{F0Hz: nan, Zeta: nan, Beta: nan, Force: nan}, t.Q(), nan)
		out.Truth = &pj
	}
	best, first := r.BestJumps(), r.FirstOrderJumps()
	jj := func(up bool) JumpJSON {
		var j JumpJSON
		pred, std, kind, seen := best.DownHz, best.DownStdHz, best.DownKind, run.DownJump
		fo, foStd := first.DownHz, first.DownStdHz
		if up {
			pred, std, kind, seen = best.UpHz, best.UpStdHz, best.UpKind, run.UpJump
			fo, foStd = first.UpHz, first.UpStdHz
		}
		if !math.IsNaN(pred) {
			j.Kind = kind.String()
		}
		j.PredictedHz, j.StdHz, j.FirstHz, j.FirstStdHz = num(pred), num(std), num(fo), num(foStd)
		if seen.Found {
			rise := seen.Rise
			j.Seen, j.SeenLoHz, j.SeenHiHz, j.SeenRise = true, num(seen.LoHz), num(seen.HiHz), &rise
		}
		return j
	}
	out.UpSweep, out.DownSweep = jj(true), jj(false)
	if best.Bistable {
		out.Band = &[2]float64{best.BandLoHz, best.BandHiHz}
	}
	if s := r.Super; s.Checked {
		out.Superharmonic = &SuperJSON{Found: s.Found, CenterHz: s.CenterHz, PeakHz: s.PeakHz, PeakPct: s.PeakPct,
			BasePct: s.BasePct, Points: s.Points}
	}
	for _, w := range r.Warnings {
		out.Warnings = append(out.Warnings, WarningJSON(w))
	}
	return out
}

// WriteJSON writes the report as indented JSON (type JSON), for scripts.
func (r *Report) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(r.JSON())
}
