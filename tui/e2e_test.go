package tui

import (
	"encoding/csv"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// TestEndToEndTmux drives the real program in a detached tmux session at
// 100×30 on the demo rig, as a user would: drive on, step up, wait for
// the point to settle, log it, start a three-point sweep, quit while it
// runs (confirming), and then checks the CSV it wrote and the drive trace
// of the simulated rig. The paced demo rig runs in real time, so the plan
// is tiny. Set SWEEPLOCK_BIN to test a binary built elsewhere.
func TestEndToEndTmux(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end run skipped in -short mode")
	}
	if _, err := exec.LookPath("tmux"); err != nil {
		t.Skip("tmux is not installed")
	}
	dir := t.TempDir()
	bin := os.Getenv("SWEEPLOCK_BIN")
	if bin == "" {
		bin = filepath.Join(dir, "sweeplock")
		build := exec.Command("go", "build", "-o", bin, "github.com/sweeplock/sweeplock/cmd/sweeplock")
		build.Dir = ".."
		if out, err := build.CombinedOutput(); err != nil {
			t.Fatalf("go build: %v\n%s", err, out)
		}
	}
	sock := filepath.Join(dir, "tmux.sock")
	tmux := func(args ...string) string {
		t.Helper()
		out, err := exec.Command("tmux", append([]string{"-S", sock, "-f", "/dev/null"}, args...)...).CombinedOutput()
		if err != nil {
			t.Fatalf("tmux %v: %v\n%s", args, err, out)
		}
		return string(out)
	}
	// NO_COLOR is set so the screen can be checked to carry no colour.
	run := "env NO_COLOR=1 " + bin + " --start 36 --stop 36.2 --step 0.1 --direction up --drive-log drive.csv" +
		"; echo EXIT=$?; sleep 60"
	tmux("new-session", "-d", "-x", "100", "-y", "30", "-s", "e2e", "-c", dir, run)
	t.Cleanup(func() { _ = exec.Command("tmux", "-S", sock, "kill-server").Run() })

	screen := func() string { return tmux("capture-pane", "-p", "-t", "e2e") }
	waitFor := func(what string, limit time.Duration) string {
		t.Helper()
		deadline := time.Now().Add(limit)
		for {
			s := screen()
			if strings.Contains(s, what) {
				return s
			}
			if time.Now().After(deadline) {
				t.Fatalf("no %q on screen within %v:\n%s", what, limit, s)
			}
			time.Sleep(200 * time.Millisecond)
		}
	}
	keys := func(k ...string) { tmux(append([]string{"send-keys", "-t", "e2e"}, k...)...) }

	waitFor("DRIVE    OFF", 10*time.Second)
	if raw := tmux("capture-pane", "-p", "-e", "-t", "e2e"); hasColour(raw) {
		t.Errorf("NO_COLOR screen has colour codes")
	}
	keys("d")
	waitFor("DRIVE    ON", 5*time.Second)
	waitFor("CAUTION a resonator driven at a jump", 5*time.Second)
	keys("Up", "Up", "Up")
	// three steps of 0.1 Hz from 36 Hz (the bench may nudge each to a
	// coherent frequency by a few mHz)
	deadline := time.Now().Add(5 * time.Second)
	for f := driveHz(screen()); !(f > 36.25 && f < 36.35); f = driveHz(screen()) {
		if time.Now().After(deadline) {
			t.Fatalf("drive at %g Hz after three steps up from 36 Hz:\n%s", f, screen())
		}
		time.Sleep(200 * time.Millisecond)
	}
	waitFor("= SETTLED", 30*time.Second)
	keys("l")
	waitFor("logged point 0", 10*time.Second)
	keys("g")
	waitFor("SWEEPING", 5*time.Second)
	waitFor("logged point 1", 30*time.Second)
	keys("q")
	waitFor("A sweep is running: stop it", 5*time.Second)
	keys("y")
	end := waitFor("EXIT=", 20*time.Second)
	if !strings.Contains(end, "EXIT=0") || !strings.Contains(end, "saved ") {
		t.Errorf("program did not end cleanly:\n%s", end)
	}

	// The record: one CSV, a header, rows that parse, settled flags.
	recs, _ := filepath.Glob(filepath.Join(dir, "run-*.csv"))
	if len(recs) != 1 {
		t.Fatalf("records %v, want one run-*.csv", recs)
	}
	f, err := os.Open(recs[0])
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil {
		t.Fatalf("record does not parse as CSV: %v", err)
	}
	if len(rows) < 3 {
		t.Fatalf("record has %d rows, want a header, the manual point and a sweep point", len(rows))
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for _, h := range []string{"direction", "freq_set_hz", "amp_h1_mm", "settled", "settle_state"} {
		if _, ok := col[h]; !ok {
			t.Fatalf("header %v has no %q", rows[0], h)
		}
	}
	for i, r := range rows[1:] {
		if _, err := strconv.ParseFloat(r[col["freq_set_hz"]], 64); err != nil {
			t.Errorf("row %d: frequency %q", i, r[col["freq_set_hz"]])
		}
		if a, err := strconv.ParseFloat(r[col["amp_h1_mm"]], 64); err != nil || !(a > 0) {
			t.Errorf("row %d: amplitude %q", i, r[col["amp_h1_mm"]])
		}
		st, state := r[col["settled"]], r[col["settle_state"]]
		if (st == "1") != (state == "settled") || (st != "0" && st != "1") {
			t.Errorf("row %d: settled %q with state %q", i, st, state)
		}
	}
	// the point logged by hand waited for "= SETTLED": it is settled
	if d, s := rows[1][col["direction"]], rows[1][col["settled"]]; d != "manual" || s != "1" {
		t.Errorf("first point: direction %q settled %q, want manual 1", d, s)
	}
	if d := rows[2][col["direction"]]; d != "up" {
		t.Errorf("second point: direction %q, want up", d)
	}

	// The drive trace: it went on, and was ramped to zero without a step.
	trace, err := os.ReadFile(filepath.Join(dir, "drive.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(trace)), "\n")
	if lines[0] != "t_s,freq_hz,amp" {
		t.Fatalf("drive trace header %q", lines[0])
	}
	var amps []float64
	for _, ln := range lines[1:] {
		parts := strings.Split(ln, ",")
		a, err := strconv.ParseFloat(parts[len(parts)-1], 64)
		if err != nil || len(parts) != 3 {
			t.Fatalf("drive trace line %q", ln)
		}
		amps = append(amps, a)
	}
	peak, maxStep := 0.0, 0.0
	for i, a := range amps {
		peak = math.Max(peak, a)
		if i > 0 {
			maxStep = math.Max(maxStep, math.Abs(a-amps[i-1]))
		}
	}
	if last := amps[len(amps)-1]; last != 0 {
		t.Errorf("drive ends at %g A, want 0", last)
	}
	if peak < 0.19 {
		t.Errorf("drive peaked at %g A; the demo's default is 0.2 A", peak)
	}
	// A raised-cosine ramp over T changes the amplitude by at most
	// (π/2)·A·Δt/T per block: with the demo's 500 ms ramp and 20 ms blocks,
	// 6.3 % of A. A cut would be 100 %. Allow 10 % for block timing.
	const maxStepFrac = 0.10
	if maxStep > maxStepFrac*peak {
		t.Errorf("drive changed by %g A in one block (%.0f %% of %g A): a step, not a ramp", maxStep, 100*maxStep/peak, peak)
	}
}

// driveHz reads the drive frequency off the screen's DRIVE row, NaN when
// it is not there.
func driveHz(screen string) float64 {
	for _, ln := range strings.Split(screen, "\n") {
		if rest, ok := strings.CutPrefix(ln, "DRIVE    ON  "); ok {
			if f, err := strconv.ParseFloat(strings.Fields(rest)[0], 64); err == nil {
				return f
			}
		}
	}
	return math.NaN()
}
