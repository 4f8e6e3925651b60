// Package sweep runs a rig's sweep plan headless: it starts the source,
// runs the bench through the plan, shows a progress line on a terminal,
// and reports what was found. The screen (package tui) runs the same bench
// interactively.
package sweep

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// Options for a headless run.
type Options struct {
	// Progress, when not nil, gets a one-line progress bar redrawn in place
	// (a terminal's stderr).
	Progress io.Writer
	// Log, when not nil, gets one line per logged point and per message.
	Log io.Writer
}

// Result is what a headless run found.
type Result struct {
	Points     []acquire.Point
	Jumps      []acquire.JumpJSON
	BandLoHz   float64
	BandHiHz   float64
	Completed  bool
	StopReason string
	Record     string
	Stats      acquire.SourceStats
	Elapsed    time.Duration
}

// Run starts src, runs the plan on a new bench and returns when the plan
// ends, ctx is cancelled (the drive is ramped down and the record closed
// first) or the bench fails.
func Run(ctx context.Context, src acquire.Source, drv acquire.Drive, cfg acquire.BenchConfig, opt Options) (*Result, error) {
	start := time.Now()
	runCtx, cancel := context.WithCancel(ctx)
	defer cancel()
	done := false
	user := cfg.OnEvent
	cfg.OnEvent = func(e acquire.Event) {
		if user != nil {
			user(e)
		}
		switch e.Kind {
		case acquire.EventSweepDone:
			done = true
			cancel()
		case acquire.EventLogged:
			if opt.Log != nil {
				p := e.Point
				fmt.Fprintf(opt.Log, "point %d %s %.4f Hz  %.5g  %s\n", p.Index, p.Direction, p.FreqSetHz, p.Amp[0], p.SettleState)
			}
		case acquire.EventJump, acquire.EventError:
			if opt.Log != nil {
				fmt.Fprintln(opt.Log, e.Text)
			}
		}
	}
	b, err := acquire.NewBench(src, drv, cfg)
	if err != nil {
		return nil, err
	}
	// The source runs on its own context: when the run is interrupted the
	// bench must go on reading it while it ramps the drive down.
	srcCtx, stopSrc := context.WithCancel(context.WithoutCancel(ctx))
	defer stopSrc()
	if err := src.Start(srcCtx); err != nil {
		return nil, fmt.Errorf("sweep: starting the source: %w", err)
	}
	defer src.Close()
	if err := b.StartSweep(); err != nil {
		return nil, err
	}
	progDone := make(chan struct{})
	stopProg := make(chan struct{})
	go func() {
		defer close(progDone)
		tick := time.NewTicker(200 * time.Millisecond)
		defer tick.Stop()
		for {
			select {
			case <-stopProg:
				return
			case <-tick.C:
				select {
				case s := <-b.Latest():
					if opt.Progress != nil {
						fmt.Fprint(opt.Progress, "\r"+ProgressLine(s, 80)+"\x1b[K")
					}
				default:
				}
			}
		}
	}()
	runErr := b.Run(runCtx)
	close(stopProg)
	<-progDone
	if opt.Progress != nil {
		fmt.Fprint(opt.Progress, "\r\x1b[K")
	}
	// The final snapshot holds everything logged.
	last := b.Final()
	res := &Result{Points: last.Points, Jumps: last.Jumps, BandLoHz: last.BandLoHz, BandHiHz: last.BandHiHz,
		Completed: done, Record: last.RecordPath, Stats: last.Stats, Elapsed: time.Since(start)}
	if done {
		res.Stats = last.SweepStats
	}
	if !done {
		res.StopReason = "interrupted"
		if ctx.Err() == nil && runErr != nil {
			res.StopReason = runErr.Error()
		}
	}
	if runErr != nil && !errors.Is(runErr, context.Canceled) {
		return res, runErr
	}
	return res, nil
}

// ProgressLine renders a one-line progress bar of width columns.
func ProgressLine(s acquire.Snapshot, width int) string {
	frac := 0.0
	if s.PlanTotal > 0 {
		frac = float64(s.PlanDone) / float64(s.PlanTotal)
	}
	state := s.Phase.String()
	if s.Phase == acquire.PhaseSettling {
		state = fmt.Sprintf("%s %3.0f%%", s.Settle.State, 100*s.Settle.Progress)
	}
	tail := fmt.Sprintf(" %d/%d %s %9.4f Hz %s", s.PlanDone, s.PlanTotal, s.Direction, s.FreqHz, state)
	barW := width - len(tail) - 2
	if barW < 10 {
		barW = 10
	}
	n := int(math.Round(frac * float64(barW)))
	return "[" + strings.Repeat("#", n) + strings.Repeat("-", barW-n) + "]" + tail
}

// Summary writes a plain report of a run.
func Summary(w io.Writer, r *Result, unit string) {
	settled := 0
	for _, p := range r.Points {
		if p.Settled {
			settled++
		}
	}
	state := "completed"
	if !r.Completed {
		state = "stopped early (" + r.StopReason + ")"
	}
	fmt.Fprintf(w, "sweep %s in %.1f s: %d points logged, %d settled, %d not settled\n",
		state, r.Elapsed.Seconds(), len(r.Points), settled, len(r.Points)-settled)
	if r.Record != "" {
		fmt.Fprintf(w, "record: %s (sidecar %s)\n", r.Record, acquire.SidecarPath(r.Record))
	}
	if len(r.Jumps) == 0 {
		fmt.Fprintln(w, "jumps: none found")
	}
	for _, j := range r.Jumps {
		kind := "down"
		if j.Rise {
			kind = "up"
		}
		fmt.Fprintf(w, "jump %-4s on the %-4s sweep between %.4f and %.4f Hz (%.4g -> %.4g %s)\n",
			kind, j.Direction, math.Min(j.FromHz, j.ToHz), math.Max(j.FromHz, j.ToHz), j.AmpBefore, j.AmpAfter, unit)
	}
	if r.BandHiHz > r.BandLoHz {
		fmt.Fprintf(w, "bistable band: %.4f to %.4f Hz (%.3g Hz wide)\n", r.BandLoHz, r.BandHiHz, r.BandHiHz-r.BandLoHz)
	}
	if r.Stats.Gaps > 0 || r.Stats.Overloads > 0 || r.Stats.Dropped > 0 {
		fmt.Fprintf(w, "source: %d gaps, %d overloads, %d dropped blocks (no point was measured across them)\n",
			r.Stats.Gaps, r.Stats.Overloads, r.Stats.Dropped)
	}
}
