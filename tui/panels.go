package tui

import (
	"fmt"
	"math"
	"strings"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/dsp/settle"
)

// headW is the width of the section labels in the left panel.
const headW = 9

func head(l *line, name string) {
	l.add(stHead, padRight(name, headW))
}

// headerLines are the two top rows: the source and its health; the mode,
// auto-log, the pending note and the record.
func (m *Model) headerLines(w int) []line {
	s := &m.snap
	var a line
	a.add(stTitle, " sweeplock ")
	a.space(1)
	src, st := s.Source, s.Stats
	// health first, so a narrow window still shows it
	if m.have {
		if st.Connected {
			a.add(stGood, "● connected")
		} else {
			a.add(stBad, "✖ NOT CONNECTED")
			if st.Detail != "" {
				a.add(stBad, " ("+st.Detail+")")
			}
		}
		a.space(2)
	}
	trouble := func(name string, n uint64) {
		stl := stDim
		if n > 0 {
			stl = stSlow
		}
		a.add(stl, fmt.Sprintf("%s %d", name, n))
		a.space(2)
	}
	trouble("dropped", st.Dropped)
	trouble("gaps", st.Gaps)
	trouble("overloads", st.Overloads)
	if st.Errors > 0 {
		trouble("bad frames", st.Errors)
	}
	if src.Kind != "" {
		a.add(stValue, src.Kind)
		a.plain(fmt.Sprintf(" %s Hz", fmtSig(src.RateHz, 6)))
		if src.Name != "" {
			a.plain(fmt.Sprintf(" %q", src.Name))
		}
	} else {
		a.add(stDim, "waiting for the bench…")
	}

	var b line
	mode := strings.ToUpper(s.Mode.String())
	switch {
	case m.quitting:
		mode = "STOPPING"
	case m.finished:
		mode = "STOPPED"
	}
	b.add(stMode, " "+mode+" ")
	b.space(2)
	auto := "auto-log off"
	autoSt := stDim
	if s.AutoLog {
		auto, autoSt = "auto-log ON", stOn
	}
	if s.Mode == acquire.ModeManual {
		b.add(stDim, fmt.Sprintf("sweep plan %d points · g starts it", s.PlanTotal))
	} else {
		tail := fmt.Sprintf(" %d/%d", s.PlanDone, s.PlanTotal)
		word := "ended at"
		switch s.Mode {
		case acquire.ModeSweep:
			word = "going " + s.Direction.String()
		case acquire.ModePaused:
			word = "paused at"
		}
		b.plain(word + " ")
		frac := 0.0
		if s.PlanTotal > 0 {
			frac = float64(s.PlanDone) / float64(s.PlanTotal)
		}
		bw := min(w-b.w-len(tail)-len(auto)-3, 50)
		st := stBar
		if s.Mode == acquire.ModePaused {
			st = stWarn
		}
		b.add(st, progress(frac, bw))
		b.plain(tail)
	}
	if b.w+len(auto)+2 <= w {
		b.space(w - b.w - len(auto) - 1)
	} else {
		b.space(2)
	}
	b.add(autoSt, auto)
	return []line{a, b}
}

// leftLines renders the readings panel at width w and at most h rows:
// drive, response, point state, harmonics, the third-harmonic flag and the
// sweep. When rows are short, the last harmonics give way.
func (m *Model) leftLines(w, h int) []line {
	s := &m.snap
	var out []line
	add := func(l line) { out = append(out, l) }

	// Drive.
	var l line
	head(&l, "DRIVE")
	if s.DriveOn {
		l.add(stOn, "ON ")
	} else {
		l.add(stOff, "OFF")
	}
	l.space(1)
	l.add(stValue, fmtFreq(s.FreqHz, s.StepHz)+" Hz")
	add(l)
	l = line{}
	l.space(headW)
	l.plain("step " + fmtSig(s.StepHz, 4) + " Hz")
	l.add(stDim, " · ")
	l.plain(dirWords(s))
	add(l)
	l = line{}
	l.space(headW)
	u := s.Drive.Unit
	l.plain("set ")
	l.add(stValue, fmtSig(s.AmpSet, 4))
	l.plain(" now ")
	now := stPlain
	if (s.DriveOn && math.Abs(s.AmpNow-s.AmpSet) > 1e-3*math.Max(s.AmpSet, 1e-12)) || (!s.DriveOn && s.AmpNow > 0) {
		now = stWarn // ramping
	}
	l.add(now, fmtSig(s.AmpNow, 4))
	l.plain(" " + u)
	if now == stWarn {
		l.add(stWarn, " ramping")
	}
	add(l)
	l = line{}
	l.space(headW)
	l.add(stDim, "limits ")
	l.plain(fmtSig(s.LimitAmp, 4) + " " + u)
	l.add(stDim, " · disp ")
	if s.LimitDisp > 0 {
		l.plain(fmtSig(s.LimitDisp, 4) + " " + s.Unit)
	} else {
		l.add(stDim, "none")
	}
	add(l)

	// Response.
	l = line{}
	head(&l, "RESPONSE")
	a1, ph1 := math.NaN(), math.NaN()
	if len(s.Amp) > 0 {
		a1 = s.Amp[0]
	}
	if len(s.PhaseDeg) > 0 {
		ph1 = s.PhaseDeg[0]
	}
	l.add(stValue, fmtSig(a1, 4)+" "+s.Unit)
	l.plain("  phase ")
	l.add(stValue, fmtFixed(ph1, 1)+"°")
	if s.LimitDisp > 0 && a1 > 0.8*s.LimitDisp {
		l.add(stSlow, " near limit")
	}
	add(l)
	l = line{}
	l.space(headW)
	tw := w - headW - 8
	if len(s.Trend) > 0 && tw > 4 {
		l.add(stTrace, padRight(sparkline(squeeze(s.Trend, tw), tw), tw))
		span := float64(len(s.Trend)) * s.TrendDt
		l.add(stDim, " "+fmtFixed(span, 1)+" s")
	} else {
		l.add(stDim, "trend: none yet")
	}
	add(l)

	// Point state.
	a, b := m.settleLines(w)
	add(a)
	add(b)

	// Harmonics.
	out = append(out, m.harmonicLines(w, h-leftFixedH)...)

	// Third-harmonic flag: the row is always there so the layout keeps
	// still; it shouts only when the flag is up.
	l = line{}
	switch {
	case s.ThirdFlag:
		l.add(stFlag, fmt.Sprintf(" ▲ 3RD HARMONIC HIGH %s %% > %s %% ", fmtFixed(s.ThirdPct, 2), fmtSig(s.ThirdLimit, 3)))
	case s.ThirdLimit > 0:
		l.add(stDim, fmt.Sprintf("3rd harmonic flag > %s %%: clear", fmtSig(s.ThirdLimit, 3)))
	}
	add(l)

	// Log: where points go and how many; the note for the next one.
	l = line{}
	head(&l, "LOG")
	if s.RecordPath != "" {
		l.add(stValue, s.RecordPath)
	} else {
		l.add(stDim, "nothing logged yet (l logs)")
	}
	add(l)
	l = line{}
	head(&l, "NOTE")
	if s.NextNote != "" {
		l.add(stValue, fmt.Sprintf("%q", s.NextNote))
	} else {
		l.add(stDim, "none · n adds one")
	}
	add(l)

	// The last logged point, when there is room.
	if n := len(s.Points); n > 0 && h-len(out) >= 3 {
		p := &s.Points[n-1]
		l = line{}
		head(&l, "LAST")
		l.plain(fmt.Sprintf("#%d %s ", p.Index, p.Direction))
		l.add(stValue, fmtFreq(p.FreqSetHz, s.StepHz)+" Hz")
		add(l)
		l = line{}
		l.space(headW)
		if len(p.Amp) > 0 && len(p.PhaseDeg) > 0 {
			l.add(stValue, fmtSig(p.Amp[0], 4)+" "+s.Unit)
			l.plain("  " + fmtFixed(p.PhaseDeg[0], 1) + "°  ")
		}
		if p.Settled {
			l.add(stGood, "= "+p.SettleState)
		} else {
			l.add(stBad, "x "+p.SettleState)
		}
		add(l)
		l = line{}
		l.space(headW)
		l.add(stDim, fmt.Sprintf("dwell %s s · THD %s %%", fmtFixed(p.Dwell.Seconds(), 1), fmtFixed(100*p.THD, 2)))
		if p.Note != "" {
			l.add(stDim, fmt.Sprintf(" · %q", p.Note))
		}
		add(l)
	}
	return out
}

// squeeze shortens v to at most n values, each the mean of an equal
// share of v, so a sparkline of n cells spans the whole record.
func squeeze(v []float64, n int) []float64 {
	if len(v) <= n || n <= 0 {
		return v
	}
	out := make([]float64, n)
	for i := range out {
		a, b := i*len(v)/n, (i+1)*len(v)/n
		sum := 0.0
		for _, x := range v[a:b] {
			sum += x
		}
		out[i] = sum / float64(b-a)
	}
	return out
}

// driving reports whether the drive is producing a signal, so harmonic
// ratios mean something (with it off they are ratios of noise).
func driving(s *acquire.Snapshot) bool { return s.DriveOn || s.AmpNow > 0 }

// dirWords says which way the drive is moving.
func dirWords(s *acquire.Snapshot) string {
	if s.Direction != acquire.Up && s.Direction != acquire.Down {
		return "by hand"
	}
	switch s.Mode {
	case acquire.ModeSweep:
		return "sweeping " + s.Direction.String()
	case acquire.ModePaused:
		return "paused going " + s.Direction.String()
	}
	return "sweep ended"
}

// settleLines are the point-state rows: the phase and settle state in
// words and symbol, then a progress bar and time left while settling.
func (m *Model) settleLines(w int) (line, line) {
	s := &m.snap
	var a, b line
	head(&a, "POINT")
	b.space(headW)
	st := s.Settle.State
	sym := st.Symbol() + " "
	bw := w - headW - 18
	bar := func(stl sty) {
		b.add(stl, progress(s.Settle.Progress, bw))
		b.plain(fmt.Sprintf(" %3.0f%%", 100*s.Settle.Progress))
		if r := s.Settle.RemainingS; !math.IsNaN(r) && r > 0 {
			b.plain(" " + fmtFixed(r, 1) + " s left")
		} else {
			b.add(stDim, " time left –")
		}
	}
	switch s.Phase {
	case acquire.PhaseOff:
		a.add(stOff, "drive off")
		b.add(stDim, "d switches the drive on")
	case acquire.PhaseChanging:
		a.add(stWarn, "~ changing")
		b.add(stDim, "waiting for the new setting to arrive")
	case acquire.PhaseSettling:
		switch st {
		case settle.Slow:
			a.add(stSlow, sym+"SLOW — a jump may be near")
			bar(stSlow)
		case settle.GaveUp:
			a.add(stBad, sym+"GAVE UP — not settled")
			b.add(stDim, "logged as not settled")
		default:
			a.add(stWarn, sym+"SETTLING")
			a.add(stDim, fmt.Sprintf(" for %s s", fmtFixed(s.SinceSetS, 1)))
			bar(stWarn)
		}
	case acquire.PhaseMeasuring, acquire.PhaseHolding:
		doing := "holding"
		if s.Phase == acquire.PhaseMeasuring {
			doing = "measuring"
		}
		if st == settle.GaveUp {
			a.add(stBad, sym+"GAVE UP")
			a.add(stDim, " · "+doing)
			b.add(stBad, "not settled within the longest dwell")
		} else {
			a.add(stGood, sym+"SETTLED")
			a.add(stDim, " · "+doing)
			b.add(stGood, progress(1, bw))
			b.plain(" 100%")
			if t := s.Settle.TauS; !math.IsNaN(t) && t > 0 {
				b.add(stDim, " τ "+fmtSig(t, 2)+" s")
			}
		}
	}
	return a, b
}

// dbFloor is the bottom of the harmonic bars: −80 dB (0.01 %) is about
// where a good sensor and a 16-bit input stop telling harmonics from noise
// (common practice).
const dbFloor = -80.0

// harmonicLines lists each harmonic other than the fundamental (at most
// rows of them) as a ratio to it in % and dB with a bar, then THD and the
// noise floor.
func (m *Model) harmonicLines(w, rows int) []line {
	s := &m.snap
	var out []line
	var l line
	head(&l, "HARMONIC")
	l.add(stDim, "  % of 1st     dB")
	if w >= 42 {
		l.add(stDim, " phase")
	}
	out = append(out, l)
	a1 := math.NaN()
	if len(s.Amp) > 0 {
		a1 = s.Amp[0]
	}
	for i := 1; i < len(s.Harmonics) && i < len(s.Amp) && i <= rows; i++ {
		l = line{}
		lab := s.Harmonics[i]
		l.plain(padLeft(lab, headW-2) + "  ")
		r := math.NaN()
		if a1 > 0 && driving(s) {
			r = s.Amp[i] / a1
		}
		l.add(stValue, padLeft(fmtFixed(100*r, 3), 7))
		l.plain(" %")
		db := ratioDB(r)
		l.plain(padLeft(fmtDB(db), 7) + " ")
		if w >= 42 && i < len(s.PhaseDeg) {
			ph := math.NaN()
			if driving(s) {
				ph = s.PhaseDeg[i]
			}
			l.add(stDim, padLeft(fmtFixed(ph, 0)+"°", 5)+" ")
		}
		bw := w - l.w
		st := stBar
		if lab == "3" && s.ThirdFlag {
			st = stBarHi
		}
		frac := (db - dbFloor) / -dbFloor
		l.add(st, hbar(frac, bw))
		out = append(out, l)
	}
	l = line{}
	l.space(2)
	l.plain("THD ")
	thd := math.NaN()
	if driving(s) {
		thd = 100 * s.THD
	}
	l.add(stValue, fmtFixed(thd, 2)+" %")
	l.plain("  noise ")
	noise := s.Noise
	if !(noise > 0) {
		noise = math.NaN() // none measured yet
	}
	l.add(stValue, fmtSig(noise, 2))
	l.plain(" " + s.Unit + "/√Hz")
	out = append(out, l)
	return out
}
