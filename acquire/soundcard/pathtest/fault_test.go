//go:build portaudio

package pathtest

import (
	"bufio"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// binDir holds the binary the tests build once (see TestMain).
var binDir string

var (
	buildOnce sync.Once
	binPath   string
	buildErr  error
)

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "sweeplock-pathtest-")
	if err != nil {
		panic(err)
	}
	binDir = dir
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// buildBinary builds the real sweeplock binary with sound card support,
// once for all the tests.
func buildBinary(t *testing.T) string {
	t.Helper()
	buildOnce.Do(func() {
		out, err := exec.Command("go", "env", "GOMOD").Output()
		if err != nil {
			buildErr = fmt.Errorf("go env GOMOD: %w", err)
			return
		}
		root := filepath.Dir(strings.TrimSpace(string(out)))
		bin := filepath.Join(binDir, "sweeplock")
		build := exec.Command("go", "build", "-tags", "portaudio", "-o", bin, "./cmd/sweeplock")
		build.Dir = root
		if b, err := build.CombinedOutput(); err != nil {
			buildErr = fmt.Errorf("go build -tags portaudio: %w\n%s", err, b)
			return
		}
		binPath = bin
	})
	if buildErr != nil {
		t.Fatal(buildErr)
	}
	return binPath
}

// runBinary runs the binary with the daemon's environment in dir and
// returns its exit status and output.
func runBinary(t *testing.T, d *daemon, dir string, args ...string) (int, string, string) {
	t.Helper()
	cmd := exec.Command(buildBinary(t), args...)
	cmd.Env, cmd.Dir = d.env(), dir
	var so, se strings.Builder
	cmd.Stdout, cmd.Stderr = &so, &se
	err := cmd.Run()
	var ee *exec.ExitError
	switch {
	case errors.As(err, &ee):
		return ee.ExitCode(), so.String(), se.String()
	case err != nil:
		t.Fatal(err)
	}
	return 0, so.String(), se.String()
}

// oneSink is the plain loopback: the card's outputs into a null sink whose
// monitor is the card's input.
const oneSink = "load-module module-null-sink sink_name=sl_bench rate=48000 channels=2 norewinds=1\n" +
	"set-default-sink sl_bench\nset-default-source sl_bench.monitor\nload-module module-native-protocol-unix\n"

// loopRig sweeps through the plain loopback with the ratio to the
// reference (output 1 comes back on input 1).
const loopRig = `
name = "null-sink loopback"
source = "soundcard"
drive = "soundcard"

[soundcard]
response_channel = 0
reference_channel = 1
output_channels = [0, 1]

[response]
unit = "FS"
sensor = "displacement"
volts_per_unit = 1.0

[drive_output]
amplitude = 0.3
max_amplitude = 0.5
ramp = "200ms"

[plan]
start_hz = 500.0
stop_hz = 2000.0
points = 15
spacing = "log"
direction = "up-down"
min_dwell_cycles = 10
max_dwell = "20s"
measure_cycles = 20
settle_tol = 0.002

[measure]
harmonics = ["1"]
settle_cycles = 2
`

// TestDaemonKilledMidSweep runs `sweeplock sweep` (built with -tags
// portaudio) on a sound card rig through a private PulseAudio daemon and
// kills the daemon (SIGKILL) once a few points are logged. The program
// must say the device was lost, stop with exit status 1 within a bounded
// time, and leave a record whose every row parses, with a sidecar that
// says why the run stopped.
func TestDaemonKilledMidSweep(t *testing.T) {
	bin := buildBinary(t)
	d := startDaemon(t, oneSink, false)
	dir := t.TempDir()
	rigPath := filepath.Join(dir, "loop.toml")
	if err := os.WriteFile(rigPath, []byte(loopRig), 0o644); err != nil {
		t.Fatal(err)
	}
	record := filepath.Join(dir, "run.csv")
	cmd := exec.Command(bin, "sweep", "--rig", rigPath, "--out", record, "-v")
	cmd.Env = d.env()
	cmd.Dir = dir
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	var out strings.Builder
	var mu sync.Mutex
	logged := make(chan int, 64)
	copied := make(chan struct{})
	go func() {
		defer close(copied)
		sc := bufio.NewScanner(stdout)
		n := 0
		for sc.Scan() {
			line := sc.Text()
			mu.Lock()
			out.WriteString(line + "\n")
			mu.Unlock()
			if strings.HasPrefix(line, "point ") {
				n++
				logged <- n
			}
		}
	}()
	// killAfter points: enough to be well into the sweep.
	const killAfter = 4
	timeout := time.After(90 * time.Second)
	for n := 0; n < killAfter; {
		select {
		case n = <-logged:
		case <-timeout:
			cmd.Process.Kill()
			mu.Lock()
			t.Fatalf("no %d points within 90 s:\n%s\n%s", killAfter, out.String(), stderr.String())
		}
	}
	killed := time.Now()
	if err := d.killHard(); err != nil {
		t.Fatalf("killing the daemon: %v", err)
	}
	done := make(chan error, 1)
	go func() { <-copied; done <- cmd.Wait() }()
	// exitWithin: the card calls a silence of 10 buffers or 1 s a
	// disconnect; closing a stream whose server died is bounded at the
	// output delay plus 2 s and a little (soundcard.Card.Close).
	const exitWithin = 30 * time.Second
	var werr error
	select {
	case werr = <-done:
	case <-time.After(exitWithin):
		cmd.Process.Kill()
		<-done
		t.Fatalf("still running %v after the daemon was killed:\n%s\n%s", exitWithin, out.String(), stderr.String())
	}
	took := time.Since(killed)
	code := 0
	var ee *exec.ExitError
	if errors.As(werr, &ee) {
		code = ee.ExitCode()
	} else if werr != nil {
		t.Fatal(werr)
	}
	mu.Lock()
	so := out.String()
	mu.Unlock()
	se := stderr.String()
	t.Logf("exit %d %.1f s after the kill\nstdout:\n%s\nstderr (ALSA and JACK chatter left out):\n%s", code, took.Seconds(), so, quiet(se))
	if code != 1 {
		t.Errorf("exit status %d, want 1 (the bench failed)", code)
	}
	if !strings.Contains(se, "stopped delivering audio") || !strings.Contains(se, "went away") {
		t.Errorf("stderr does not say the sound device was lost:\n%s", quiet(se))
	}
	if !strings.Contains(so, "stopped early") {
		t.Errorf("the summary does not say the sweep stopped early:\n%s", so)
	}

	// The record is intact: every row parses and the sidecar says why it
	// stopped.
	rec, err := acquire.ReadRecord(record)
	if err != nil {
		t.Fatalf("reading the record: %v", err)
	}
	t.Logf("record: %d points, truncated %v", len(rec.Points), rec.Truncated)
	if rec.Truncated {
		t.Errorf("the record's last row is cut")
	}
	if len(rec.Points) < killAfter {
		t.Errorf("the record holds %d points, %d were logged before the kill", len(rec.Points), killAfter)
	}
	if rec.Meta == nil || rec.Meta.Summary == nil {
		t.Fatalf("no sidecar summary")
	}
	sum := rec.Meta.Summary
	t.Logf("sidecar: completed %v, stop reason %q, %d points", sum.Completed, sum.StopReason, sum.Points)
	if sum.Completed || !strings.Contains(sum.StopReason, "stopped delivering audio") || sum.Points != len(rec.Points) {
		t.Errorf("sidecar summary %+v: want not completed, the disconnect as the reason, %d points", sum, len(rec.Points))
	}
}

// quiet drops the lines ALSA and JACK print when PortAudio probes its
// host APIs, which say nothing about the run.
func quiet(s string) string {
	var keep []string
	for _, l := range strings.Split(s, "\n") {
		if strings.HasPrefix(l, "ALSA lib") || strings.Contains(l, "jack") || strings.Contains(l, "Jack") ||
			strings.HasPrefix(l, "Cannot connect to server") {
			continue
		}
		keep = append(keep, l)
	}
	return strings.Join(keep, "\n")
}
