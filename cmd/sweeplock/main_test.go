package main

import (
	"bufio"
	"encoding/json"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

var binPath string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "sweeplock-bin-")
	if err != nil {
		panic(err)
	}
	binPath = filepath.Join(dir, "sweeplock")
	out, err := exec.Command("go", "build", "-o", binPath, ".").CombinedOutput()
	if err != nil {
		os.RemoveAll(dir)
		panic("building sweeplock: " + err.Error() + "\n" + string(out))
	}
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// run starts the binary and returns its exit code and output.
func runBin(t *testing.T, dir string, args ...string) (int, string, string) {
	t.Helper()
	cmd := exec.Command(binPath, args...)
	cmd.Dir = dir
	var so, se strings.Builder
	cmd.Stdout, cmd.Stderr = &so, &se
	err := cmd.Run()
	code := 0
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	return code, so.String(), se.String()
}

// The README's first quick-start command, as a user types it.
func TestQuickStartSweep(t *testing.T) {
	dir := t.TempDir()
	code, out, errOut := runBin(t, dir, "sweep", "--rig", "demo", "--virtual-time", "--out", "run.csv")
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, out, errOut)
	}
	for _, want := range []string{"sweep completed", "jump up", "jump down", "bistable band"} {
		if !strings.Contains(out, want) {
			t.Errorf("summary lacks %q:\n%s", want, out)
		}
	}
	rec, err := acquire.ReadRecord(filepath.Join(dir, "run.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if rec.Truncated || len(rec.Points) != 161 || rec.Meta == nil || rec.Meta.Summary == nil || !rec.Meta.Summary.Completed {
		t.Errorf("record: truncated=%v points=%d meta=%v", rec.Truncated, len(rec.Points), rec.Meta != nil)
	}
	// A second run must not overwrite the first record.
	code, _, errOut = runBin(t, dir, "sweep", "--rig", "demo", "--virtual-time", "--out", "run.csv")
	if code != 2 || !strings.Contains(errOut, "never overwritten") {
		t.Errorf("overwrite attempt: exit %d, %q", code, errOut)
	}
}

// SIGKILL mid-run: every point the program had reported as logged is in
// the CSV and parses; the sidecar is valid JSON (or absent with the CSV
// intact). The record is written, flushed and synced row by row (STYLE §18).
func TestSweepKilledKeepsLoggedPoints(t *testing.T) {
	dir := t.TempDir()
	cmd := exec.Command(binPath, "sweep", "--rig", "demo", "--virtual-time", "--out", "run.csv", "-v")
	cmd.Dir = dir
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	reported := -1
	sc := bufio.NewScanner(stdout)
	for sc.Scan() {
		f := strings.Fields(sc.Text())
		if len(f) > 1 && f[0] == "point" {
			n, err := strconv.Atoi(f[1])
			if err != nil {
				t.Fatalf("bad progress line %q", sc.Text())
			}
			reported = n
			if n >= 25 {
				break
			}
		}
	}
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	cmd.Wait()
	if reported < 25 {
		t.Fatalf("the run ended before 25 points were reported (last %d)", reported)
	}
	rec, err := acquire.ReadRecord(filepath.Join(dir, "run.csv"))
	if err != nil {
		t.Fatalf("record after SIGKILL: %v", err)
	}
	if len(rec.Points) < reported+1 {
		t.Errorf("%d points reported as logged, %d in the CSV", reported+1, len(rec.Points))
	}
	for i, p := range rec.Points {
		if p.Index != i || !(p.Amp[0] > 0) || !(p.FreqSetHz > 0) {
			t.Errorf("row %d does not parse into a sane point: %+v", i, p)
		}
	}
	data, err := os.ReadFile(filepath.Join(dir, "run.json"))
	if err == nil {
		var v map[string]any
		if err := json.Unmarshal(data, &v); err != nil {
			t.Errorf("sidecar after SIGKILL is not valid JSON: %v", err)
		}
	} else if !os.IsNotExist(err) {
		t.Fatal(err)
	}
}

// SIGINT: the drive ramps to zero before the program exits. The simulated
// rig writes the drive it actually produced, block by block; the last
// amplitude must be zero, reached by a ramp no steeper than the rig's
// raised-cosine ramp allows (peak slope π·ΔA/(2·T), T = 500 ms).
func TestSweepInterruptRampsDown(t *testing.T) {
	dir := t.TempDir()
	cmd := exec.Command(binPath, "sweep", "--rig", "demo", "--virtual-time", "--out", "run.csv", "-v", "--drive-log", "drive.csv")
	cmd.Dir = dir
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	var se strings.Builder
	cmd.Stderr = &se
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	sc := bufio.NewScanner(stdout)
	for sc.Scan() {
		if strings.HasPrefix(sc.Text(), "point 10 ") {
			break
		}
	}
	if err := cmd.Process.Signal(os.Interrupt); err != nil {
		t.Fatal(err)
	}
	go func() {
		for sc.Scan() {
		}
	}()
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	select {
	case err = <-done:
	case <-time.After(60 * time.Second):
		cmd.Process.Kill()
		t.Fatal("no exit within 60 s of SIGINT")
	}
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != 1 {
		t.Errorf("exit after SIGINT: %v (want status 1)", err)
	}
	if !strings.Contains(se.String(), "drive ramped down") {
		t.Errorf("stderr does not say the drive was ramped down:\n%s", se.String())
	}
	data, err := os.ReadFile(filepath.Join(dir, "drive.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(data)), "\n")
	var ts, amps []float64
	for _, ln := range lines[1:] {
		f := strings.Split(ln, ",")
		tv, _ := strconv.ParseFloat(f[0], 64)
		a, err := strconv.ParseFloat(f[2], 64)
		if err != nil {
			t.Fatalf("drive log line %q", ln)
		}
		ts = append(ts, tv)
		amps = append(amps, a)
	}
	if last := amps[len(amps)-1]; last != 0 {
		t.Fatalf("the drive log ends at %g A, not 0", last)
	}
	const ampA, rampS = 0.2, 0.5
	maxSlope := math.Pi * ampA / (2 * rampS) // A/s, raised-cosine ramp
	hadFull := false
	for i := 1; i < len(amps); i++ {
		if amps[i-1] >= ampA*0.999 {
			hadFull = true
		}
		dt := ts[i] - ts[i-1]
		if d := math.Abs(amps[i] - amps[i-1]); d > maxSlope*dt*1.01+1e-12 {
			t.Fatalf("drive stepped by %g A in %g s at t=%g (max %g A)", d, dt, ts[i], maxSlope*dt)
		}
	}
	if !hadFull {
		t.Fatal("the drive never reached its amplitude: the test did not exercise a ramp down")
	}
	rec, err := acquire.ReadRecord(filepath.Join(dir, "run.csv"))
	if err != nil || len(rec.Points) < 11 {
		t.Fatalf("record after SIGINT: %v, %d points", err, len(rec.Points))
	}
}

// Bad input is refused with a clear message, the right exit status and
// nothing written.
func TestBadInput(t *testing.T) {
	dir := t.TempDir()
	demo, _ := exec.Command(binPath, "example-rig").Output()
	unknown := strings.Replace(string(demo), "step_hz = 0.05", "step_hz = 0.05\nstep_size = 0.1", 1)
	if err := os.WriteFile(filepath.Join(dir, "unknown.toml"), []byte(unknown), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		args []string
		code int
		msg  []string
	}{
		{"unknown key", []string{"--rig", "unknown.toml"}, 2, []string{"plan.step_size", "line", "allowed"}},
		{"negative step", []string{"--step", "-0.1"}, 2, []string{"step"}},
		{"start above stop going up", []string{"--start", "40", "--stop", "36", "--direction", "up"}, 2, []string{"start_hz", "up sweep"}},
		{"drive above limit", []string{"--drive", "5"}, 2, []string{"limit"}},
		{"unwritable output", []string{"--out", "no/such/folder/run.csv"}, 1, []string{"does not exist"}},
		{"unknown flag", []string{"--stepp", "1"}, 2, []string{"stepp"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			sub := filepath.Join(dir, strings.ReplaceAll(tc.name, " ", "_"))
			os.Mkdir(sub, 0o755)
			os.Link(filepath.Join(dir, "unknown.toml"), filepath.Join(sub, "unknown.toml"))
			args := append([]string{"sweep", "--virtual-time"}, tc.args...)
			if !strings.Contains(strings.Join(tc.args, " "), "--out") {
				args = append(args, "--out", "run.csv")
			}
			code, _, errOut := runBin(t, sub, args...)
			if code != tc.code {
				t.Errorf("exit %d, want %d; stderr: %s", code, tc.code, errOut)
			}
			for _, m := range tc.msg {
				if !strings.Contains(errOut, m) {
					t.Errorf("message %q lacks %q", strings.TrimSpace(errOut), m)
				}
			}
			left, _ := filepath.Glob(filepath.Join(sub, "*.csv"))
			left2, _ := filepath.Glob(filepath.Join(sub, "*.json"))
			if len(left)+len(left2) > 0 {
				t.Errorf("files written despite the error: %v %v", left, left2)
			}
		})
	}
}
