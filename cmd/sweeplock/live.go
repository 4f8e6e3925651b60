package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/signal"
	"syscall"
	"time"

	tea "charm.land/bubbletea/v2"
	"github.com/charmbracelet/x/term"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/tui"
)

// benchStopWait is how long, after the screen closes, the command waits
// for the bench to ramp the drive down and close the record.
const benchStopWait = 15 * time.Second

// liveCmd opens the live bench screen. The drive starts off; the user
// switches it on (the safety caution shows then). Points are logged only
// when the user logs them (or turns auto-log on), into a new CSV in the
// current folder unless --out names one.
type liveCmd struct {
	rigFlags
}

func (c *liveCmd) Run(ctx context.Context) error {
	// A closed terminal window (SIGHUP) stops the bench like q does: the
	// drive ramps down and the record is closed before the program ends.
	ctx, stopHup := signal.NotifyContext(ctx, syscall.SIGHUP)
	defer stopHup()
	if !term.IsTerminal(os.Stdout.Fd()) {
		return misuse("the live screen needs a terminal; without one run: %s sweep --rig %s", programName, c.Rig)
	}
	out := c.Out
	if out == "" {
		out = rig.NewRecordName(time.Now())
	}
	setup, err := rig.Open(c.Rig, c.options(out))
	if err != nil {
		return rigError(err)
	}
	defer setup.Close()
	bench, err := acquire.NewBench(setup.Source, setup.Drive, setup.Bench)
	if err != nil {
		return rigError(err)
	}
	// The source outlives the bench: while the bench ramps the drive down
	// on the way out it still reads blocks (a simulated rig makes the ramp
	// as it makes blocks).
	srcCtx, stopSrc := context.WithCancel(context.WithoutCancel(ctx))
	defer stopSrc()
	if err := setup.Source.Start(srcCtx); err != nil {
		return fmt.Errorf("starting the source: %w", err)
	}
	benchCtx, stopBench := context.WithCancel(ctx)
	defer stopBench()
	done := make(chan error, 1)
	go func() { done <- bench.Run(benchCtx) }()

	screen := tui.New(bench, tui.Options{Stop: stopBench, NoColor: os.Getenv("NO_COLOR") != ""})
	_, perr := tea.NewProgram(screen, tea.WithContext(ctx)).Run()
	stopBench()
	var runErr error
	select {
	case runErr = <-done:
	case <-time.After(benchStopWait):
		return fmt.Errorf("the bench did not stop within %v: check that the drive is off", benchStopWait)
	}
	stopSrc()
	tui.Summary(os.Stdout, bench.Final(), out)
	switch {
	case runErr != nil && !errors.Is(runErr, context.Canceled):
		return runErr
	case perr != nil && !errors.Is(perr, tea.ErrProgramKilled) && !errors.Is(perr, context.Canceled):
		return fmt.Errorf("the screen failed: %w (the drive was ramped down)", perr)
	case ctx.Err() != nil:
		return errors.New("interrupted: the drive was ramped down")
	}
	return nil
}
