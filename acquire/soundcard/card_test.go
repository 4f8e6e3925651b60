package soundcard

import (
	"context"
	"errors"
	"math"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// fakeStream stands in for a PortAudio stream: a goroutine calls the
// engine's callback over and over, feeding each output channel back to the
// input channel of the same number one buffer later (a loopback cable), and
// keeps a copy of output channel 0.
type fakeStream struct {
	e *engine

	mu      sync.Mutex
	rec     []float32 // output channel 0, every frame made
	running bool
	stopped bool
	aborted bool
	closed  bool
	quit    chan struct{}
	done    chan struct{}
}

func newFake(e *engine) *fakeStream {
	return &fakeStream{e: e, quit: make(chan struct{}), done: make(chan struct{})}
}

func (f *fakeStream) Start() error {
	f.mu.Lock()
	f.running = true
	f.mu.Unlock()
	go f.run()
	return nil
}

func (f *fakeStream) run() {
	defer close(f.done)
	n := f.e.capacity
	in := make([]float32, n*f.e.inCh)
	out := make([]float32, n*f.e.outCh)
	for {
		select {
		case <-f.quit:
			return
		default:
		}
		f.e.process(in, out, 0)
		for i := range n {
			for c := range f.e.inCh {
				in[i*f.e.inCh+c] = 0
				if c < f.e.outCh {
					in[i*f.e.inCh+c] = out[i*f.e.outCh+c]
				}
			}
		}
		f.mu.Lock()
		for i := range n {
			f.rec = append(f.rec, out[i*f.e.outCh])
		}
		f.mu.Unlock()
		time.Sleep(100 * time.Microsecond)
	}
}

// die stops the callbacks without telling anyone, as a killed sound
// server does.
func (f *fakeStream) die() {
	f.mu.Lock()
	was := f.running
	f.running = false
	f.mu.Unlock()
	if was {
		close(f.quit)
		<-f.done
	}
}

func (f *fakeStream) Stop() error {
	f.die()
	f.mu.Lock()
	f.stopped = true
	f.mu.Unlock()
	return nil
}

func (f *fakeStream) Abort() error {
	f.die()
	f.mu.Lock()
	f.aborted = true
	f.mu.Unlock()
	return nil
}

func (f *fakeStream) Close() error {
	f.mu.Lock()
	f.closed = true
	f.mu.Unlock()
	return nil
}

func (f *fakeStream) Latency() (in, out time.Duration) { return 0, 0 }

func (f *fakeStream) record() []float32 {
	f.mu.Lock()
	defer f.mu.Unlock()
	return append([]float32(nil), f.rec...)
}

func newTestCard(t *testing.T, cfg Config, opt Options) (*Card, *fakeStream) {
	t.Helper()
	if err := cfg.Validate(); err != nil {
		t.Fatal(err)
	}
	opt = opt.withDefaults(cfg)
	e := newEngine(cfg, opt.QueueBlocks)
	fs := newFake(e)
	c, err := newCard(cfg, opt, e, fs, "fake", nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	return c, fs
}

// waitFor polls cond until it holds; it fails the test after a long
// deadline that only guards against a hang (no timing is asserted).
func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("gave up waiting for %s", what)
		}
		time.Sleep(time.Millisecond)
	}
}

// checkSmooth checks the recorded drive for clicks: no step between
// frames larger than a sine of frequency ≤ fMax and amplitude ≤ aMax can
// make (2π·f·a/fs, mean value theorem) plus the largest amplitude step of
// the ramp ((π/2)·aMax/rampFrames, the raised cosine's largest slope), and
// no sample above aMax.
func checkSmooth(t *testing.T, rec []float32, fMax, aMax, fs float64, rampFrames int) {
	t.Helper()
	// stepTol: float32 output rounding (6e−8 per sample, two samples).
	const stepTol = 1.2e-7
	bound := maxStep(fMax, aMax, fs) + math.Pi/2*aMax/float64(rampFrames) + stepTol
	for i := 1; i < len(rec); i++ {
		if d := math.Abs(float64(rec[i] - rec[i-1])); d > bound {
			t.Fatalf("frame %d: step %g > %g (a click)", i, d, bound)
		}
		if math.Abs(float64(rec[i])) > aMax+stepTol {
			t.Fatalf("frame %d: %g above the amplitude %g", i, rec[i], aMax)
		}
	}
}

// TestCardOff checks Off: the drive ramps to zero without a click, Off
// returns once it is there, and the output stays silent.
func TestCardOff(t *testing.T) {
	cfg := testConfig()
	c, fs := newTestCard(t, cfg, Options{})
	d := c.Drive()
	const f, a = 1000.0, 0.4
	if err := d.Set(f, a); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "the ramp up", func() bool { return d.Amp() == a })
	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
	defer cancel()
	if err := d.Off(ctx); err != nil {
		t.Fatal(err)
	}
	if d.Amp() != 0 {
		t.Fatalf("Off returned with amplitude %g", d.Amp())
	}
	offAt := len(fs.record())
	waitFor(t, "more frames", func() bool { return len(fs.record()) > offAt+4*cfg.FramesPerBuffer })
	rec := fs.record()
	for i := offAt; i < len(rec); i++ {
		if rec[i] != 0 {
			t.Fatalf("frame %d after Off returned: %g, want silence", i, rec[i])
		}
	}
	checkSmooth(t, rec, f, a, cfg.RateHz, int(cfg.Ramp.Seconds()*cfg.RateHz))
	// The ramp reached full amplitude and came back (the record is not
	// trivially silent).
	peak := 0.0
	for _, x := range rec {
		peak = max(peak, math.Abs(float64(x)))
	}
	if peak < 0.99*a {
		t.Fatalf("peak %g, want about %g", peak, a)
	}
}

// TestCardClose checks Close: it ramps the drive down before stopping the
// stream (Stop, not Abort), closes Blocks, is safe twice, and the drive
// refuses Set afterwards.
func TestCardClose(t *testing.T) {
	cfg := testConfig()
	c, fs := newTestCard(t, cfg, Options{})
	src, d := c.Source(), c.Drive()
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	const f, a = 700.0, 0.5
	if err := d.Set(f, a); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "the ramp up", func() bool { return d.Amp() == a })
	go func() {
		for b := range src.Blocks() {
			src.Release(b)
		}
	}()
	if err := c.Close(); err != nil {
		t.Fatal(err)
	}
	if err := src.Close(); err != nil {
		t.Fatalf("second Close: %v", err)
	}
	fs.mu.Lock()
	stopped, aborted, closed := fs.stopped, fs.aborted, fs.closed
	fs.mu.Unlock()
	if !stopped || aborted || !closed {
		t.Fatalf("stream stopped %v aborted %v closed %v; want a Stop and a Close", stopped, aborted, closed)
	}
	rec := fs.record()
	if last := rec[len(rec)-1]; last != 0 {
		t.Fatalf("last frame played %g, want 0 (ramped down)", last)
	}
	checkSmooth(t, rec, f, a, cfg.RateHz, int(cfg.Ramp.Seconds()*cfg.RateHz))
	if _, ok := <-src.Blocks(); ok {
		t.Fatal("Blocks still open after Close")
	}
	if err := d.Set(f, a); !errors.Is(err, ErrClosed) {
		t.Fatalf("Set after Close: %v, want ErrClosed", err)
	}
	if err := src.Start(context.Background()); !errors.Is(err, ErrClosed) {
		t.Fatalf("Start after Close: %v, want ErrClosed", err)
	}
}

// TestCardStartContext checks that the end of Start's context closes the
// card, ramping the drive down first.
func TestCardStartContext(t *testing.T) {
	cfg := testConfig()
	c, fs := newTestCard(t, cfg, Options{})
	src, d := c.Source(), c.Drive()
	ctx, cancel := context.WithCancel(context.Background())
	if err := src.Start(ctx); err != nil {
		t.Fatal(err)
	}
	if err := src.Start(ctx); err == nil {
		t.Fatal("second Start accepted")
	}
	if err := d.Set(300, 0.2); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "the ramp up", func() bool { return d.Amp() == 0.2 })
	cancel()
	for b := range src.Blocks() { // returns once the card has closed Blocks
		src.Release(b)
	}
	waitFor(t, "the stream to stop", func() bool {
		fs.mu.Lock()
		defer fs.mu.Unlock()
		return fs.closed
	})
	rec := fs.record()
	if rec[len(rec)-1] != 0 {
		t.Fatalf("last frame %g, want 0", rec[len(rec)-1])
	}
	if err := d.Set(300, 0.2); !errors.Is(err, ErrClosed) {
		t.Fatalf("Set after the context ended: %v", err)
	}
}

// TestCardSetRefuses checks the drive's limits: above max_level is
// acquire.ErrDriveLimit and changes nothing; frequencies outside
// (0, fs/2) and negative or NaN amplitudes are refused; any DC offset is
// refused (an AC-coupled output; common practice).
func TestCardSetRefuses(t *testing.T) {
	cfg := testConfig()
	cfg.MaxLevel = 0.5
	c, _ := newTestCard(t, cfg, Options{})
	d := c.Drive()
	if err := d.Set(100, 0.25); err != nil {
		t.Fatal(err)
	}
	before := c.eng.sp.Load()
	for _, tc := range []struct {
		name    string
		f, a    float64
		target  error
		contain string
	}{
		{"above limit", 100, 0.5000001, acquire.ErrDriveLimit, "max_level"},
		{"far above", 200, 3, acquire.ErrDriveLimit, "0.5"},
		{"negative", 100, -0.1, nil, "0 or more"},
		{"NaN amp", 100, math.NaN(), nil, "0 or more"},
		{"Nyquist", 24000, 0.1, ErrFreq, "24000"},
		{"zero Hz", 0, 0.1, ErrFreq, "0 Hz"},
		{"NaN Hz", math.NaN(), 0.1, ErrFreq, "NaN"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := d.Set(tc.f, tc.a)
			if err == nil || (tc.target != nil && !errors.Is(err, tc.target)) || !strings.Contains(err.Error(), tc.contain) {
				t.Fatalf("Set(%g, %g) = %v, want %v containing %q", tc.f, tc.a, err, tc.target, tc.contain)
			}
			if c.eng.sp.Load() != before {
				t.Fatal("a refused Set changed the setpoint")
			}
		})
	}
	if err := d.Set(100, 0.5); err != nil {
		t.Fatalf("Set at the limit: %v", err)
	}
	if err := c.SetOffset(0.1); !errors.Is(err, ErrNoDC) {
		t.Fatalf("SetOffset(0.1) = %v, want ErrNoDC", err)
	}
	if err := c.SetOffset(0); err != nil {
		t.Fatalf("SetOffset(0) = %v", err)
	}
	if i := d.Info(); i.MaxAmp != 0.5 || !i.Coherent || i.Kind != "soundcard" {
		t.Fatalf("DriveInfo %+v", i)
	}
}

// TestCardDisconnect checks report-and-exit when callbacks stop: Blocks
// closes, Err wraps acquire.ErrDisconnected, Stats says not connected,
// Set refuses, and Close aborts the dead stream without error.
func TestCardDisconnect(t *testing.T) {
	cfg := testConfig()
	c, fs := newTestCard(t, cfg, Options{Stall: 50 * time.Millisecond})
	src := c.Source()
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	if err := c.Drive().Set(1000, 0.3); err != nil {
		t.Fatal(err)
	}
	got := 0
	for b := range src.Blocks() {
		got++
		src.Release(b)
		if got == 20 {
			fs.die()
		}
	}
	err := src.Err()
	if !errors.Is(err, acquire.ErrDisconnected) || !strings.Contains(err.Error(), "stopped delivering audio") {
		t.Fatalf("Err = %v, want a plain disconnect message wrapping ErrDisconnected", err)
	}
	st := src.Stats()
	if st.Connected || st.Detail == "" || st.Blocks < 20 {
		t.Fatalf("Stats = %+v, want not connected with a detail", st)
	}
	if err := c.Drive().Set(1000, 0.1); !errors.Is(err, acquire.ErrDisconnected) {
		t.Fatalf("Set after disconnect: %v", err)
	}
	if err := c.Close(); err != nil {
		t.Fatalf("Close after disconnect: %v", err)
	}
	fs.mu.Lock()
	defer fs.mu.Unlock()
	if !fs.aborted || !fs.closed {
		t.Fatalf("dead stream aborted %v closed %v, want both", fs.aborted, fs.closed)
	}
}

// TestCardSource checks Info and Stats of a running source.
func TestCardSource(t *testing.T) {
	cfg := testConfig()
	c, _ := newTestCard(t, cfg, Options{})
	src := c.Source()
	info := src.Info()
	if info.Kind != "soundcard" || info.RateHz != cfg.RateHz || len(info.Channels) != 2 || info.FullScale != overloadAt {
		t.Fatalf("Info %+v", info)
	}
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	var seq uint64
	for k := 0; k < 50; k++ {
		b := <-src.Blocks()
		if b.Seq != seq && b.Flags&acquire.FlagGap == 0 {
			t.Fatalf("Seq jumped from %d to %d without FlagGap", seq, b.Seq)
		}
		seq = b.Seq + 1
		src.Release(b)
	}
	if st := src.Stats(); !st.Connected || st.Blocks < 50 {
		t.Fatalf("Stats %+v", st)
	}
	if cs := c.Stats(); cs.Callbacks == 0 || cs.Frames < uint64(50*cfg.FramesPerBuffer) {
		t.Fatalf("CardStats %+v", cs)
	}
}
