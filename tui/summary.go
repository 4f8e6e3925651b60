package tui

import (
	"fmt"
	"io"
	"math"
	"os"

	"github.com/sweeplock/sweeplock/acquire"
)

// Last returns the latest snapshot the screen has seen.
func (m *Model) Last() acquire.Snapshot { return m.snap }

// Summary writes, after the screen has closed, what the session saved:
// the record and its sidecar with the number of points (and how many did
// not settle), the jumps and band found, and the source's troubles. record
// is the CSV the bench was set to write; it exists only if a point was
// logged.
func Summary(w io.Writer, s acquire.Snapshot, record string) {
	if s.RecordPath != "" {
		record = s.RecordPath
	}
	if len(s.Points) == 0 {
		_, err := os.Stat(record)
		if record == "" || err != nil {
			fmt.Fprintln(w, "nothing was logged; no record written")
			return
		}
	}
	ns := 0
	for _, p := range s.Points {
		if !p.Settled {
			ns++
		}
	}
	fmt.Fprintf(w, "saved %s to %s (sidecar %s)", plural(len(s.Points), "point"), record, acquire.SidecarPath(record))
	if ns > 0 {
		fmt.Fprintf(w, "; %d of them not settled", ns)
	}
	fmt.Fprintln(w)
	for _, j := range s.Jumps {
		kind := "down"
		if j.Rise {
			kind = "up"
		}
		fmt.Fprintf(w, "jump %s on the %s sweep between %.4f and %.4f Hz\n", kind, j.Direction,
			math.Min(j.FromHz, j.ToHz), math.Max(j.FromHz, j.ToHz))
	}
	if s.BandHiHz > s.BandLoHz {
		fmt.Fprintf(w, "bistable band %.4f to %.4f Hz\n", s.BandLoHz, s.BandHiHz)
	}
	if st := s.Stats; st.Gaps > 0 || st.Overloads > 0 || st.Dropped > 0 {
		fmt.Fprintf(w, "source: %d gaps, %d overloads, %d dropped blocks (no point was measured across them)\n",
			st.Gaps, st.Overloads, st.Dropped)
	}
	if s.Err != "" {
		fmt.Fprintln(w, "last error:", s.Err)
	}
}
