package tui_test

import (
	"os"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/tui"
)

// Summary says what a session saved once the screen has closed.
func ExampleSummary() {
	s := acquire.Snapshot{
		RecordPath: "run-20250314-100000.csv",
		Points:     []acquire.Point{{Settled: true}, {Settled: true}, {Settled: false}},
		Jumps:      []acquire.JumpJSON{{Direction: "up", FromHz: 115, ToHz: 115.5, Rise: true}},
	}
	tui.Summary(os.Stdout, s, "run-20250314-100000.csv")
	tui.Summary(os.Stdout, acquire.Snapshot{}, "")
	// Output:
	// saved 3 points to run-20250314-100000.csv (sidecar run-20250314-100000.json); 1 of them not settled
	// jump up on the up sweep between 115.0000 and 115.5000 Hz
	// nothing was logged; no record written
}
