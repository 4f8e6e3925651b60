package report

import (
	"fmt"
	"path/filepath"
	"testing"

	"github.com/sweeplock/sweeplock/acquire"
)

// recordDir is where the committed records live, relative to this
// package. They are made by the simulated rig; records_gen_test.go (build
// tag "records") regenerates them:
//
//	go test -tags records ./acquire/report -run TestGenerateRecords -update
//
// and testdata/records/README.md gives the equivalent sweeplock commands.
const recordDir = "../../testdata/records"

// thirdName is the composite record with a sweep around f0/3 (see
// records_gen_test.go).
const thirdName = "hard-0.3-third"

// recordNames lists the committed records.
func recordNames() []string {
	return []string{"demo-0.1", "demo-0.2", "demo-0.3", "hard-0.1", "hard-0.2", "hard-0.3",
		"demo-0.3-dwell2s-seed11", "demo-0.3-dwell2s-seed12", "demo-0.3-dwell2s-seed13",
		"hard-0.2-fine", thirdName}
}

func recordPath(name string) string { return filepath.Join(recordDir, name+".csv") }

const regenerate = "(regenerate the records: go test -tags records ./acquire/report -run TestGenerateRecords -update)"

// Every committed record reads back, with its sidecar and points.
func TestRecordsPresent(t *testing.T) {
	for _, n := range recordNames() {
		rec, err := acquire.ReadRecord(recordPath(n))
		if err != nil {
			t.Fatalf("%v\n%s", err, regenerate)
		}
		if rec.Meta == nil || len(rec.Points) == 0 || rec.Truncated {
			t.Errorf("%s: sidecar %v, %d points, truncated %v", n, rec.Meta != nil, len(rec.Points), rec.Truncated)
		}
	}
}

// openRecord opens a committed record for a test.
func openRecord(t testing.TB, name string) *Run {
	t.Helper()
	r, err := Open(recordPath(name))
	if err != nil {
		t.Fatal(fmt.Errorf("%w\n%s", err, regenerate))
	}
	return r
}
