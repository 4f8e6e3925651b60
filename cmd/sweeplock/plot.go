package main

import (
	"errors"
	"fmt"
	"io"
	"os"

	"gonum.org/v1/plot/vg"

	"github.com/sweeplock/sweeplock/acquire/report"
	"github.com/sweeplock/sweeplock/tui/figure"
)

// plotCmd draws records (and their fits) to an image file.
type plotCmd struct {
	Records []string `arg:"" help:"Sweep records (CSV) to draw; several go on one figure, one colour each, to compare drive levels." placeholder:"RUN.csv"`
	Out     string   `short:"o" required:"" help:"Figure to write: the extension chooses the format (.svg, .png or .pdf)." placeholder:"FIG.svg"`
	NoFit   bool     `name:"no-fit" help:"Draw the points only, without the fitted model."`
	Base    bool     `help:"Fit the base-excitation form instead of a constant force."`
	Width   float64  `help:"Figure width in inches (default 3.5, a journal column)." placeholder:"IN"`
	DPI     int      `name:"dpi" help:"PNG resolution in dots per inch (default 200)." placeholder:"N"`

	stdout, stderr io.Writer // nil: os.Stdout, os.Stderr (tests set them)
}

func (c *plotCmd) Run() error {
	stdout, stderr := c.stdout, c.stderr
	if stdout == nil {
		stdout = os.Stdout
	}
	if stderr == nil {
		stderr = os.Stderr
	}
	if _, err := figure.FormatOf(c.Out); err != nil {
		return usageError{fmt.Errorf("-o %s: %w", c.Out, err)}
	}
	if c.Width < 0 || c.DPI < 0 {
		return misuse("--width and --dpi must be positive")
	}
	var traces []figure.Trace
	for _, path := range c.Records {
		run, err := report.Open(path)
		if err != nil {
			return inputError(err)
		}
		t := figure.Trace{Run: run}
		if !c.NoFit {
			rep, err := report.Analyze(run, report.Options{Base: c.Base})
			switch {
			case err == nil:
				t.Fit = &rep.Fit
			case report.IsInputError(err):
				// The points can still be drawn.
				fmt.Fprintf(stderr, "sweeplock: %s: no fit drawn: %v\n", run.Name, err)
			default:
				return err
			}
		}
		traces = append(traces, t)
	}
	opt := figure.Options{Width: vg.Length(c.Width) * vg.Inch, DPI: c.DPI}
	if err := figure.Save(c.Out, traces, opt); err != nil {
		if errors.Is(err, figure.ErrFormat) {
			return usageError{err}
		}
		return err
	}
	fmt.Fprintf(stdout, "wrote %s (%d record(s))\n", c.Out, len(traces))
	return nil
}
