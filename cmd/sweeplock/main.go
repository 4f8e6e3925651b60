// Command sweeplock characterises nonlinear resonators: it drives them
// with a stepped sine, waits for each point to settle, measures the
// fundamental and harmonics by lock-in, logs every point and fits a model.
// With no arguments it opens the live bench screen on the built-in
// simulated rig.
package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/signal"
	"syscall"

	"github.com/alecthomas/kong"
)

// exit codes
const (
	exitOK      = 0
	exitFailed  = 1
	exitMisuse  = 2
	programName = "sweeplock"
)

// version is set at build time with -ldflags "-X main.version=...".
var version = "0.1.0-dev"

type cli struct {
	Live       liveCmd       `cmd:"" default:"withargs" help:"Open the live bench screen (the default)."`
	Sweep      sweepCmd      `cmd:"" help:"Run a sweep plan headless and write a record."`
	ExampleRig exampleRigCmd `cmd:"" name:"example-rig" help:"Print the built-in demo rig file, a starting point for your own."`
	Fit        fitCmd        `cmd:"" help:"Fit the Duffing model to a sweep record."`
	Plot       plotCmd       `cmd:"" help:"Draw a sweep record (and its fit) to SVG, PNG or PDF."`
	Devices    devicesCmd    `cmd:"" help:"List serial ports and sound devices."`
	Calibrate  calibrateCmd  `cmd:"" help:"Measure the sound card's own response with its output wired to its input."`
	Version    versionCmd    `cmd:"" help:"Print the version."`
}

// usageError marks a mistake in how the program was called (exit 2).
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

func misuse(format string, a ...any) error { return usageError{fmt.Errorf(format, a...)} }

func main() {
	os.Exit(run(os.Args[1:]))
}

func run(args []string) int {
	var c cli
	parser, err := kong.New(&c,
		kong.Name(programName),
		kong.Description("Stepped-sine bench for nonlinear resonators: drive, settle, lock-in, log, fit."),
		kong.UsageOnError(),
		kong.Exit(func(code int) { panic(exitCode(code)) }),
	)
	if err != nil {
		fmt.Fprintln(os.Stderr, "sweeplock:", err)
		return exitFailed
	}
	kctx, perr := parseArgs(parser, args)
	if perr != nil {
		if ec, ok := perr.(exitCode); ok {
			return int(ec)
		}
		fmt.Fprintln(os.Stderr, "sweeplock:", perr)
		return exitMisuse
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM, syscall.SIGHUP)
	defer stop()
	kctx.BindTo(ctx, (*context.Context)(nil))
	if err := kctx.Run(); err != nil {
		fmt.Fprintln(os.Stderr, "sweeplock:", err)
		var ue usageError
		if errors.As(err, &ue) {
			return exitMisuse
		}
		return exitFailed
	}
	return exitOK
}

type exitCode int

func (e exitCode) Error() string { return fmt.Sprintf("exit %d", int(e)) }

// parseArgs runs kong's parser, turning its exit (after --help) into a
// value instead of ending the process.
func parseArgs(p *kong.Kong, args []string) (kctx *kong.Context, err error) {
	defer func() {
		if r := recover(); r != nil {
			if ec, ok := r.(exitCode); ok {
				kctx, err = nil, ec
				return
			}
			panic(r)
		}
	}()
	kctx, err = p.Parse(args)
	return kctx, err
}

type versionCmd struct{}

func (versionCmd) Run() error {
	fmt.Println(programName, version)
	return nil
}
