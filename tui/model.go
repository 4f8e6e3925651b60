package tui

import (
	"fmt"
	"math"
	"time"

	tea "charm.land/bubbletea/v2"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/dsp/settle"
)

// Messages the screen sends itself.
type (
	// snapMsg carries the latest snapshot from the bench.
	snapMsg acquire.Snapshot
	// armMsg re-arms the read of the next snapshot after the display
	// interval.
	armMsg struct{}
	// quitTimeoutMsg ends the wait for the final snapshot.
	quitTimeoutMsg struct{}
)

// inputKind is what an input line asks for.
type inputKind int

const (
	inNone inputKind = iota
	inFreq
	inStep
	inAmp
	inNote
)

// confirmKind is what a yes/no question is about.
type confirmKind int

const (
	askNone confirmKind = iota
	askLogUnsettled
	askQuit
)

// signalView is what the small signal panel shows.
type signalView int

const (
	showWave signalView = iota
	showSpectrum
)

// chartView is what the sweep chart plots against frequency.
type chartView int

const (
	chartAmp chartView = iota
	chartThird
)

// Model is the live bench screen. Make one with New and run it with a
// Bubble Tea program; it reads snapshots from the bench by itself.
type Model struct {
	b   Bench
	opt Options
	pal *palette

	snap acquire.Snapshot
	have bool // a snapshot has arrived
	w, h int

	help    bool
	signal  signalView
	chart   chartView
	input   inputKind
	text    string // the input line's text
	confirm confirmKind

	quitting bool // Stop was called; waiting for the final snapshot
	finished bool // the bench has stopped for good
	done     bool // tea.Quit was returned

	everOn    bool    // the drive has been on in this session
	caution   bool    // the safety caution is on screen
	cautionT0 float64 // source time the caution appeared
	errHidden string  // the error the user dismissed
	flash     string  // the screen's own latest word to the user
}

// New makes the screen for a bench.
func New(b Bench, opt Options) *Model {
	opt = opt.withDefaults()
	return &Model{b: b, opt: opt, pal: newPalette(opt.NoColor), w: 80, h: 24}
}

// Init starts reading snapshots.
func (m *Model) Init() tea.Cmd { return m.wait() }

// wait returns a command that blocks, in its own goroutine, until the
// bench publishes a snapshot (STYLE §17: a re-armed read of the one-slot
// latest-value channel).
func (m *Model) wait() tea.Cmd {
	ch := m.b.Latest()
	return func() tea.Msg {
		s, ok := <-ch
		if !ok {
			return nil
		}
		return snapMsg(s)
	}
}

// Update handles one message; it never blocks.
func (m *Model) Update(msg tea.Msg) (tea.Model, tea.Cmd) {
	switch msg := msg.(type) {
	case tea.WindowSizeMsg:
		m.w, m.h = msg.Width, msg.Height
		return m, nil
	case snapMsg:
		return m, m.onSnapshot(acquire.Snapshot(msg))
	case armMsg:
		return m, m.wait()
	case quitTimeoutMsg:
		m.done = true
		return m, tea.Quit
	case tea.KeyPressMsg:
		return m, m.onKey(msg)
	}
	return m, nil
}

func (m *Model) onSnapshot(s acquire.Snapshot) tea.Cmd {
	m.snap, m.have = s, true
	if s.DriveOn && !m.everOn {
		m.everOn, m.caution, m.cautionT0 = true, true, s.TimeS
	}
	if m.caution && s.TimeS-m.cautionT0 > m.opt.CautionS {
		m.caution = false
	}
	if s.Finished {
		m.finished = true
		if m.quitting {
			m.done = true
			return tea.Quit
		}
	}
	if m.confirm == askLogUnsettled && s.Phase != acquire.PhaseSettling && s.Phase != acquire.PhaseChanging &&
		!(s.Phase == acquire.PhaseHolding && s.Settle.State == settle.GaveUp) {
		// the question no longer applies: the point settled or the drive went off
		m.confirm = askNone
		m.flash = "the point is no longer settling: log again if you still want it"
	}
	if s.Finished {
		return nil // nothing more will come
	}
	return tea.Tick(m.opt.Interval, func(time.Time) tea.Msg { return armMsg{} })
}

// onKey turns a key press into an intent.
func (m *Model) onKey(k tea.KeyPressMsg) tea.Cmd {
	key := k.String()
	if m.input != inNone {
		return m.onInputKey(k)
	}
	if m.confirm != askNone {
		return m.onConfirmKey(key)
	}
	if m.quitting {
		if key == "ctrl+c" {
			m.done = true
			return tea.Quit
		}
		return nil
	}
	m.flash = ""
	if m.finished {
		switch key {
		case "q", "ctrl+c", "esc":
			m.done = true
			return tea.Quit
		case "?":
			m.help = !m.help
		case "w", "t":
			m.toggleView(key)
		default:
			m.flash = "the bench has stopped; q closes the screen"
		}
		return nil
	}
	s := &m.snap
	switch key {
	case "?":
		m.help = !m.help
	case "esc":
		switch {
		case m.help:
			m.help = false
		case m.caution:
			m.caution = false
		case s.Err != "":
			m.errHidden = s.Err
		}
	case "q", "ctrl+c":
		if m.help && key == "q" {
			m.help = false
			return nil
		}
		if s.Mode == acquire.ModeSweep || s.Mode == acquire.ModePaused {
			m.confirm = askQuit
			return nil
		}
		return m.quit()
	case "up", "right", ".", ">":
		m.send("step up", m.b.StepUp())
	case "down", "left", ",", "<":
		m.send("step down", m.b.StepDown())
	case "]":
		if s.StepHz > 0 {
			m.send("step", m.b.SetStep(2*s.StepHz))
		}
	case "[":
		if s.StepHz > 0 {
			m.send("step", m.b.SetStep(s.StepHz/2))
		}
	case "f":
		m.input, m.text = inFreq, ""
	case "s":
		m.input, m.text = inStep, ""
	case "a":
		m.input, m.text = inAmp, ""
	case "n":
		m.input, m.text = inNote, s.NextNote
	case "+", "=":
		m.nudgeAmp(+1)
	case "-", "_":
		m.nudgeAmp(-1)
	case "d":
		if s.DriveOn {
			m.send("drive off", m.b.DriveOff())
		} else {
			m.send("drive on", m.b.DriveOn())
		}
	case "l", "enter":
		m.logNow()
	case "L":
		m.send("auto-log", m.b.SetAutoLog(!s.AutoLog))
	case "g":
		switch s.Mode {
		case acquire.ModePaused:
			m.send("resume", m.b.Resume())
		case acquire.ModeSweep:
			m.flash = "the sweep is already running (space pauses, x stops)"
		default:
			m.send("start sweep", m.b.StartSweep())
		}
	case "space":
		switch s.Mode {
		case acquire.ModeSweep:
			m.send("pause", m.b.Pause())
		case acquire.ModePaused:
			m.send("resume", m.b.Resume())
		default:
			m.flash = "no sweep is running (g starts one)"
		}
	case "x":
		if s.Mode == acquire.ModeSweep || s.Mode == acquire.ModePaused {
			m.send("stop sweep", m.b.StopSweep())
		} else {
			m.flash = "no sweep is running"
		}
	case "r":
		if s.Mode == acquire.ModeSweep || s.Mode == acquire.ModePaused {
			m.send("reverse", m.b.Reverse())
		} else {
			m.flash = "reverse turns a running sweep around; no sweep is running"
		}
	case "w", "t":
		m.toggleView(key)
	}
	return nil
}

func (m *Model) toggleView(key string) {
	if key == "w" {
		m.signal = 1 - m.signal
	} else {
		m.chart = 1 - m.chart
	}
}

// send reports a refused intent (the bench's queue is full).
func (m *Model) send(what string, err error) {
	if err != nil {
		m.flash = fmt.Sprintf("%s not sent: the bench is busy, press again", what)
	}
}

// logNow logs the point: at once when it is settled, after a question
// when it is not (it is then logged marked as not settled).
func (m *Model) logNow() {
	s := &m.snap
	switch {
	case !s.DriveOn:
		m.flash = "the drive is off: switch it on (d) and let the point settle first"
	case s.Phase == acquire.PhaseMeasuring:
		m.flash = "already measuring this point"
	case s.Phase == acquire.PhaseHolding && s.Settle.State == settle.Settled:
		m.send("log", m.b.LogNow(false))
	default:
		m.confirm = askLogUnsettled
	}
}

// ampStepFrac is the +/- amplitude step as a fraction of the drive limit:
// fifty steps from zero to the limit, fine enough to creep up on a jump.
const ampStepFrac = 0.02

func (m *Model) nudgeAmp(sign float64) {
	s := &m.snap
	step := ampStepFrac * s.LimitAmp
	if step <= 0 {
		step = math.Max(0.1*s.AmpSet, 1e-3)
	}
	a := s.AmpSet + sign*step
	// snap to the step grid so repeated presses give round values
	a = math.Round(a/step) * step
	if a < 0 {
		a = 0
	}
	if s.LimitAmp > 0 && a > s.LimitAmp {
		if s.AmpSet >= s.LimitAmp {
			m.flash = fmt.Sprintf("the drive is at its limit %s %s", fmtSig(s.LimitAmp, 4), s.Drive.Unit)
			return
		}
		a = s.LimitAmp
	}
	m.send("amplitude", m.b.SetAmp(a))
}

func (m *Model) onConfirmKey(key string) tea.Cmd {
	what := m.confirm
	switch key {
	case "y", "Y", "enter":
	case "ctrl+c":
		if what != askQuit {
			m.confirm = askNone
			return nil
		}
	default:
		m.confirm = askNone
		m.flash = "cancelled"
		return nil
	}
	m.confirm = askNone
	switch what {
	case askLogUnsettled:
		m.send("log", m.b.LogNow(true))
		m.flash = "logging the point now, marked as not settled"
	case askQuit:
		return m.quit()
	}
	return nil
}

// quit asks the bench to stop (it ramps the drive down and closes the
// record) and quits once the final snapshot is in, or after the timeout.
func (m *Model) quit() tea.Cmd {
	m.help = false
	if m.finished {
		m.done = true
		return tea.Quit
	}
	m.quitting = true
	if m.opt.Stop != nil {
		m.opt.Stop()
	}
	return tea.Tick(m.opt.QuitTimeout, func(time.Time) tea.Msg { return quitTimeoutMsg{} })
}

func (m *Model) onInputKey(k tea.KeyPressMsg) tea.Cmd {
	switch k.String() {
	case "esc", "ctrl+c":
		m.input, m.text = inNone, ""
		return nil
	case "enter":
		kind, text := m.input, m.text
		m.input, m.text = inNone, ""
		m.submit(kind, text)
		return nil
	case "backspace":
		if r := []rune(m.text); len(r) > 0 {
			m.text = string(r[:len(r)-1])
		}
		return nil
	case "ctrl+u":
		m.text = ""
		return nil
	}
	if k.Text != "" && len([]rune(m.text)) < 120 {
		m.text += k.Text
	}
	return nil
}

func (m *Model) submit(kind inputKind, text string) {
	s := &m.snap
	if kind == inNote {
		m.send("note", m.b.SetNote(text))
		return
	}
	v, ok := parseNumber(text)
	if !ok {
		if text != "" {
			m.flash = fmt.Sprintf("%q is not a number: nothing changed", text)
		}
		return
	}
	switch kind {
	case inFreq:
		if v <= 0 {
			m.flash = fmt.Sprintf("frequency %s Hz refused: it must be above zero", fmtSig(v, 6))
			return
		}
		m.send("frequency", m.b.SetFreq(v))
	case inStep:
		if v <= 0 {
			m.flash = fmt.Sprintf("step %s Hz refused: it must be above zero", fmtSig(v, 6))
			return
		}
		m.send("step", m.b.SetStep(v))
	case inAmp:
		if v < 0 || (s.LimitAmp > 0 && v > s.LimitAmp) {
			m.flash = fmt.Sprintf("amplitude %s %s refused: allowed 0 to %s %s", fmtSig(v, 6), s.Drive.Unit,
				fmtSig(s.LimitAmp, 4), s.Drive.Unit)
			return
		}
		m.send("amplitude", m.b.SetAmp(v))
	}
}
