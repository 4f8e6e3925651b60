package tui

import (
	"fmt"
	"math"
	"strings"
	"testing"

	tea "charm.land/bubbletea/v2"
	"github.com/charmbracelet/x/ansi"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/dsp/settle"
)

// recorder is a Bench that writes down every intent it is sent.
type recorder struct {
	calls []string
	busy  bool // answer every intent with ErrBenchBusy
	ch    chan acquire.Snapshot
}

func (r *recorder) rec(format string, a ...any) error {
	r.calls = append(r.calls, fmt.Sprintf(format, a...))
	if r.busy {
		return acquire.ErrBenchBusy
	}
	return nil
}

func (r *recorder) DriveOn() error           { return r.rec("DriveOn") }
func (r *recorder) DriveOff() error          { return r.rec("DriveOff") }
func (r *recorder) StepUp() error            { return r.rec("StepUp") }
func (r *recorder) StepDown() error          { return r.rec("StepDown") }
func (r *recorder) SetFreq(hz float64) error { return r.rec("SetFreq(%g)", hz) }
func (r *recorder) SetStep(hz float64) error { return r.rec("SetStep(%g)", hz) }
func (r *recorder) SetAmp(a float64) error   { return r.rec("SetAmp(%.6g)", a) }
func (r *recorder) LogNow(force bool) error  { return r.rec("LogNow(%v)", force) }
func (r *recorder) SetAutoLog(on bool) error { return r.rec("SetAutoLog(%v)", on) }
func (r *recorder) SetNote(s string) error   { return r.rec("SetNote(%q)", s) }
func (r *recorder) StartSweep() error        { return r.rec("StartSweep") }
func (r *recorder) Pause() error             { return r.rec("Pause") }
func (r *recorder) Resume() error            { return r.rec("Resume") }
func (r *recorder) StopSweep() error         { return r.rec("StopSweep") }
func (r *recorder) Reverse() error           { return r.rec("Reverse") }
func (r *recorder) Latest() <-chan acquire.Snapshot {
	if r.ch == nil {
		r.ch = make(chan acquire.Snapshot, 1)
	}
	return r.ch
}

var _ Bench = (*recorder)(nil)

// key makes the message a key press sends: a named key ("up", "enter",
// "space", "esc", "backspace", "ctrl+c") or printable text.
func key(k string) tea.KeyPressMsg {
	switch k {
	case "up":
		return tea.KeyPressMsg{Code: tea.KeyUp}
	case "down":
		return tea.KeyPressMsg{Code: tea.KeyDown}
	case "left":
		return tea.KeyPressMsg{Code: tea.KeyLeft}
	case "right":
		return tea.KeyPressMsg{Code: tea.KeyRight}
	case "enter":
		return tea.KeyPressMsg{Code: tea.KeyEnter}
	case "esc":
		return tea.KeyPressMsg{Code: tea.KeyEscape}
	case "space":
		return tea.KeyPressMsg{Code: tea.KeySpace, Text: " "}
	case "backspace":
		return tea.KeyPressMsg{Code: tea.KeyBackspace}
	case "ctrl+c":
		return tea.KeyPressMsg{Code: 'c', Mod: tea.ModCtrl}
	}
	r := []rune(k)
	return tea.KeyPressMsg{Code: r[0], Text: k}
}

// press sends keys; a key of several characters that is not a named key is
// typed one character at a time.
func press(m *Model, keys ...string) tea.Cmd {
	var cmd tea.Cmd
	for _, k := range keys {
		switch k {
		case "up", "down", "left", "right", "enter", "esc", "space", "backspace", "ctrl+c":
			_, cmd = m.Update(key(k))
		default:
			for _, r := range k {
				_, cmd = m.Update(key(string(r)))
			}
		}
	}
	return cmd
}

func plain(m *Model) string { return ansi.Strip(m.frame()) }

// isQuit runs a command that must not block (tea.Quit) and reports
// whether it quits the program.
func isQuit(cmd tea.Cmd) bool {
	if cmd == nil {
		return false
	}
	_, ok := cmd().(tea.QuitMsg)
	return ok
}

func TestKeysToIntents(t *testing.T) {
	holding := func(s *acquire.Snapshot) {
		s.Phase = acquire.PhaseHolding
		s.Settle = settle.Status{State: settle.Settled, Progress: 1, TauS: 0.13, RemainingS: 0}
	}
	sweeping := func(s *acquire.Snapshot) { s.Mode = acquire.ModeSweep; s.Direction = acquire.Up }
	paused := func(s *acquire.Snapshot) { s.Mode = acquire.ModePaused }
	off := func(s *acquire.Snapshot) { s.DriveOn = false; s.Phase = acquire.PhaseOff }
	for _, tc := range []struct {
		name  string
		setup func(*acquire.Snapshot)
		keys  []string
		want  []string
		// words the screen must show afterwards ("" for none)
		shows string
	}{
		{"arrow up steps up", nil, []string{"up"}, []string{"StepUp"}, ""},
		{"right arrow steps up", nil, []string{"right"}, []string{"StepUp"}, ""},
		{"> steps up", nil, []string{">"}, []string{"StepUp"}, ""},
		{". steps up", nil, []string{"."}, []string{"StepUp"}, ""},
		{"arrow down steps down", nil, []string{"down"}, []string{"StepDown"}, ""},
		{", steps down", nil, []string{","}, []string{"StepDown"}, ""},
		{"] doubles the step", nil, []string{"]"}, []string{"SetStep(1)"}, ""},
		{"[ halves the step", nil, []string{"["}, []string{"SetStep(0.25)"}, ""},
		{"typed step", nil, []string{"s", "0.05", "enter"}, []string{"SetStep(0.05)"}, ""},
		{"typed frequency", nil, []string{"f", "112.5", "enter"}, []string{"SetFreq(112.5)"}, ""},
		{"typed frequency with a decimal comma", nil, []string{"f", "112,25", "enter"}, []string{"SetFreq(112.25)"}, ""},
		{"typing edits", nil, []string{"f", "1139", "backspace", "2", "enter"}, []string{"SetFreq(1132)"}, ""},
		{"esc cancels typing", nil, []string{"f", "99", "esc"}, nil, ""},
		{"a non-number is refused", nil, []string{"f", "abc", "enter"}, nil, "is not a number"},
		{"a negative frequency is refused", nil, []string{"f", "-5", "enter"}, nil, "must be above zero"},
		{"typed amplitude", nil, []string{"a", "0.3", "enter"}, []string{"SetAmp(0.3)"}, ""},
		{"amplitude above the limit is refused", nil, []string{"a", "0.8", "enter"}, nil, "refused: allowed 0 to 0.5 A"},
		{"+ raises the amplitude by 2 % of the limit", nil, []string{"+"}, []string{"SetAmp(0.21)"}, ""},
		{"- lowers the amplitude", nil, []string{"-"}, []string{"SetAmp(0.19)"}, ""},
		{"+ at the limit sends nothing", func(s *acquire.Snapshot) { s.AmpSet = 0.5 }, []string{"+"}, nil, "at its limit"},
		{"+ near the limit stops at it", func(s *acquire.Snapshot) { s.AmpSet = 0.495 }, []string{"+"}, []string{"SetAmp(0.5)"}, ""},
		{"- at zero stays at zero", func(s *acquire.Snapshot) { s.AmpSet = 0 }, []string{"-"}, []string{"SetAmp(0)"}, ""},
		{"d switches an off drive on", off, []string{"d"}, []string{"DriveOn"}, ""},
		{"d switches an on drive off", nil, []string{"d"}, []string{"DriveOff"}, ""},
		{"l logs a settled point at once", holding, []string{"l"}, []string{"LogNow(false)"}, ""},
		{"enter logs a settled point", holding, []string{"enter"}, []string{"LogNow(false)"}, ""},
		{"l while settling asks first", nil, []string{"l"}, nil, "has not settled"},
		{"l while settling, yes, forces", nil, []string{"l", "y"}, []string{"LogNow(true)"}, "marked as not settled"},
		{"l while settling, no, logs nothing", nil, []string{"l", "n"}, nil, "cancelled"},
		{"l after giving up asks first", func(s *acquire.Snapshot) {
			s.Phase = acquire.PhaseHolding
			s.Settle.State = settle.GaveUp
		}, []string{"l", "y"}, []string{"LogNow(true)"}, ""},
		{"l with the drive off logs nothing", off, []string{"l"}, nil, "the drive is off"},
		{"l while measuring logs nothing", func(s *acquire.Snapshot) { s.Phase = acquire.PhaseMeasuring }, []string{"l"}, nil, "already measuring"},
		{"L turns auto-log on", nil, []string{"L"}, []string{"SetAutoLog(true)"}, ""},
		{"L turns auto-log off", func(s *acquire.Snapshot) { s.AutoLog = true }, []string{"L"}, []string{"SetAutoLog(false)"}, ""},
		{"n sets a note", nil, []string{"n", "clamp re-torqued", "enter"}, []string{`SetNote("clamp re-torqued")`}, ""},
		{"g starts the sweep", nil, []string{"g"}, []string{"StartSweep"}, ""},
		{"g resumes a paused sweep", paused, []string{"g"}, []string{"Resume"}, ""},
		{"g while sweeping sends nothing", sweeping, []string{"g"}, nil, "already running"},
		{"space pauses", sweeping, []string{"space"}, []string{"Pause"}, ""},
		{"space resumes", paused, []string{"space"}, []string{"Resume"}, ""},
		{"x stops the sweep", sweeping, []string{"x"}, []string{"StopSweep"}, ""},
		{"x with no sweep sends nothing", nil, []string{"x"}, nil, "no sweep is running"},
		{"r reverses", sweeping, []string{"r"}, []string{"Reverse"}, ""},
		{"r with no sweep sends nothing", nil, []string{"r"}, nil, "no sweep is running"},
		{"w and t only change the view", nil, []string{"w", "t"}, nil, "SPECTRUM"},
		{"q while sweeping asks first", sweeping, []string{"q"}, nil, "A sweep is running"},
		{"q while paused asks first", paused, []string{"q"}, nil, "A sweep is running"},
		{"q while sweeping, no, stays", sweeping, []string{"q", "n"}, nil, "cancelled"},
		{"? opens the help", nil, []string{"?"}, nil, "KEYS"},
		{"keys still work under the help", nil, []string{"?", "up"}, []string{"StepUp"}, "KEYS"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := &recorder{}
			s := sceneSettling()
			if tc.setup != nil {
				tc.setup(&s)
			}
			m := show(t, r, Options{}, 100, 30, s)
			press(m, tc.keys...)
			if strings.Join(r.calls, " ") != strings.Join(tc.want, " ") {
				t.Errorf("calls %q, want %q", r.calls, tc.want)
			}
			if tc.shows != "" && !strings.Contains(plain(m), tc.shows) {
				t.Errorf("screen does not say %q:\n%s", tc.shows, plain(m))
			}
		})
	}
}

// TestBusyBench checks that a refused intent (the bench's queue full) is
// told, not swallowed.
func TestBusyBench(t *testing.T) {
	r := &recorder{busy: true}
	m := show(t, r, Options{}, 80, 24, sceneSettling())
	press(m, "up")
	if len(r.calls) != 1 || !strings.Contains(plain(m), "the bench is busy") {
		t.Errorf("calls %q; screen:\n%s", r.calls, plain(m))
	}
}

// TestQuitWaitsForRampDown: quitting stops the bench and waits for its
// final snapshot (drive ramped down, record closed), showing that it waits.
func TestQuitWaitsForRampDown(t *testing.T) {
	for _, tc := range []struct {
		name string
		mode acquire.Mode
		keys []string
	}{
		{"manual: q quits at once", acquire.ModeManual, []string{"q"}},
		{"sweeping: q then y", acquire.ModeSweep, []string{"q", "y"}},
		{"sweeping: ctrl+c twice", acquire.ModeSweep, []string{"ctrl+c", "ctrl+c"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			stops := 0
			s := sceneSettling()
			s.Mode = tc.mode
			m := show(t, &recorder{}, Options{Stop: func() { stops++ }}, 80, 24, s)
			cmd := press(m, tc.keys...)
			if stops != 1 {
				t.Fatalf("Stop called %d times, want 1", stops)
			}
			if cmd == nil {
				t.Fatal("no timeout command after Stop")
			}
			if !strings.Contains(plain(m), "ramping drive down") {
				t.Errorf("screen does not say it ramps down:\n%s", plain(m))
			}
			// a snapshot still ramping keeps the screen open
			ramp := s
			ramp.DriveOn, ramp.AmpNow = false, 0.1
			if _, cmd := m.Update(snapMsg(ramp)); isQuitNow(cmd) {
				t.Fatal("quit before the final snapshot")
			}
			fin := ramp
			fin.AmpNow, fin.Finished = 0, true
			if _, cmd := m.Update(snapMsg(fin)); !isQuit(cmd) {
				t.Fatal("the final snapshot did not quit")
			}
			press(m, "q")
			if stops != 1 {
				t.Errorf("Stop called again (%d)", stops)
			}
		})
	}
}

// isQuitNow is isQuit for commands that may be ticks: a tick command
// blocks, so only a direct tea.Quit is recognised.
func isQuitNow(cmd tea.Cmd) bool {
	if cmd == nil {
		return false
	}
	return fmt.Sprintf("%p", cmd) == fmt.Sprintf("%p", tea.Cmd(tea.Quit))
}

// TestQuitTimeout: with no final snapshot the screen quits after the
// timeout anyway.
func TestQuitTimeout(t *testing.T) {
	m := show(t, &recorder{}, Options{Stop: func() {}}, 80, 24, sceneSettling())
	press(m, "q")
	if _, cmd := m.Update(quitTimeoutMsg{}); !isQuit(cmd) {
		t.Fatal("timeout did not quit")
	}
}

// TestBenchStoppedByItself: when the bench ends on its own (a source
// failure), the screen says so and q closes it without waiting.
func TestBenchStoppedByItself(t *testing.T) {
	stops := 0
	s := sceneError()
	s.Finished = true
	m := show(t, &recorder{}, Options{Stop: func() { stops++ }}, 80, 24, s)
	if !strings.Contains(plain(m), "the bench has stopped") {
		t.Errorf("screen:\n%s", plain(m))
	}
	if cmd := press(m, "q"); !isQuit(cmd) {
		t.Error("q did not quit")
	}
	if stops != 0 {
		t.Errorf("Stop called on a stopped bench")
	}
}

// TestThirdFlagFollowsSnapshot: the flag stands out while the bench
// raises it and clears when the ratio falls back.
func TestThirdFlagFollowsSnapshot(t *testing.T) {
	m := show(t, &recorder{}, Options{}, 80, 24, sceneThird())
	if !strings.Contains(plain(m), "3RD HARMONIC HIGH") {
		t.Fatalf("flag not shown:\n%s", plain(m))
	}
	s := sceneThird()
	liveAt(&s, 114, true) // further from the peak: ratio below 1 %
	if s.ThirdFlag {
		t.Fatalf("fixture: third ratio %.3f %% still flagged at 114 Hz", s.ThirdPct)
	}
	m.Update(snapMsg(s))
	if strings.Contains(plain(m), "3RD HARMONIC HIGH") || !strings.Contains(plain(m), "flag > 1 %: clear") {
		t.Errorf("flag did not clear:\n%s", plain(m))
	}
}

// TestCautionOnFirstDriveOn: the safety caution appears the first time
// the drive goes on, leaves after CautionS of source time or on esc, and
// does not come back.
func TestCautionOnFirstDriveOn(t *testing.T) {
	m := New(&recorder{}, Options{})
	m.Update(tea.WindowSizeMsg{Width: 80, Height: 24})
	s := sceneSettling()
	s.DriveOn, s.TimeS = false, 1
	m.Update(snapMsg(s))
	if strings.Contains(plain(m), "CAUTION") {
		t.Fatal("caution before the drive went on")
	}
	s.DriveOn, s.TimeS = true, 2
	m.Update(snapMsg(s))
	if !strings.Contains(plain(m), "CAUTION a resonator driven at a jump") {
		t.Fatalf("no caution:\n%s", plain(m))
	}
	s.TimeS = 21.5 // 19.5 s later: still shown
	m.Update(snapMsg(s))
	if !strings.Contains(plain(m), "CAUTION") {
		t.Fatal("caution left early")
	}
	s.TimeS = 22.5
	m.Update(snapMsg(s))
	if strings.Contains(plain(m), "CAUTION") {
		t.Fatal("caution stayed past 20 s")
	}
	s.DriveOn, s.TimeS = false, 30
	m.Update(snapMsg(s))
	s.DriveOn, s.TimeS = true, 31
	m.Update(snapMsg(s))
	if strings.Contains(plain(m), "CAUTION") {
		t.Fatal("caution came back on the second drive-on")
	}
	// esc hides it at once
	m2 := New(&recorder{}, Options{})
	m2.Update(snapMsg(sceneSettling()))
	press(m2, "esc")
	if strings.Contains(plain(m2), "CAUTION") {
		t.Fatal("esc did not hide the caution")
	}
	// and the help view always has it
	press(m2, "?")
	if !strings.Contains(plain(m2), "SAFETY") {
		t.Fatalf("help has no safety note:\n%s", plain(m2))
	}
}

// TestErrorShownUntilDismissed: the latest error is shown with its words
// until esc; a new error shows again.
func TestErrorShownUntilDismissed(t *testing.T) {
	m := show(t, &recorder{}, Options{}, 80, 24, sceneError())
	if !strings.Contains(plain(m), "ERROR displacement 1.512 mm passed the limit") {
		t.Fatalf("no error line:\n%s", plain(m))
	}
	press(m, "esc")
	if strings.Contains(plain(m), "ERROR ") {
		t.Fatal("esc did not hide the error")
	}
	s := sceneError()
	s.Err = "the sim source \"demo strip\" ended"
	m.Update(snapMsg(s))
	if !strings.Contains(plain(m), "ERROR the sim source") {
		t.Fatal("a new error was not shown")
	}
}

// TestLogQuestionWithdrawn: a question about an unsettled point is
// withdrawn when the point settles meanwhile (the user then logs it as
// settled).
func TestLogQuestionWithdrawn(t *testing.T) {
	r := &recorder{}
	m := show(t, r, Options{}, 80, 24, sceneSettling())
	press(m, "l")
	m.Update(snapMsg(sceneSettled()))
	press(m, "y")
	if len(r.calls) != 0 {
		t.Fatalf("calls %q after the point settled", r.calls)
	}
	press(m, "l")
	if strings.Join(r.calls, " ") != "LogNow(false)" {
		t.Fatalf("calls %q", r.calls)
	}
}

// TestSnapshotReadIsRearmed: Init waits on Latest, a snapshot re-arms the
// read after the display interval (through armMsg), and armMsg returns
// the read again (STYLE §17).
func TestSnapshotReadIsRearmed(t *testing.T) {
	r := &recorder{}
	m := New(r, Options{})
	cmd := m.Init()
	r.Latest()
	r.ch <- sceneSettling()
	msg := cmd()
	if _, ok := msg.(snapMsg); !ok {
		t.Fatalf("Init's command gave %T, want snapMsg", msg)
	}
	_, next := m.Update(msg)
	if next == nil {
		t.Fatal("no re-arm after a snapshot")
	}
	_, read := m.Update(armMsg{})
	r.ch <- sceneSettled()
	if got := read(); got == nil {
		t.Fatal("re-armed read returned nothing")
	} else if s := acquire.Snapshot(got.(snapMsg)); s.Phase != acquire.PhaseHolding {
		t.Errorf("re-armed read gave phase %v", s.Phase)
	}
}

// TestNoColor: with NoColor the screen carries no colour codes at all
// (SGR 30–49, 90–107, 38;…, 48;…), and the states still read in words and
// symbols; with colour it does carry them.
func TestNoColor(t *testing.T) {
	for _, sc := range scenes() {
		t.Run(sc.name, func(t *testing.T) {
			nc := show(t, &recorder{}, Options{NoColor: true}, 120, 40, sc.snap()).frame()
			if hasColour(nc) {
				t.Errorf("NO_COLOR frame has colour codes")
			}
			c := show(t, &recorder{}, Options{}, 120, 40, sc.snap()).frame()
			if !hasColour(c) {
				t.Errorf("colour frame has no colour codes")
			}
			if ansi.Strip(nc) != ansi.Strip(c) {
				t.Errorf("the text differs with and without colour")
			}
		})
	}
	words := map[string]string{
		"settling": "~ SETTLING", "settled": "= SETTLED", "third_flagged": "▲ 3RD HARMONIC HIGH",
		"sweep_jump": "! SLOW — a jump may be near", "error": "ERROR displacement",
	}
	for _, sc := range scenes() {
		txt := ansi.Strip(show(t, &recorder{}, Options{NoColor: true}, 80, 24, sc.snap()).frame())
		if !strings.Contains(txt, words[sc.name]) {
			t.Errorf("%s: no %q without colour", sc.name, words[sc.name])
		}
	}
}

// hasColour reports whether s sets a foreground or background colour.
func hasColour(s string) bool {
	for _, seq := range strings.Split(s, "\x1b[")[1:] {
		end := strings.IndexByte(seq, 'm')
		if end < 0 {
			continue
		}
		for _, p := range strings.FieldsFunc(seq[:end], func(r rune) bool { return r == ';' || r == ':' }) {
			var n int
			if _, err := fmt.Sscanf(p, "%d", &n); err == nil &&
				((n >= 30 && n <= 49 && n != 39 && n != 49) || (n >= 90 && n <= 107)) {
				return true
			}
		}
	}
	return false
}

// TestGaveUpAndSlowInWords: the settle states read in words and symbols
// (settle.State's own String and Symbol).
func TestGaveUpAndSlowInWords(t *testing.T) {
	for _, tc := range []struct {
		phase acquire.PointPhase
		st    settle.State
		want  string
	}{
		{acquire.PhaseSettling, settle.Settling, settle.Settling.Symbol() + " SETTLING"},
		{acquire.PhaseSettling, settle.Slow, settle.Slow.Symbol() + " SLOW — a jump may be near"},
		{acquire.PhaseHolding, settle.GaveUp, settle.GaveUp.Symbol() + " GAVE UP"},
		{acquire.PhaseHolding, settle.Settled, settle.Settled.Symbol() + " SETTLED · holding"},
		{acquire.PhaseMeasuring, settle.Settled, settle.Settled.Symbol() + " SETTLED · measuring"},
		{acquire.PhaseChanging, settle.Settling, "~ changing"},
		{acquire.PhaseOff, settle.Settling, "drive off"},
	} {
		s := sceneSettling()
		s.Phase, s.Settle.State = tc.phase, tc.st
		txt := plain(show(t, &recorder{}, Options{NoColor: true}, 80, 24, s))
		if !strings.Contains(txt, tc.want) {
			t.Errorf("%v/%v: no %q", tc.phase, tc.st, tc.want)
		}
	}
}

// TestSettleProgressShown: the progress bar and time left follow
// Settle.Progress and RemainingS.
func TestSettleProgressShown(t *testing.T) {
	s := sceneSettling()
	s.Settle.Progress, s.Settle.RemainingS = 0.45, 1.3
	txt := plain(show(t, &recorder{}, Options{}, 80, 24, s))
	if !strings.Contains(txt, " 45% 1.3 s left") {
		t.Errorf("no progress and time left:\n%s", txt)
	}
	s.Settle.RemainingS = math.NaN()
	txt = plain(show(t, &recorder{}, Options{}, 80, 24, s))
	if !strings.Contains(txt, "time left –") {
		t.Errorf("no unknown time left:\n%s", txt)
	}
}
