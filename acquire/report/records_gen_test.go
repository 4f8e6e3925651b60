//go:build records

package report

import (
	"context"
	"flag"
	"os"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/sweep"
)

// update regenerates the records under testdata/records by running the
// simulated rig (virtual time) through the same code path as
// `sweeplock sweep --virtual-time`:
//
//	go test -tags records ./acquire/report -run TestGenerateRecords -update
var update = flag.Bool("update", false, "regenerate ../../testdata/records with the simulated rig")

const hardRig = "../../testdata/hardening.toml"

// recordSpec is one committed record and how it is made; the command in
// the comment of recordSpecs makes the same record with the binary.
type recordSpec struct {
	name string
	rig  string
	o    rig.Override
	seed int64
}

// recordSpecs lists the committed records. Each is what
//
//	sweeplock sweep --rig RIG --virtual-time --drive D --step S [--start/--stop/--max-dwell] [--seed N] --out NAME.csv
//
// writes (RIG "demo" or testdata/hardening.toml). The steps are coarser
// than the rig files' own (0.1 Hz for the demo, 0.2 Hz for the hardening
// beam) to keep the files small; demo-0.3 starts at 33.5 Hz and hard-0.3
// stops at 136 Hz so that the sweeps cross both ends of their wider
// bistable bands. The dwell2s records give up on points near the jumps
// (--max-dwell 2s), for the check that unsettled points are left out.
// hard-0.2-fine has 202 points, for the benchmark.
func recordSpecs() []recordSpec {
	const dw = 2 * time.Second
	return []recordSpec{
		{"demo-0.1", "demo", rig.Override{DriveAmp: 0.1, StepHz: 0.1}, 0},
		{"demo-0.2", "demo", rig.Override{DriveAmp: 0.2, StepHz: 0.1}, 0},
		{"demo-0.3", "demo", rig.Override{DriveAmp: 0.3, StepHz: 0.1, StartHz: 33.5}, 0},
		{"hard-0.1", hardRig, rig.Override{DriveAmp: 0.1, StepHz: 0.2}, 0},
		{"hard-0.2", hardRig, rig.Override{DriveAmp: 0.2, StepHz: 0.2}, 0},
		{"hard-0.3", hardRig, rig.Override{DriveAmp: 0.3, StepHz: 0.2, StopHz: 136}, 0},
		{"demo-0.3-dwell2s-seed11", "demo", rig.Override{DriveAmp: 0.3, StepHz: 0.1, StartHz: 33.5, MaxDwell: dw}, 11},
		{"demo-0.3-dwell2s-seed12", "demo", rig.Override{DriveAmp: 0.3, StepHz: 0.1, StartHz: 33.5, MaxDwell: dw}, 12},
		{"demo-0.3-dwell2s-seed13", "demo", rig.Override{DriveAmp: 0.3, StepHz: 0.1, StartHz: 33.5, MaxDwell: dw}, 13},
		{"hard-0.2-fine", hardRig, rig.Override{DriveAmp: 0.2, StepHz: 0.12}, 0},
	}
}

// The composite record hard-0.3-third is the up-sweep of the hardening
// beam at 0.3 A from 35 to 45 Hz (around f0/3, step 0.1 Hz) followed by
// the points of hard-0.3 (its sidecar, with the jumps of the main sweep):
// one plan cannot cover both ranges at these steps, so two runs are joined.

// generate runs one spec into path (removing an older record first).
func generate(t *testing.T, path, rigPath string, o rig.Override, seed int64) {
	t.Helper()
	os.Remove(path)
	os.Remove(acquire.SidecarPath(path))
	s, err := rig.Open(rigPath, rig.Options{Virtual: true, RecordPath: path, RecordEager: true, Override: o,
		Seed: seed, Version: "testdata"})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	res, err := sweep.Run(context.Background(), s.Source, s.Drive, s.Bench, sweep.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Completed {
		t.Fatalf("%s: sweep did not complete: %s", path, res.StopReason)
	}
}

// joinRecords writes dst with the points of a then b (indices renumbered,
// b's times shifted to follow a's) and b's sidecar.
func joinRecords(t *testing.T, dst, a, b string) {
	t.Helper()
	ra, err := acquire.ReadRecord(a)
	if err != nil {
		t.Fatal(err)
	}
	rb, err := acquire.ReadRecord(b)
	if err != nil {
		t.Fatal(err)
	}
	os.Remove(dst)
	os.Remove(acquire.SidecarPath(dst))
	w, err := acquire.CreateRecord(dst, rb.Columns)
	if err != nil {
		t.Fatal(err)
	}
	defer w.Close()
	n, t0 := 0, 0.0
	for _, p := range ra.Points {
		p.Index = n
		n++
		t0 = p.TimeS
		if err := w.Write(p); err != nil {
			t.Fatal(err)
		}
	}
	for _, p := range rb.Points {
		p.Index = n
		n++
		p.TimeS += t0
		if err := w.Write(p); err != nil {
			t.Fatal(err)
		}
	}
	m := *rb.Meta
	m.Record = dst
	if m.Summary != nil {
		s := *m.Summary
		s.Points = n
		m.Summary = &s
	}
	if err := acquire.WriteSidecar(acquire.SidecarPath(dst), &m); err != nil {
		t.Fatal(err)
	}
}

// TestGenerateRecords regenerates the records with -update (the build
// tag keeps the rig and sweep packages out of the ordinary test build).
func TestGenerateRecords(t *testing.T) {
	if !*update {
		t.Skip("run with -update to regenerate the records")
	}
	if err := os.MkdirAll(recordDir, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, s := range recordSpecs() {
		if !slices.Contains(recordNames(), s.name) {
			t.Fatalf("%s is not in recordNames", s.name)
		}
		generate(t, recordPath(s.name), s.rig, s.o, s.seed)
	}
	part := filepath.Join(t.TempDir(), "third.csv")
	generate(t, part, hardRig, rig.Override{DriveAmp: 0.3, StartHz: 35, StopHz: 45, StepHz: 0.1, Direction: "up"}, 0)
	joinRecords(t, recordPath(thirdName), part, recordPath("hard-0.3"))
}
