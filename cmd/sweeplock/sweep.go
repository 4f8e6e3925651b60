package main

import (
	"context"
	"fmt"
	"os"
	"time"

	"github.com/charmbracelet/x/term"

	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/sweep"
)

// rigFlags are shared by the commands that run a rig.
type rigFlags struct {
	Rig         string        `help:"Rig file (TOML), or \"demo\" for the built-in simulated strip." default:"demo" placeholder:"FILE"`
	VirtualTime bool          `name:"virtual-time" help:"Run the simulated rig as fast as the CPU allows instead of in real time."`
	Out         string        `help:"CSV record to write (never overwritten); a JSON sidecar goes beside it." placeholder:"RUN.csv"`
	Raw         string        `help:"Also capture the raw sensor samples to a 32-bit float WAV file." placeholder:"FILE.wav"`
	Start       float64       `help:"Plan start frequency (Hz), overriding the rig file." placeholder:"HZ"`
	Stop        float64       `help:"Plan stop frequency (Hz)." placeholder:"HZ"`
	Step        float64       `help:"Plan step (Hz)." placeholder:"HZ"`
	Points      int           `help:"Number of points per direction (instead of a step)." placeholder:"N"`
	Direction   string        `help:"up, down or up-down." placeholder:"DIR"`
	Drive       float64       `help:"Drive amplitude in the rig's drive unit (within its limit)." placeholder:"AMP"`
	MaxDwell    time.Duration `name:"max-dwell" help:"Longest wait for a point to settle." placeholder:"30s"`
	Refine      bool          `help:"After each jump, go back and re-approach it from the same side with smaller steps."`
	DriveLog    string        `name:"drive-log" hidden:"" help:"Write the simulated drive actually produced, one line per block (for tests)."`
	Seed        int64         `help:"Noise seed of the simulated rig (0 keeps the rig file's)."`
}

func (f *rigFlags) options(record string) rig.Options {
	return rig.Options{
		Virtual: f.VirtualTime, RecordPath: record, RawPath: f.Raw, DriveLogPath: f.DriveLog, Seed: f.Seed,
		Override: rig.Override{StartHz: f.Start, StopHz: f.Stop, StepHz: f.Step, Points: f.Points,
			Direction: f.Direction, DriveAmp: f.Drive, MaxDwell: f.MaxDwell, Refine: f.Refine},
		Version: version,
	}
}

type sweepCmd struct {
	rigFlags
	Verbose bool `short:"v" help:"Print a line for every logged point and jump as it happens."`
}

func (c *sweepCmd) Run(ctx context.Context) error {
	out := c.Out
	if out == "" {
		out = rig.NewRecordName(time.Now())
	}
	opt := c.options(out)
	opt.RecordEager = true  // fail before the run if the record cannot be made
	opt.Notices = os.Stderr // a silent serial port, a generator to set by hand
	setup, err := rig.Open(c.Rig, opt)
	if err != nil {
		return rigError(err)
	}
	defer setup.Close()
	sopt := sweep.Options{}
	if c.Verbose {
		sopt.Log = os.Stdout
	}
	if term.IsTerminal(os.Stderr.Fd()) {
		sopt.Progress = os.Stderr
	}
	fmt.Fprintf(os.Stderr, "sweeplock: %s on %s; writing %s\n", setup.Describe(), setup.File.Name, out)
	res, err := sweep.Run(ctx, setup.Source, setup.Drive, setup.Bench, sopt)
	if res != nil {
		sweep.Summary(os.Stdout, res, setup.Bench.Unit)
	}
	if err != nil {
		return err
	}
	if ctx.Err() != nil {
		return fmt.Errorf("interrupted: drive ramped down; %d points saved in %s", len(res.Points), out)
	}
	return nil
}

// rigError marks rig-file and plan mistakes as misuse (exit 2).
func rigError(err error) error {
	if rig.IsUsage(err) {
		return usageError{err}
	}
	return err
}

type exampleRigCmd struct{}

func (exampleRigCmd) Run() error {
	fmt.Print(rig.DemoText())
	return nil
}
