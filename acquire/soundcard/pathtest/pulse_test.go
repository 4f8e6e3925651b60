//go:build portaudio

package pathtest

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// needPrograms skips (or, with SWEEPLOCK_AUDIO=1, fails) when a program the
// sound path needs is missing.
func needPrograms(t *testing.T, names ...string) {
	t.Helper()
	for _, n := range names {
		if _, err := exec.LookPath(n); err != nil {
			if os.Getenv("SWEEPLOCK_AUDIO") == "1" {
				t.Fatalf("SWEEPLOCK_AUDIO=1 but %s is not installed (apt-get install pulseaudio pulseaudio-utils sox)", n)
			}
			t.Skipf("skipped: %s not installed; bash .ci/soundcard installs what is needed and runs these tests", n)
		}
	}
}

// daemon is a private PulseAudio server: its own runtime folder and home,
// so it shares nothing with any other sound setup.
type daemon struct {
	run, home string
	log       string
}

// env returns the environment a client of this daemon needs, on top of
// os.Environ.
func (d *daemon) env() []string {
	return append(os.Environ(), "XDG_RUNTIME_DIR="+d.run, "HOME="+d.home)
}

// command makes a command that talks to this daemon.
func (d *daemon) command(name string, args ...string) *exec.Cmd {
	c := exec.Command(name, args...)
	c.Env = d.env()
	return c
}

// startDaemon starts a private PulseAudio with the given startup script
// (module lines) and, with inProcess, points this process's own sound
// clients (PortAudio through ALSA's pulse plugin) at it. It is stopped when
// the test ends.
func startDaemon(t *testing.T, script string, inProcess bool) *daemon {
	t.Helper()
	needPrograms(t, "pulseaudio", "pactl", "parec", "pacat")
	dir := t.TempDir()
	d := &daemon{run: filepath.Join(dir, "run"), home: filepath.Join(dir, "home"), log: filepath.Join(dir, "pulse.log")}
	for _, p := range []string{d.run, d.home} {
		if err := os.MkdirAll(p, 0o700); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.WriteFile(filepath.Join(d.home, "sweeplock.pa"), []byte(script), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(d.home, ".asoundrc"), []byte("pcm.!default { type pulse }\nctl.!default { type pulse }\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	if inProcess {
		t.Setenv("XDG_RUNTIME_DIR", d.run)
		t.Setenv("HOME", d.home)
	}
	start := d.command("pulseaudio", "-n", "-F", filepath.Join(d.home, "sweeplock.pa"),
		"--exit-idle-time=-1", "--daemonize=yes", "--log-target=file:"+d.log)
	if out, err := start.CombinedOutput(); err != nil {
		t.Fatalf("starting a private PulseAudio: %v: %s", err, out)
	}
	t.Cleanup(func() {
		if d.command("pulseaudio", "--kill").Run() != nil {
			// --kill finds the daemon through its runtime folder; if that
			// failed, end it through its pid file so no daemon outlives
			// the test.
			d.killHard()
		}
		if t.Failed() {
			if b, err := os.ReadFile(d.log); err == nil {
				lines := strings.Split(strings.TrimSpace(string(b)), "\n")
				t.Logf("PulseAudio log, last lines:\n%s", strings.Join(lines[max(0, len(lines)-30):], "\n"))
			}
		}
	})
	for i := 0; d.command("pactl", "info").Run() != nil; i++ {
		if i == 100 {
			t.Fatal("private PulseAudio did not answer within 10 s")
		}
		time.Sleep(100 * time.Millisecond)
	}
	return d
}

// killDaemon kills the daemon at once (SIGKILL through its pid file, as a
// crash would), falling back to pulseaudio --kill.
func (d *daemon) killHard() error {
	b, err := os.ReadFile(filepath.Join(d.run, "pulse", "pid"))
	if err == nil {
		var pid int
		if _, err := fmt.Sscan(strings.TrimSpace(string(b)), &pid); err == nil && pid > 1 {
			if p, err := os.FindProcess(pid); err == nil {
				return p.Kill()
			}
		}
	}
	return d.command("pulseaudio", "--kill").Run()
}

// filterPath carries audio from one sink's monitor to another sink through
// sox: parec reads the source, sox filters it, and the second sink gets a
// stereo stream whose first channel is the filtered audio and whose second
// channel is the same audio unfiltered, sample for sample (the reference).
// Both channels travel the same pipe, so they keep their alignment: frame
// i of the output holds sox's output for input frame i next to input frame
// i itself.
type filterPath struct {
	procs []*exec.Cmd
	wg    sync.WaitGroup

	mu       sync.Mutex
	err      error
	frames   uint64
	maxQueue int
	breaks   int // breaks made on purpose
}

// breaker makes breaks in the path on purpose: every so often it drops or
// repeats a few frames of both channels together, as a sound server that
// loses or repeats audio does. It is seeded, so a run is repeatable in
// where the breaks fall in the stream.
type breaker struct {
	rng        *rand.Rand
	minGap     int // frames between breaks: uniform in [minGap, maxGap)
	maxGap     int
	minK, maxK int // frames dropped or repeated: uniform in [minK, maxK]
	next       int // frames to the next break
	drop       bool
	last       []float32 // the frames just passed, for a repeat
}

const pathRateHz = 48000

// startFilterPath starts parec | sox effect | pacat with the given latency
// on each PulseAudio stream.
func startFilterPath(t *testing.T, d *daemon, from, to string, latency time.Duration, brk *breaker, effect ...string) *filterPath {
	t.Helper()
	needPrograms(t, "sox")
	ms := fmt.Sprint(latency.Milliseconds())
	raw := []string{"-t", "raw", "-e", "floating-point", "-b", "32", "-r", fmt.Sprint(pathRateHz), "-c", "1"}
	rec := d.command("parec", "--device="+from, "--raw", "--format=float32le", fmt.Sprintf("--rate=%d", pathRateHz),
		"--channels=1", "--latency-msec="+ms)
	soxArgs := append(append(append([]string{"-q", "--buffer", "4096"}, raw...), "-"), raw...)
	soxArgs = append(append(soxArgs, "-"), effect...)
	fx := d.command("sox", soxArgs...)
	play := d.command("pacat", "--playback", "--device="+to, "--raw", "--format=float32le", fmt.Sprintf("--rate=%d", pathRateHz),
		"--channels=2", "--latency-msec="+ms)
	p := &filterPath{procs: []*exec.Cmd{rec, fx, play}}
	recOut, err := rec.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	fxIn, err := fx.StdinPipe()
	if err != nil {
		t.Fatal(err)
	}
	fxOut, err := fx.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	playIn, err := play.StdinPipe()
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range p.procs {
		c.Stderr = &prefixWriter{t: t, prefix: filepath.Base(c.Path) + ": "}
		if err := c.Start(); err != nil {
			t.Fatal(err)
		}
	}
	// The unfiltered copy waits here for sox's output.
	queue := make(chan []float32, 4096)
	p.wg.Add(2)
	go func() { // parec → sox, and a copy to the queue
		defer p.wg.Done()
		defer fxIn.Close()
		defer close(queue)
		r := bufio.NewReaderSize(recOut, 1<<14)
		buf := make([]byte, 1024*4)
		for {
			n, err := io.ReadFull(r, buf)
			n -= n % 4
			if n > 0 {
				s := make([]float32, n/4)
				for i := range s {
					s[i] = math.Float32frombits(binary.LittleEndian.Uint32(buf[4*i:]))
				}
				if brk != nil {
					var made bool
					if s, made = brk.apply(s); made {
						p.mu.Lock()
						p.breaks++
						p.mu.Unlock()
					}
				}
				out := make([]byte, 4*len(s))
				for i, v := range s {
					binary.LittleEndian.PutUint32(out[4*i:], math.Float32bits(v))
				}
				queue <- s
				p.mu.Lock()
				p.maxQueue = max(p.maxQueue, len(queue))
				p.mu.Unlock()
				if _, werr := fxIn.Write(out); werr != nil {
					p.fail(fmt.Errorf("writing to sox: %w", werr))
					return
				}
			}
			if err != nil {
				if !errors.Is(err, io.EOF) && !errors.Is(err, io.ErrUnexpectedEOF) && !errors.Is(err, os.ErrClosed) {
					p.fail(fmt.Errorf("reading parec: %w", err))
				}
				return
			}
		}
	}()
	go func() { // sox → pacat, each filtered frame beside its input frame
		defer p.wg.Done()
		defer playIn.Close()
		r := bufio.NewReaderSize(fxOut, 1<<14)
		w := bufio.NewWriterSize(playIn, 1<<14)
		var pend []float32
		in := make([]byte, 4)
		out := make([]byte, 8)
		for {
			if _, err := io.ReadFull(r, in); err != nil {
				w.Flush()
				return
			}
			for len(pend) == 0 {
				s, ok := <-queue
				if !ok {
					p.fail(errors.New("sox gave more samples than it was given"))
					return
				}
				pend = s
			}
			copy(out[:4], in)
			binary.LittleEndian.PutUint32(out[4:], math.Float32bits(pend[0]))
			pend = pend[1:]
			if _, err := w.Write(out); err != nil {
				p.fail(fmt.Errorf("writing to pacat: %w", err))
				return
			}
			if r.Buffered() == 0 {
				if err := w.Flush(); err != nil {
					p.fail(fmt.Errorf("writing to pacat: %w", err))
					return
				}
			}
			p.mu.Lock()
			p.frames++
			p.mu.Unlock()
		}
	}()
	t.Cleanup(p.stop)
	return p
}

func (p *filterPath) fail(err error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.err == nil {
		p.err = err
	}
}

// status reports the frames carried so far, the breaks made on purpose
// and the first error.
func (p *filterPath) status() (uint64, int, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.frames, p.breaks, p.err
}

// newBreaker makes a breaker with the given seed.
func newBreaker(seed uint64, minGap, maxGap, minK, maxK int) *breaker {
	b := &breaker{rng: rand.New(rand.NewPCG(seed, 1)), minGap: minGap, maxGap: maxGap, minK: minK, maxK: maxK}
	b.next = b.gap()
	return b
}

func (b *breaker) gap() int { return b.minGap + b.rng.IntN(b.maxGap-b.minGap) }

// apply passes s on with at most one break in it, alternately dropping and
// repeating k frames, and reports whether it made one.
func (b *breaker) apply(s []float32) ([]float32, bool) {
	made := false
	if b.next < len(s) {
		k := b.minK + b.rng.IntN(b.maxK-b.minK+1)
		i := b.next
		b.drop = !b.drop
		var out []float32
		switch {
		case b.drop && i+k <= len(s):
			out = append(append(out, s[:i]...), s[i+k:]...)
			made = true
		case !b.drop && i >= k:
			out = append(append(append(out, s[:i]...), s[i-k:i]...), s[i:]...)
			made = true
		default:
			out = s
		}
		s = out
		b.next = b.gap()
	} else {
		b.next -= len(s)
	}
	return s, made
}

// stop ends the three processes (the ones this test started, by their own
// handles) and waits for the copiers.
func (p *filterPath) stop() {
	for _, c := range p.procs {
		if c.Process != nil {
			c.Process.Kill()
		}
	}
	for _, c := range p.procs {
		c.Wait()
	}
	p.wg.Wait()
}

// prefixWriter passes a child's stderr to the test log, line by line.
type prefixWriter struct {
	t      *testing.T
	prefix string
	mu     sync.Mutex
	buf    []byte
}

func (w *prefixWriter) Write(b []byte) (int, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	w.buf = append(w.buf, b...)
	for {
		i := strings.IndexByte(string(w.buf), '\n')
		if i < 0 {
			break
		}
		w.t.Log(w.prefix + string(w.buf[:i]))
		w.buf = w.buf[i+1:]
	}
	return len(b), nil
}

// execOutput runs a program and returns its combined output.
func execOutput(name string, args ...string) (string, error) {
	out, err := exec.Command(name, args...).CombinedOutput()
	return string(out), err
}
