package report

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"github.com/sweeplock/sweeplock/dsp/duffing"
)

// WriteText writes the report as a plain table: the record, the points
// used, each parameter with its standard uncertainty (first-order fit,
// fit with the third harmonic, and the simulated rig's true value when
// known), the stiffness, the predicted jumps against the measured ones,
// the bistable band, and the warnings.
func (r *Report) WriteText(w io.Writer) error {
	ew := &errWriter{w: w}
	run, fit, c := r.Run, &r.Fit, r.Corrected
	cols := run.Record.Columns
	uF0, _, uBeta, uForce := Units(cols.Unit, false)

	head := run.Name
	if m := run.Record.Meta; m != nil && m.Rig.Name != "" {
		head += " — " + m.Rig.Name
	}
	if !math.IsNaN(run.DriveAmp) {
		head += fmt.Sprintf(", drive %.4g %s", run.DriveAmp, cols.DriveUnit)
	}
	ew.printf("%s\n", head)
	ew.printf("points: %d logged, %d not settled; fitted: %d first order (%d up, %d down",
		len(run.Record.Points), run.NotSettled, fit.Used, countDir(run, fit.Outliers, true), countDir(run, fit.Outliers, false))
	if n := len(fit.Outliers); n > 0 {
		ew.printf("; %d left out", n)
	}
	ew.printf(")")
	if c != nil {
		ew.printf(", %d with 3rd harmonic", c.Used)
		if n := len(c.Outliers); n > 0 {
			ew.printf(" (%d left out)", n)
		}
	}
	ew.printf("\n")
	form := "force drive: F(ω) = F"
	if r.Options.Base {
		form = "base drive: F(ω) = F·(ω/ω0)²"
	}
	ew.printf("model: x'' + 2ζω0·x' + ω0²·x + β·x³ = F(ω)·cos ωt, x in %s (%s)\n\n", unitOr(cols.Unit), form)

	tw := tabwriter.NewWriter(ew, 0, 0, 3, ' ', 0)
	hdr := "\tunit\tfirst order"
	if c != nil {
		hdr += "\twith 3rd harmonic"
	}
	if run.Truth != nil {
		hdr += "\trig's true value"
	}
	fmt.Fprintln(tw, hdr)
	type row struct {
		name, unit string
		v          func(p, std duffing.Params) (float64, float64)
		truth      func(p duffing.Params) float64
	}
	rows := []row{
		{"f0", uF0, func(p, s duffing.Params) (float64, float64) { return p.F0Hz, s.F0Hz }, func(p duffing.Params) float64 { return p.F0Hz }},
		{"zeta", "", func(p, s duffing.Params) (float64, float64) { return p.Zeta, s.Zeta }, func(p duffing.Params) float64 { return p.Zeta }},
		{"beta", uBeta, func(p, s duffing.Params) (float64, float64) { return p.Beta, s.Beta }, func(p duffing.Params) float64 { return p.Beta }},
		{"F", uForce, func(p, s duffing.Params) (float64, float64) { return p.Force, s.Force }, func(p duffing.Params) float64 { return p.Force }},
	}
	for i, rw := range rows {
		v, s := rw.v(fit.Params, fit.StdErr)
		line := "  " + rw.name + "\t" + rw.unit + "\t" + FormatUncertain(v, s)
		if c != nil {
			v, s := rw.v(c.Params, c.StdErr)
			line += "\t" + FormatUncertain(v, s)
		}
		if run.Truth != nil {
			line += "\t" + fmt.Sprintf("%.6g", rw.truth(*run.Truth))
		}
		fmt.Fprintln(tw, line)
		if i == 1 { // Q after zeta
			line := "  Q\t\t" + FormatUncertain(fit.Q, fit.QStdErr)
			if c != nil {
				line += "\t" + FormatUncertain(c.Q, c.QStdErr)
			}
			if run.Truth != nil {
				line += "\t" + fmt.Sprintf("%.6g", run.Truth.Q())
			}
			fmt.Fprintln(tw, line)
		}
	}
	line := "  residual rms\t" + unitOr(cols.Unit) + "\t" + fmt.Sprintf("%.3g", fit.RMS)
	if c != nil {
		line += "\t" + fmt.Sprintf("%.3g", c.RMS)
	}
	fmt.Fprintln(tw, line)
	if c != nil {
		fmt.Fprintln(tw, "  3rd harmonic, largest\t%\t—\t"+fmt.Sprintf("%.3g", c.ThirdPct))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	ew.printf("\n  %s\n", stiffnessText(fit))
	if c != nil {
		if s := shiftText(fit, c); s != "" {
			ew.printf("  %s\n", s)
		}
	}
	if run.Truth != nil {
		ew.printf("  the record comes from the simulated rig: its true parameters (from the sidecar) are shown in %s\n", unitOr(cols.Unit))
	}

	ew.printf("\n")
	if err := r.writeJumps(ew); err != nil {
		return err
	}

	if len(r.Warnings) > 0 {
		ew.printf("\nwarnings:\n")
		for _, wn := range r.Warnings {
			ew.printf("%s\n", wrap("  - "+wn.Code+": "+wn.Text, 100, "    "))
		}
	}
	return ew.err
}

// writeJumps writes the table of predicted and measured jumps.
func (r *Report) writeJumps(w io.Writer) error {
	run := r.Run
	corrected := r.Corrected != nil && !math.IsNaN(r.Corrected.StdErr.F0Hz)
	models := []Predicted{r.FirstOrderJumps()}
	hdr := "jumps\tfirst order"
	if corrected {
		models = []Predicted{r.Corrected.Jumps, r.FirstOrderJumps()}
		hdr = "jumps\twith 3rd harmonic\tfirst order"
	}
	tw := tabwriter.NewWriter(w, 0, 0, 3, ' ', 0)
	fmt.Fprintln(tw, hdr+"\tmeasured")
	best := models[0]
	for _, up := range []bool{true, false} {
		name, seen, n := "down-sweep", run.DownJump, run.Downs
		if up {
			name, seen, n = "up-sweep", run.UpJump, run.Ups
		}
		pred, kind := best.DownHz, best.DownKind
		if up {
			pred, kind = best.UpHz, best.UpKind
		}
		if !math.IsNaN(pred) {
			name += ", " + kind.String()
		}
		line := "  " + name
		for _, m := range models {
			v, s := m.DownHz, m.DownStdHz
			if up {
				v, s = m.UpHz, m.UpStdHz
			}
			p := "none"
			if !math.IsNaN(v) {
				p = FormatUncertain(v, s) + " Hz"
			}
			line += "\t" + p
		}
		m := "no jump seen"
		switch {
		case n == 0:
			m = "not swept"
		case seen.Found:
			k := "down"
			if seen.Rise {
				k = "up"
			}
			m = fmt.Sprintf("%s between %.6g and %.6g Hz", k, seen.LoHz, seen.HiHz)
		case !math.IsNaN(pred) && !run.inRange(pred):
			m = "no jump seen (the prediction lies outside the swept range)"
		}
		fmt.Fprintln(tw, line+"\t"+m)
	}
	line := "  bistable band"
	for _, m := range models {
		b := "none"
		if m.Bistable {
			b = fmt.Sprintf("%.6g to %.6g Hz", m.BandLoHz, m.BandHiHz)
		}
		line += "\t" + b
	}
	measured := "—"
	if run.UpJump.Found && run.DownJump.Found {
		lo := math.Min(mid(run.UpJump), mid(run.DownJump))
		hi := math.Max(mid(run.UpJump), mid(run.DownJump))
		measured = fmt.Sprintf("about %.6g to %.6g Hz", lo, hi)
	}
	fmt.Fprintln(tw, line+"\t"+measured)
	return tw.Flush()
}

func mid(j Jump) float64 { return 0.5 * (j.LoHz + j.HiHz) }

func unitOr(u string) string {
	if u == "" {
		return "unit"
	}
	return u
}

// countDir counts the fitted points of a direction (settled, not left out).
func countDir(run *Run, outliers []int, up bool) int {
	n := 0
	for i, p := range run.Points {
		if !p.Settled || p.Up != up {
			continue
		}
		out := false
		for _, k := range outliers {
			if k == i {
				out = true
			}
		}
		if !out {
			n++
		}
	}
	return n
}

func stiffnessText(fit *duffing.FitResult) string {
	switch fit.Stiffness {
	case duffing.Hardening:
		return "hardening: β > 0, the peak leans towards high frequency"
	case duffing.Softening:
		return "softening: β < 0, the peak leans towards low frequency"
	}
	return "linear within the uncertainty: β is within two standard uncertainties of zero"
}

// shiftText says how far the third harmonic moves the parameters, in
// units of the first-order fit's uncertainty, when any moves by more than
// three of them.
func shiftText(fit *duffing.FitResult, c *Corrected) string {
	type q struct {
		name    string
		a, b, s float64
	}
	worst, wk := 0.0, q{}
	for _, x := range []q{
		{"f0", fit.Params.F0Hz, c.Params.F0Hz, fit.StdErr.F0Hz},
		{"zeta", fit.Params.Zeta, c.Params.Zeta, fit.StdErr.Zeta},
		{"beta", fit.Params.Beta, c.Params.Beta, fit.StdErr.Beta},
		{"F", fit.Params.Force, c.Params.Force, fit.StdErr.Force},
	} {
		if n := math.Abs(x.b-x.a) / x.s; n > worst {
			worst, wk = n, x
		}
	}
	if !(worst > 3) {
		return ""
	}
	return fmt.Sprintf("the third harmonic moves %s by %+.3g %% (%.0f standard uncertainties of the first-order fit): quote the values with the 3rd harmonic",
		wk.name, 100*(wk.b-wk.a)/math.Abs(wk.a), worst)
}

// FormatUncertain formats v ± u with u to two significant digits and v to
// the same decimal place; numbers of 10⁶ and above, or below 10⁻³, share a
// power of ten: "(2.25826 ± 0.00013)e+07". Without a usable u, v is given
// to six significant digits.
func FormatUncertain(v, u float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	if !(u > 0) || math.IsInf(u, 0) {
		return fmt.Sprintf("%.6g", v)
	}
	exp := 0
	if a := math.Max(math.Abs(v), u); a >= 1e6 || a < 1e-3 {
		exp = int(math.Floor(math.Log10(a)))
		v /= math.Pow(10, float64(exp))
		u /= math.Pow(10, float64(exp))
	}
	dec := 1 - int(math.Floor(math.Log10(u)))
	var s string
	if dec >= 0 {
		s = fmt.Sprintf("%.*f ± %.*f", dec, v, dec, u)
	} else {
		step := math.Pow(10, float64(-dec))
		s = fmt.Sprintf("%.0f ± %.0f", math.Round(v/step)*step, math.Round(u/step)*step)
	}
	if exp != 0 {
		s = fmt.Sprintf("(%s)e%+03d", s, exp)
	}
	return s
}

// wrap breaks s into lines of at most width runes at spaces; lines after
// the first start with indent.
func wrap(s string, width int, indent string) string {
	var b strings.Builder
	line := 0
	for i, word := range strings.Fields(s) {
		n := len([]rune(word))
		switch {
		case i == 0:
			if strings.HasPrefix(s, "  ") {
				b.WriteString("  ")
				line = 2
			}
		case line+1+n > width:
			b.WriteString("\n" + indent)
			line = len(indent)
		default:
			b.WriteByte(' ')
			line++
		}
		b.WriteString(word)
		line += n
	}
	return b.String()
}

// errWriter keeps the first write error.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return 0, e.err
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, err
}

func (e *errWriter) printf(format string, a ...any) { fmt.Fprintf(e, format, a...) }
