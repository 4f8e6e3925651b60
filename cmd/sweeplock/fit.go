package main

import (
	"fmt"
	"io"
	"os"

	"github.com/sweeplock/sweeplock/acquire/report"
)

// fitCmd fits the Duffing model to a record and prints what it found.
type fitCmd struct {
	Record string `arg:"" help:"Sweep record (CSV) to fit; its JSON sidecar is read when it is beside it." placeholder:"RUN.csv"`
	JSON   bool   `name:"json" help:"Print the result as JSON for scripts instead of a table."`
	Base   bool   `help:"Fit the base-excitation form (a shaker: the forcing grows as the square of the frequency) instead of a constant force."`

	stdout io.Writer // nil: os.Stdout (tests set it)
}

func (c *fitCmd) Run() error {
	run, err := report.Open(c.Record)
	if err != nil {
		return inputError(err)
	}
	rep, err := report.Analyze(run, report.Options{Base: c.Base})
	if err != nil {
		return inputError(err)
	}
	w := c.stdout
	if w == nil {
		w = os.Stdout
	}
	if c.JSON {
		err = rep.WriteJSON(w)
	} else {
		err = rep.WriteText(w)
	}
	if err != nil {
		return fmt.Errorf("writing the result: %w", err)
	}
	return nil
}

// inputError marks a record that cannot be used (unreadable, not a sweep
// record, nothing settled, too few points) as a usage mistake (exit 2).
func inputError(err error) error {
	if report.IsInputError(err) {
		return usageError{err}
	}
	return err
}
