package tui

import (
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// Bench is what the screen needs of the bench: intents that queue a
// command and return at once, and the one-slot channel of the latest
// snapshot. *acquire.Bench implements it.
type Bench interface {
	DriveOn() error
	DriveOff() error
	StepUp() error
	StepDown() error
	SetFreq(hz float64) error
	SetStep(hz float64) error
	SetAmp(amp float64) error
	LogNow(force bool) error
	SetAutoLog(on bool) error
	SetNote(s string) error
	StartSweep() error
	Pause() error
	Resume() error
	StopSweep() error
	Reverse() error
	Latest() <-chan acquire.Snapshot
}

var _ Bench = (*acquire.Bench)(nil)

// Options set up the screen.
type Options struct {
	// Stop ends the bench's run (cancels its context): the bench ramps the
	// drive down, closes the record and publishes a final snapshot with
	// Finished set. The screen calls it once, when the user quits.
	Stop func()
	// NoColor draws without any colour (NO_COLOR); words, markers and
	// text attributes (bold, reverse) still carry every state.
	NoColor bool
	// Interval is the shortest time between two snapshots taken from the
	// bench (display rate); 0 means 100 ms.
	Interval time.Duration
	// QuitTimeout is how long the screen waits, after Stop, for the final
	// snapshot before it quits anyway; 0 means 5 s.
	QuitTimeout time.Duration
	// CautionS is how long, in source seconds, the safety caution stays on
	// screen after the drive first goes on; 0 means 20 s.
	CautionS float64
}

func (o Options) withDefaults() Options {
	if o.Interval <= 0 {
		o.Interval = 100 * time.Millisecond
	}
	if o.QuitTimeout <= 0 {
		o.QuitTimeout = 5 * time.Second
	}
	if o.CautionS <= 0 {
		o.CautionS = 20
	}
	return o
}
