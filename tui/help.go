package tui

import (
	"github.com/sweeplock/sweeplock/acquire"
)

// binding is one entry of the key table.
type binding struct {
	keys  string // as shown
	short string // on the help line
	long  string // in the help view
}

// keyTable lists the bindings in the order the help line shows them (the
// most used first).
func keyTable() []binding {
	return []binding{
		{"↑ ↓  > <", "step", "step up / down (also → ← . ,)"},
		{"[ ]", "step ÷2 ×2", "halve / double the step"},
		{"s", "type step", "type a step (Hz)"},
		{"f", "type Hz", "type a drive frequency (Hz)"},
		{"+ -", "amp", "amplitude ± 2 % of its limit"},
		{"a", "type amp", "type a drive amplitude"},
		{"d", "drive on/off", "drive on / ramp it off"},
		{"l", "log", "log this point (asks if unsettled)"},
		{"L", "auto-log", "log each settled point: on / off"},
		{"n", "note", "note for the next logged point"},
		{"g", "sweep", "start the sweep (or resume it)"},
		{"space", "pause", "pause / resume the sweep"},
		{"x", "stop sweep", "stop the sweep, ramp down"},
		{"r", "reverse", "turn the running sweep around"},
		{"w", "wave/spectrum", "signal: waveform / spectrum"},
		{"t", "chart", "chart: amplitude / 3rd harmonic %"},
		{"esc", "", "hide caution or error; cancel"},
		{"?", "", "this help"},
		{"q", "", "quit (the drive ramps down first)"},
	}
}

// helpLine is the always-visible key hint, as many entries as fit in w
// with "? keys  q quit" always last.
func helpLine(w int) line {
	var l line
	tail := "? keys  q quit"
	for _, b := range keyTable() {
		if b.short == "" {
			continue
		}
		n := cellWidth(b.keys) + 1 + cellWidth(b.short) + 2
		if l.w+n+len(tail)+1 > w {
			break
		}
		l.add(stKey, b.keys)
		l.add(stDim, " "+b.short+"  ")
	}
	l.add(stKey, "?")
	l.add(stDim, " keys  ")
	l.add(stKey, "q")
	l.add(stDim, " quit")
	return l
}

// Help view sizes.
const (
	helpKeyW = 9  // key column
	helpColW = 40 // one key entry; two side by side from 80 columns
)

// helpLines is the full help view: the safety note first, the keys (in
// two columns when they fit), then what the chart's and the point's
// marks mean, as far as h rows allow.
func helpLines(w, h int) []line {
	var out []line
	para := func(title, text string) {
		var t line
		t.add(stHead, title)
		out = append(out, t)
		for _, s := range wrapWords(text, w-1) {
			var l line
			l.space(1)
			l.plain(s)
			out = append(out, l)
		}
		out = append(out, line{})
	}
	var c line
	c.add(stCaution, "SAFETY")
	c.add(stDim, "  (esc or ? closes this help)")
	out = append(out, c)
	for _, s := range wrapWords(acquire.SafetyNote+".", w-1) {
		var l line
		l.space(1)
		l.plain(s)
		out = append(out, l)
	}
	out = append(out, line{})
	var t line
	t.add(stHead, "KEYS")
	out = append(out, t)
	keys := keyTable()
	cols := max(1, min(2, w/helpColW))
	rows := (len(keys) + cols - 1) / cols
	for r := 0; r < rows; r++ {
		var l line
		for c := 0; c < cols; c++ {
			i := c*rows + r
			if i >= len(keys) {
				break
			}
			var e line
			e.space(1)
			e.add(stKey, padRight(keys[i].keys, helpKeyW))
			e.plain(keys[i].long)
			if c < cols-1 {
				e.fit(helpColW)
			}
			l.join(e)
		}
		out = append(out, l)
	}
	out = append(out, line{})
	para("CHART", "> up-sweep point, < down-sweep point, o logged by hand, x up and down in one cell, "+
		"@ the live reading at the drive frequency (the │ cursor, ┴ on the axis), ┆ a jump, "+
		"═ the bistable band on the axis.")
	para("POINT", "~ settling (bar and time left), = settled, ! slow: a jump may be near, "+
		"x gave up: logged as not settled. Only settled points are logged without asking.")
	if len(out) > h {
		out = out[:h]
	}
	return out
}
