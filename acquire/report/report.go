package report

import (
	"errors"
	"fmt"
	"math"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// Options controls Analyze.
type Options struct {
	// Base fits the base-excitation form F(ω) = F·(ω/ω0)² (a shaker of
	// constant displacement amplitude) instead of a constant force.
	Base bool
	// NoCorrection skips the two-term (third-harmonic) refit.
	NoCorrection bool
}

// Report is the fit of a record and what it says about the record.
type Report struct {
	Run     *Run
	Options Options
	// Fit is the first-order harmonic-balance fit (duffing.Fit), whose
	// curve, folds and band the figure draws.
	Fit duffing.FitResult
	// Corrected is the refit with the third harmonic (two-term harmonic
	// balance), nil when skipped or when it could not be evaluated.
	Corrected *Corrected
	// Super is the record's third harmonic around f0/3.
	Super Superharmonic
	// Warnings say in plain words where the model does not explain the
	// data, or what limits the result.
	Warnings []Warning

	noCorrection string // why Corrected is nil
}

// Warning is one thing a reader of the fit should know.
type Warning struct {
	Code string // short name: "one direction", "structured residuals", …
	Text string // a sentence or two: what was found and what it means
}

// Best returns the parameters to quote: the corrected fit when there is
// one, else the first-order fit, with their standard uncertainties.
func (r *Report) Best() (p, std duffing.Params, q, qStd float64) {
	if c := r.Corrected; c != nil && !math.IsNaN(c.StdErr.F0Hz) {
		return c.Params, c.StdErr, c.Q, c.QStdErr
	}
	return r.Fit.Params, r.Fit.StdErr, r.Fit.Q, r.Fit.QStdErr
}

// FirstOrderJumps returns the jumps and band of the first-order fit.
func (r *Report) FirstOrderJumps() Predicted {
	f := &r.Fit
	pj := Predicted{UpHz: f.UpJumpHz, UpStdHz: f.UpJumpStdHz, DownHz: f.DownJumpHz, DownStdHz: f.DownJumpStdHz,
		Bistable: f.Bistable, BandLoHz: f.BandLoHz, BandHiHz: f.BandHiHz}
	for _, fd := range f.Folds {
		if fd.UpSweep {
			pj.UpKind = fd.Jump
		} else {
			pj.DownKind = fd.Jump
		}
	}
	return pj
}

// BestJumps returns the jumps and band of the model Best quotes.
func (r *Report) BestJumps() Predicted {
	if c := r.Corrected; c != nil && !math.IsNaN(c.StdErr.F0Hz) {
		return c.Jumps
	}
	return r.FirstOrderJumps()
}

// Analyze fits the record's settled points of both sweep directions with
// duffing.Fit (the measured jumps passed as FitOptions.UpJump/DownJump),
// refits with the third harmonic (Corrected) unless opt.NoCorrection,
// looks for a superharmonic peak near f0/3, and collects the warnings.
//
// Errors: ErrNoPoints (nothing usable), and duffing's ErrNoSettled,
// ErrTooFewPoints, ErrFewNearPeak, ErrNoFit, wrapped with the record's
// name and what to do.
func Analyze(run *Run, opt Options) (*Report, error) {
	name := run.Name
	if len(run.Points) == 0 {
		return nil, fmt.Errorf("%w: %s has %d rows and no point with a frequency and an amplitude", ErrNoPoints, name, len(run.Record.Points))
	}
	fopt := duffing.FitOptions{Base: opt.Base, UpJump: run.UpJump.Interval(), DownJump: run.DownJump.Interval()}
	fit, err := duffing.Fit(run.Points, fopt)
	if err != nil {
		return nil, fmt.Errorf("report: %s: %w", name, err)
	}
	rep := &Report{Run: run, Options: opt, Fit: fit}
	if !opt.NoCorrection {
		if c, why := correct(run.Points, fit.Params); why == "" {
			rep.Corrected = &c
		} else {
			rep.noCorrection = why
		}
	}
	best, _, _, _ := rep.Best()
	rep.Super = superharmonicSeen(run, best)
	rep.collectWarnings()
	return rep, nil
}

func (r *Report) warn(code, format string, a ...any) {
	r.Warnings = append(r.Warnings, Warning{Code: code, Text: fmt.Sprintf(format, a...)})
}

// collectWarnings puts together the fit's warnings and the report's own.
func (r *Report) collectWarnings() {
	run, fit, c := r.Run, &r.Fit, r.Corrected
	if run.Record.Truncated {
		r.warn("truncated", "the record's last line was cut off (the run ended while writing it) and was skipped")
	}
	if run.Unusable > 0 {
		r.warn("unusable points", "%d row(s) have no frequency or no fundamental amplitude and were skipped", run.Unusable)
	}
	if run.NotSettled > 0 {
		r.warn("not settled", "%d point(s) were logged as not settled and are left out of the fit; near a jump the transient dies ever more slowly, so such points cluster there", run.NotSettled)
	}
	for _, w := range fit.Warnings {
		switch w.Code {
		case duffing.WarnResidualRuns:
			if c != nil && !math.IsNaN(c.RunsZ) && c.RunsZ > -3 {
				r.warn(w.Code.String(), "the first-order fit's residuals come in long runs of one sign, but those of the fit with the third harmonic do not (runs test z = %.1f): the structure was the third harmonic's pull on the fundamental, so quote the corrected values", c.RunsZ)
				continue
			}
		case duffing.WarnJumpMismatch:
			if c != nil && !math.IsNaN(c.StdErr.F0Hz) {
				continue // judged again below against the two-term model's jumps
			}
		case duffing.WarnOutliers:
			if c != nil && len(c.Outliers) == 0 {
				r.warn(w.Code.String(), "%s; the fit with the third harmonic keeps them all", w.Text)
				continue
			}
		}
		r.warn(w.Code.String(), "%s", w.Text)
	}
	if c != nil {
		if !math.IsNaN(c.RunsZ) && c.RunsZ < -3 {
			r.warn("structured residuals", "even with the third harmonic the residuals change sign too rarely in sweep order (runs test z = %.1f): the model misses structure in the data (another mode, drift, a sensor or drive nonlinearity, or points not fully settled)", c.RunsZ)
		}
		if !c.Converged {
			r.warn("not converged", "the fit with the third harmonic stopped after %d iterations without meeting its convergence test", c.Iterations)
		}
		if math.IsNaN(c.StdErr.F0Hz) {
			r.warn("ill-conditioned", "the fit with the third harmonic has no uncertainties (singular normal matrix); the first-order values are quoted")
		}
	} else if !r.Options.NoCorrection {
		r.warn("no correction", "the fit with the third harmonic was not used (%s): the model does not describe these data well, and the first-order values are quoted", r.noCorrection)
	}
	r.jumpWarnings()
	if s := r.Super; s.Found {
		r.warn("superharmonic", "the third-harmonic ratio rises to %.3g %% at %.6g Hz, near f0/3 (%.6g Hz), from about %.2g %% around it: the superharmonic resonance; the fit uses the fundamental only, so read the third harmonic there", s.PeakPct, s.PeakHz, s.CenterHz, s.BasePct)
	}
	if r.Options.Base && run.Truth != nil {
		r.warn("form", "the simulated rig drives its mass with a force; its true values are for the force form, not the base-excitation form fitted here")
	}
}

// inRange reports whether freqHz lies strictly inside the frequencies of
// the run's points.
func (r *Run) inRange(freqHz float64) bool {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range r.Points {
		lo, hi = math.Min(lo, p.FreqHz), math.Max(hi, p.FreqHz)
	}
	return freqHz > lo && freqHz < hi
}

// jumpWarnings compares the jumps of the model Best quotes with those the
// record shows: a jump seen outside the predicted one by more than the
// larger of the interval's width and three standard uncertainties of the
// prediction (duffing.Fit's rule, applied here to the two-term model when
// there is one); a seen jump the model does not have; and a jump the model
// predicts inside the swept range that the record does not show.
func (r *Report) jumpWarnings() {
	corrected := r.Corrected != nil && !math.IsNaN(r.Corrected.StdErr.F0Hz)
	pj := r.BestJumps()
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range r.Run.Points {
		lo, hi = math.Min(lo, p.FreqHz), math.Max(hi, p.FreqHz)
	}
	check := func(name string, seen Jump, pred, std float64, dirPts int) {
		switch {
		case dirPts == 0:
		case seen.Found && corrected && math.IsNaN(pred):
			r.warn("jump mismatch", "the %s-sweep jumped between %.6g and %.6g Hz but the fitted model has no jump for that sweep", name, seen.LoHz, seen.HiHz)
		case seen.Found && corrected:
			tol := seen.HiHz - seen.LoHz
			if !math.IsNaN(std) {
				tol = math.Max(tol, 3*std)
			}
			if pred < seen.LoHz-tol || pred > seen.HiHz+tol {
				r.warn("jump mismatch", "the fitted model puts the %s-sweep jump at %.6g Hz, but it was seen between %.6g and %.6g Hz", name, pred, seen.LoHz, seen.HiHz)
			}
		case !seen.Found && !math.IsNaN(pred) && pred > lo && pred < hi:
			r.warn("jump mismatch", "the fitted model has the %s-sweep jump at %.6g Hz, inside the swept range (%.6g–%.6g Hz), but the record shows no jump on that sweep", name, pred, lo, hi)
		}
	}
	check("up", r.Run.UpJump, pj.UpHz, pj.UpStdHz, r.Run.Ups)
	check("down", r.Run.DownJump, pj.DownHz, pj.DownStdHz, r.Run.Downs)
}

// Units returns the display units of f0, ζ, β and F for the record's
// amplitude unit u: "Hz", "", "u⁻²s⁻²" (1/(u²·s²)), "u/s²"; ascii gives
// the plain forms "1/(u^2 s^2)" and "u/s^2" (for JSON and scripts).
func Units(u string, ascii bool) (f0, zeta, beta, force string) {
	if u == "" {
		u = "unit"
	}
	if ascii {
		return "Hz", "", "1/(" + u + "^2 s^2)", u + "/s^2"
	}
	return "Hz", "", u + "⁻²s⁻²", u + "/s²"
}

// IsInputError reports whether err says the record itself cannot be used
// — unreadable, not a sweep record, no points, none settled, too few, too
// few near the peak — rather than that the fit failed on a usable record.
func IsInputError(err error) bool {
	for _, e := range []error{ErrRead, ErrNoPoints, acquire.ErrNotRecord, duffing.ErrNoSettled,
		duffing.ErrTooFewPoints, duffing.ErrFewNearPeak, duffing.ErrBadPoint} {
		if errors.Is(err, e) {
			return true
		}
	}
	return false
}
