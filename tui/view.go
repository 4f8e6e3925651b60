package tui

import (
	"strings"

	tea "charm.land/bubbletea/v2"

	"github.com/sweeplock/sweeplock/acquire"
)

// View renders the screen in the alternate screen buffer.
func (m *Model) View() tea.View {
	v := tea.NewView(m.frame())
	v.AltScreen = true
	v.WindowTitle = "sweeplock"
	return v
}

// frame renders the whole screen, exactly m.h rows of m.w cells.
func (m *Model) frame() string {
	lines := m.layout()
	var b strings.Builder
	b.Grow(m.w * m.h * 4)
	for i := range lines {
		if i > 0 {
			b.WriteByte('\n')
		}
		lines[i].render(&b, m.pal)
	}
	return b.String()
}

// Layout sizes.
const (
	minTwoColW  = 70 // narrower windows get one column and no chart
	leftMinW    = 34
	leftMaxW    = 44
	leftFixedH  = 13 // left-panel rows besides the harmonic rows
	minChartH   = 8
	minSignalH  = 4
	maxSignalH  = 8
	minMessageH = 3 // the safety caution needs three rows at 80 columns
	maxMessageH = 6
)

// layout places the header, the body (readings and charts, or the help
// view), the messages and the footer, every line fitted to the width.
func (m *Model) layout() []line {
	w, h := m.w, m.h
	if w < 20 || h < 8 {
		var l line
		l.add(stBad, "window too small for sweeplock")
		l.fit(max(w, 1))
		out := []line{l}
		for len(out) < h {
			var e line
			e.fit(max(w, 1))
			out = append(out, e)
		}
		return out[:max(h, 1)]
	}
	top := m.headerLines(w)
	msgH := min(max(minMessageH+(h-24)/8, minMessageH), maxMessageH)
	// The error and the caution must not hide the latest message: while
	// they are up the message area grows (the body gives up those rows).
	if need := m.noticeRows(w) + 1; need > msgH {
		msgH = min(need, maxMessageH, max(h-12, minMessageH))
	}
	bodyH := h - len(top) - msgH - 1
	var body []line
	if m.help {
		// the help view takes the message area too
		bodyH += msgH
		msgH = 0
	}
	switch {
	case m.help:
		body = helpLines(w, bodyH)
	case w >= minTwoColW:
		body = m.twoColumns(w, bodyH)
	default:
		body = m.leftLines(w, bodyH)
		if rest := bodyH - len(body); rest >= minChartH {
			body = append(body, m.chartLines(w, rest)...)
		}
	}
	out := make([]line, 0, h)
	out = append(out, top...)
	for i := 0; i < bodyH; i++ {
		if i < len(body) {
			out = append(out, body[i])
		} else {
			out = append(out, line{})
		}
	}
	if msgH > 0 {
		out = append(out, m.messageLines(w, msgH)...)
	}
	out = append(out, m.footerLine(w))
	for i := range out {
		out[i].fit(w)
	}
	return out
}

// twoColumns puts the readings on the left and the sweep chart over the
// signal view on the right.
func (m *Model) twoColumns(w, h int) []line {
	lw := min(max(w*45/100, leftMinW), leftMaxW)
	rw := w - lw - 1
	left := m.leftLines(lw, h)
	sigH := min(max(h/5+1, minSignalH), maxSignalH)
	right := m.chartLines(rw, h-sigH)
	for len(right) < h-sigH {
		right = append(right, line{})
	}
	right = append(right, m.signalLines(rw, sigH)...)
	out := make([]line, h)
	for i := range out {
		var l line
		if i < len(left) {
			l = left[i]
		}
		l.fit(lw)
		l.add(stAxis, "│")
		if i < len(right) {
			l.join(right[i])
		}
		out[i] = l
	}
	return out
}

// errorText is the error line's text, "" when there is none to show.
func (m *Model) errorText() string {
	if s := &m.snap; s.Err != "" && s.Err != m.errHidden {
		return "ERROR " + s.Err + " (esc hides)"
	}
	return ""
}

// cautionText is the safety caution's text.
func cautionText() string { return "CAUTION " + acquire.SafetyNote + " (esc hides)" }

// maxErrorRows is how many rows the error line may wrap to.
const maxErrorRows = 2

// noticeRows is how many rows the error and the caution take at width w.
func (m *Model) noticeRows(w int) int {
	n := 0
	if t := m.errorText(); t != "" {
		n += min(len(wrapWords(t, w)), maxErrorRows)
	}
	if m.caution {
		n += len(wrapWords(cautionText(), w))
	}
	return n
}

// messageLines fills the message area: the latest error (until esc), the
// safety caution after the drive first goes on, then the bench's
// messages, newest last, and the screen's own word on the last key.
func (m *Model) messageLines(w, h int) []line {
	s := &m.snap
	var out []line
	if e := m.errorText(); e != "" {
		for i, t := range wrapWords(e, w) {
			if i == maxErrorRows {
				break
			}
			var l line
			l.add(stErr, t)
			out = append(out, l)
		}
	}
	if m.caution && len(out) < h {
		for _, t := range wrapWords(cautionText(), w) {
			var l line
			l.add(stCaution, t)
			out = append(out, l)
		}
	}
	if len(out) > h {
		out = out[:h]
	}
	rest := h - len(out)
	var tail []line
	if m.flash != "" && rest > 0 {
		var l line
		l.add(stWarn, "» "+m.flash)
		tail = append(tail, l)
		rest--
	}
	msgs := s.Messages
	if s.Err != "" && s.Err != m.errHidden {
		// the error line already says it
		var keep []string
		for _, t := range msgs {
			if t != "error: "+s.Err {
				keep = append(keep, t)
			}
		}
		msgs = keep
	}
	if len(msgs) > rest {
		msgs = msgs[len(msgs)-rest:]
	}
	for _, t := range msgs {
		var l line
		st := stDim
		switch {
		case strings.HasPrefix(t, "error: "):
			st = stBad
		case strings.HasPrefix(t, "logged point"):
			st = stGood
		case strings.HasPrefix(t, "jump"):
			st = stJump
		}
		if rest := strings.TrimPrefix(t, "drive on: "); rest != t && rest == acquire.SafetyNote {
			t = "drive on (see the caution: ? shows it again)"
		}
		l.add(st, t)
		out = append(out, l)
	}
	out = append(out, tail...)
	for len(out) < h {
		out = append([]line{{}}, out...)
	}
	return out
}

// footerLine is the input line, a question, the quitting notice, or the
// key hints.
func (m *Model) footerLine(w int) line {
	var l line
	switch {
	case m.input != inNone:
		l.add(stHead, m.prompt())
		l.add(stInput, m.text)
		l.add(stKey, "█")
		l.add(stDim, "  enter sets · esc cancels")
	case m.confirm == askLogUnsettled:
		l.add(stFlag, " This point has not settled: log it anyway, marked as not settled? y / n ")
	case m.confirm == askQuit:
		l.add(stFlag, " A sweep is running: stop it, ramp the drive down and quit? y / n ")
	case m.quitting:
		l.add(stWarn, "ramping drive down… the screen closes when the drive is at zero")
	case m.finished:
		l.add(stBad, "the bench has stopped")
		l.add(stDim, " · q closes the screen")
	default:
		l = helpLine(w)
	}
	return l
}

func (m *Model) prompt() string {
	s := &m.snap
	switch m.input {
	case inFreq:
		return "drive frequency (Hz): "
	case inStep:
		return "step (Hz): "
	case inAmp:
		return "drive amplitude (" + s.Drive.Unit + ", 0 to " + fmtSig(s.LimitAmp, 4) + "): "
	case inNote:
		return "note for the next point: "
	}
	return ""
}
