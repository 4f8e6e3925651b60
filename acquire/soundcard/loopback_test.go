//go:build portaudio

package soundcard

import (
	"context"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// These tests play through a real sound path with no sound card:
// PortAudio → ALSA → PulseAudio null sink → its monitor → PortAudio, as
// .ci/soundcard sets it up. They skip when that loopback is not there, so a
// plain go test -tags portaudio on a laptop neither fails nor plays tones
// through its speakers; with SWEEPLOCK_AUDIO=1 (set by .ci/soundcard) a
// missing loopback fails them instead.

// loopbackMissing says why the null-sink loopback is not there, "" when
// it is: PulseAudio answers and its default source is the monitor of its
// default sink.
func loopbackMissing() string {
	if _, err := exec.LookPath("pactl"); err != nil {
		return "pactl (PulseAudio) not found"
	}
	out, err := exec.Command("pactl", "info").CombinedOutput()
	if err != nil {
		return "no PulseAudio server answers (pactl info: " + strings.TrimSpace(string(out)) + ")"
	}
	var sink, source string
	for _, line := range strings.Split(string(out), "\n") {
		if v, ok := strings.CutPrefix(line, "Default Sink: "); ok {
			sink = strings.TrimSpace(v)
		}
		if v, ok := strings.CutPrefix(line, "Default Source: "); ok {
			source = strings.TrimSpace(v)
		}
	}
	if sink == "" || source != sink+".monitor" {
		return "PulseAudio's default source " + source + " is not the monitor of its default sink " + sink
	}
	return ""
}

func needLoopback(t *testing.T) {
	t.Helper()
	why := loopbackMissing()
	if why == "" {
		return
	}
	if os.Getenv("SWEEPLOCK_AUDIO") == "1" {
		t.Fatalf("SWEEPLOCK_AUDIO=1 but the audio loopback is missing: %s", why)
	}
	t.Skipf("skipped: no PulseAudio null-sink loopback (%s); bash .ci/soundcard sets one up and runs these tests", why)
}

// capture is a stretch of blocks copied out of the pool.
type capture struct {
	resp, ref, phase []float64
	blocks           []blockMeta
}

type blockMeta struct {
	seq      uint64
	flags    acquire.Flags
	driveHz  float64
	driveAmp float64
	at       int // index of the block's first frame in the capture
	frames   int
}

// append adds the blocks of d after those of c.
func (c *capture) append(d *capture) {
	base := len(c.resp)
	c.resp = append(c.resp, d.resp...)
	c.ref = append(c.ref, d.ref...)
	c.phase = append(c.phase, d.phase...)
	for _, b := range d.blocks {
		b.at += base
		c.blocks = append(c.blocks, b)
	}
}

// contiguous reports whether the capture has no gap and no missing block.
func (c *capture) contiguous() bool {
	for i, b := range c.blocks {
		if b.flags&acquire.FlagGap != 0 || (i > 0 && b.seq != c.blocks[i-1].seq+1) {
			return false
		}
	}
	return true
}

// collect copies n blocks; each(k) runs after block k is in.
func collect(t *testing.T, src acquire.Source, n int, each func(k int)) *capture {
	t.Helper()
	c := &capture{}
	for k := range n {
		var b *acquire.Block
		select {
		case got, ok := <-src.Blocks():
			if !ok {
				t.Fatalf("Blocks closed: %v", src.Err())
			}
			b = got
		case <-time.After(10 * time.Second):
			t.Fatalf("no block for 10 s (stats %+v)", src.Stats())
		}
		c.blocks = append(c.blocks, blockMeta{seq: b.Seq, flags: b.Flags, driveHz: b.DriveHz, driveAmp: b.DriveAmp, at: len(c.resp), frames: b.Frames})
		for i := range b.Frames {
			c.resp = append(c.resp, b.Data[i*b.Channels])
			c.ref = append(c.ref, b.Data[i*b.Channels+1])
			c.phase = append(c.phase, b.PhaseCyc[i])
		}
		src.Release(b)
		if each != nil {
			each(k)
		}
	}
	return c
}

// settleBlocks is how many blocks to skip after the drive reached a new
// setting before the loopback carries it: the path delay (PortAudio's
// input plus output latency) and 0.3 s more for the sound server.
func settleBlocks(card *Card) int {
	in, out := card.Latency()
	d := in + out + 300*time.Millisecond
	blk := time.Duration(float64(time.Second) * float64(card.cfg.FramesPerBuffer) / card.cfg.RateHz)
	return int(d/blk) + 1
}

// tries is how many captures a test takes before it gives up on getting
// one without a gap: a loaded machine makes the sound server drop audio
// now and then, and those captures are flagged, not measured.
const tries = 6

// steady waits until the blocks report amplitude a at frequency f and the
// loopback delay has passed, then returns a capture of n blocks with no
// gap (it tries again when the capture had one).
func steady(t *testing.T, card *Card, f, a float64, n int) *capture {
	t.Helper()
	src := card.Source()
	for range tries {
		for {
			c := collect(t, src, 1, nil)
			if b := c.blocks[0]; b.driveAmp == a && b.driveHz == f {
				break
			}
		}
		collect(t, src, settleBlocks(card), nil)
		c := collect(t, src, n, nil)
		if c.contiguous() {
			return c
		}
		t.Logf("capture had a gap, again (card stats %+v)", card.Stats())
	}
	t.Fatalf("no capture without a gap in %d tries", tries)
	return nil
}

// blockPhases fits each block of the response against the tool's phase
// (IEEE 1241 three-parameter fit) and returns the phase offsets θ: with a
// constant path delay they are all the same; a jump in the path (lost or
// repeated audio) shows up as a jump in θ.
func blockPhases(c *capture) []float64 {
	th := make([]float64, len(c.blocks))
	for i, b := range c.blocks {
		th[i] = fit3(c.resp[b.at:b.at+b.frames], c.phase[b.at:b.at+b.frames]).ThetaRad
	}
	return th
}

// unflaggedJumps counts pairs of consecutive unflagged blocks whose phase
// offsets differ by more than tol (a flagged block's own θ is not
// trusted: the break may be inside it).
func unflaggedJumps(c *capture, tol float64) (n int, worst float64) {
	th := blockPhases(c)
	for i := 1; i < len(th); i++ {
		d := math.Abs(math.Remainder(th[i]-th[i-1], 2*math.Pi))
		if c.blocks[i].flags&acquire.FlagGap == 0 && c.blocks[i-1].flags&acquire.FlagGap == 0 && c.blocks[i].seq == c.blocks[i-1].seq+1 {
			worst = max(worst, d)
			if d > tol {
				n++
			}
		}
	}
	return n, worst
}

// confirmSlips checks each block the card flagged as a slip (FlagGap with
// no jump in Seq) by an independent test: the block's own fit residual
// stands far above the capture's usual one, or the tone's phase offset
// differs between the blocks either side. It returns how many flagged
// blocks it confirmed and how many it could not.
func confirmSlips(c *capture, tol float64) (confirmed, unconfirmed int) {
	th := blockPhases(c)
	var rms []float64
	for _, b := range c.blocks {
		rms = append(rms, fit3(c.resp[b.at:b.at+b.frames], c.phase[b.at:b.at+b.frames]).RMS)
	}
	sorted := append([]float64(nil), rms...)
	slices.Sort(sorted)
	typical := sorted[len(sorted)/2]
	for i := 1; i+1 < len(c.blocks); i++ {
		b := c.blocks[i]
		if b.flags&acquire.FlagGap == 0 || b.seq != c.blocks[i-1].seq+1 {
			continue
		}
		jump := math.Abs(math.Remainder(th[i+1]-th[i-1], 2*math.Pi)) > tol
		if rms[i] > 10*typical || jump {
			confirmed++
		} else {
			unconfirmed++
		}
	}
	return confirmed, unconfirmed
}

// TestLoopback plays through the null sink and measures what comes back.
func TestLoopback(t *testing.T) {
	needLoopback(t)
	cfg := DefaultConfig() // 48 kHz, 2048 frames, 0.5 s buffering, response 0, reference 1, drive on outputs 0 and 1
	card, err := Open(cfg, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer func() {
		if err := card.Close(); err != nil {
			t.Errorf("Close: %v", err)
		}
	}()
	in, out := card.Latency()
	t.Logf("device %q, PortAudio latency in %v out %v", card.name, in, out)
	src, drv := card.Source(), card.Drive()
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	fs := cfg.RateHz
	var steadyCaps []*capture // for the continuity check at the end

	t.Run("tone comes back", func(t *testing.T) {
		// freqTolHz: a 4-parameter fit over 1 s of 16-bit audio has a
		// Cramér–Rao sd of about 1e−6 Hz (REFERENCES §3: var(f) ≥
		// 12/((2π)²ηN(N²−1)), η ≈ 1e9); 1e−4 Hz leaves room for the
		// harmonics and requantisation of the path, and a clock or
		// resampling error of 0.1 ppm (1e−4 Hz at 1 kHz) would fail it.
		const freqTolHz = 1e-4
		// ampTolDB: the brief's 0.1 dB. The null sink passes samples at unity
		// gain, 16-bit: a 0.4 tone is off by 1e−4 dB at most from rounding.
		const ampTolDB = 0.1
		// ratioTolDB: the brief's 0.05 dB; both channels carry the same
		// drive through the same path, so the ratio is 1 up to rounding.
		const ratioTolDB = 0.05
		// phaseTolRad: same path on both channels: the phase difference is
		// 0 up to noise (sd ≈ σ/(A√N) ≈ 1e−7 rad); 1e−3 rad is loose.
		const phaseTolRad = 1e-3
		const f, a = 1031.25, 0.4
		if err := drv.Set(f, a); err != nil {
			t.Fatal(err)
		}
		c := steady(t, card, f, a, 24)
		steadyCaps = append(steadyCaps, c)
		s := fit4(c.resp, fs, f*(1+1e-4)) // started 0.1 Hz off: the fit must find the frequency
		t.Logf("response: f %.7f Hz (set %g), A %.6f (%+.5f dB), residual rms %.2g", s.FreqHz, f, s.A, dB(s.A/a), s.RMS)
		if math.Abs(s.FreqHz-f) > freqTolHz {
			t.Errorf("frequency %.7f Hz, want %g ± %g", s.FreqHz, f, freqTolHz)
		}
		if d := dB(s.A / a); math.Abs(d) > ampTolDB {
			t.Errorf("amplitude %g is %.3f dB off %g, want within %g dB", s.A, d, a, ampTolDB)
		}
		r := fit4(c.ref, fs, f*(1-1e-4))
		if math.Abs(r.FreqHz-f) > freqTolHz || math.Abs(dB(r.A/a)) > ampTolDB {
			t.Errorf("reference: f %.7f A %g, want %g and %g", r.FreqHz, r.A, f, a)
		}
		// Ratio mode: both channels against the tool's own phase.
		resp, ref := fit3(c.resp, c.phase), fit3(c.ref, c.phase)
		ratio := dB(resp.A / ref.A)
		dth := math.Remainder(resp.ThetaRad-ref.ThetaRad, 2*math.Pi)
		t.Logf("response/reference: %+.6f dB, %.2g rad; phase against PhaseCyc %.4f rad (the path delay)", ratio, dth, resp.ThetaRad)
		if math.Abs(ratio) > ratioTolDB || math.Abs(dth) > phaseTolRad {
			t.Errorf("ratio %.4f dB, phase %.3g rad; want 0 ± %g dB, 0 ± %g rad", ratio, dth, ratioTolDB, phaseTolRad)
		}
	})

	t.Run("frequency change without a click", func(t *testing.T) {
		// A 5 % step: small enough that the continuity check does not flag
		// the change itself (it flags steps over 10 %), so a phase jump in
		// the drive would show twice: as a gap and as a step too large.
		const f1, f2, a = 1000.0, 1050.0, 0.4
		// stepTol: the path is 16-bit: each sample may be off by half an
		// LSB, so a step by two of them.
		const stepTol = 2 * 0.5 / 32768
		for try := 1; ; try++ {
			if err := drv.Set(f1, a); err != nil {
				t.Fatal(err)
			}
			steady(t, card, f1, a, 1)
			skip := settleBlocks(card)
			c := collect(t, src, skip+12, func(k int) {
				if k == 4 {
					if err := drv.Set(f2, a); err != nil {
						t.Error(err)
					}
				}
			})
			if !c.contiguous() {
				if try == tries {
					t.Fatalf("every capture had a gap (%d tries); a click in the drive would be flagged as one", tries)
				}
				t.Logf("capture had a gap, again (card stats %+v)", card.Stats())
				continue
			}
			bound := maxStep(f2, a, fs) + stepTol
			worst, at := 0.0, 0
			for i := 1; i < len(c.resp); i++ {
				if d := math.Abs(c.resp[i] - c.resp[i-1]); d > worst {
					worst, at = d, i
				}
			}
			t.Logf("largest step %.5f at frame %d, bound 2π·f·a/fs = %.5f", worst, at, bound)
			if worst > bound {
				t.Errorf("step %g at frame %d > %g: a click", worst, at, bound)
			}
			// The change is in the record: f1 at the start, f2 at the end.
			head := fit4(c.resp[:4*2048], fs, f1)
			tail := fit4(c.resp[len(c.resp)-6*2048:], fs, f2)
			t.Logf("record runs %.4f Hz, then %.4f Hz", head.FreqHz, tail.FreqHz)
			if math.Abs(head.FreqHz-f1) > 0.01 || math.Abs(tail.FreqHz-f2) > 0.01 {
				t.Errorf("record runs %g Hz then %g Hz, want %g then %g", head.FreqHz, tail.FreqHz, f1, f2)
			}
			return
		}
	})

	t.Run("off ramps to zero", func(t *testing.T) {
		const f, a = 800.0, 0.4
		// silentTol: the null sink adds no noise; 16-bit rounding of zero
		// is zero, so 1e−4 (−72 dB re 0.4) means silent.
		const silentTol = 1e-4
		for try := 1; ; try++ {
			if err := drv.Set(f, a); err != nil {
				t.Fatal(err)
			}
			steady(t, card, f, a, 1)
			done := make(chan error, 1)
			offAt := -1
			// Off takes the ramp plus the output delay; then the path delay
			// passes before the input is silent.
			c := collect(t, src, 2, nil)
			go func() { done <- drv.Off(context.Background()) }()
			for offAt < 0 {
				if len(c.blocks) > 200 {
					t.Fatal("Off did not return within 200 blocks of audio")
				}
				more := collect(t, src, 1, nil)
				c.append(more)
				select {
				case err := <-done:
					if err != nil {
						t.Error(err)
					}
					offAt = len(c.blocks) - 1
				default:
				}
			}
			c.append(collect(t, src, settleBlocks(card)+4, nil))
			n := len(c.blocks)
			if drv.Amp() != 0 {
				t.Fatalf("Off returned, amplitude %g", drv.Amp())
			}
			// DriveAmp falls monotonically to 0 along the ramp.
			for i := 1; i < len(c.blocks); i++ {
				if c.blocks[i].driveAmp > c.blocks[i-1].driveAmp {
					t.Fatalf("block %d: drive amplitude rose %g → %g during Off", i, c.blocks[i-1].driveAmp, c.blocks[i].driveAmp)
				}
			}
			if !c.contiguous() {
				if try == tries {
					t.Fatalf("every capture had a gap (%d tries)", tries)
				}
				t.Logf("capture had a gap, again (card stats %+v)", card.Stats())
				continue
			}
			// The response falls smoothly: no click on the way down.
			bound := maxStep(f, a, fs) + math.Pi/2*a/(cfg.Ramp.Seconds()*fs) + 2*0.5/32768
			peak := 0.0
			for i := 1; i < len(c.resp); i++ {
				if d := math.Abs(c.resp[i] - c.resp[i-1]); d > bound {
					t.Fatalf("frame %d: step %g > %g during the ramp down", i, d, bound)
				}
				peak = max(peak, math.Abs(c.resp[i]))
			}
			// After Off returned and the path delay has passed: silence.
			quietFrom := c.blocks[min(offAt+settleBlocks(card), len(c.blocks)-1)].at
			quiet := 0.0
			for _, x := range c.resp[quietFrom:] {
				quiet = max(quiet, math.Abs(x))
			}
			t.Logf("Off returned after block %d of %d; peak before %.4f; largest sample after the delay %.2g", offAt, n, peak, quiet)
			if peak < 0.99*a {
				t.Errorf("the record never had the tone (peak %g)", peak)
			}
			if quiet > silentTol {
				t.Errorf("after Off the response still reaches %g, want < %g", quiet, silentTol)
			}
			return
		}
	})

	t.Run("consumer behind, then the path watched", func(t *testing.T) {
		const f, a = 600.0, 0.3
		if err := drv.Set(f, a); err != nil {
			t.Fatal(err)
		}
		last := steady(t, card, f, a, 1).blocks[0].seq
		before, cardBefore := src.Stats(), card.Stats()
		// Stall for longer than the queue lasts (16 blocks = 0.68 s): the
		// card must drop blocks and mark the next one FlagGap.
		time.Sleep(1500 * time.Millisecond)
		// Then 3 s of the steady tone: count what the path lost, how it
		// was flagged, and (below) whether anything slipped through.
		c := collect(t, src, 70, nil)
		steadyCaps = append(steadyCaps, c)
		after, cardAfter := src.Stats(), card.Stats()
		// The queue's blocks come first (contiguous with the last one read
		// before the stall); then one jump in Seq over the dropped blocks,
		// on a block marked FlagGap.
		gaps, jumps := 0, 0
		prev := last
		for _, b := range c.blocks {
			if b.flags&acquire.FlagGap != 0 {
				gaps++
			}
			if b.seq != prev+1 {
				jumps++
				if b.flags&acquire.FlagGap == 0 {
					t.Errorf("Seq jumped %d → %d without FlagGap", prev, b.seq)
				}
			}
			prev = b.seq
		}
		if jumps != 1 || c.blocks[0].seq != last+1 {
			t.Errorf("after the stall: first seq %d (last read %d), %d jumps in Seq; want the queue first, then one jump", c.blocks[0].seq, last, jumps)
		}
		t.Logf("stall: dropped %d blocks; then %d of %d blocks flagged; PortAudio status flags: %d input overflow, %d input underflow, %d output underflow; continuity check: %d slips",
			after.Dropped-before.Dropped, gaps, len(c.blocks),
			cardAfter.InputOverflows-cardBefore.InputOverflows, cardAfter.InputUnderflows-cardBefore.InputUnderflows,
			cardAfter.OutputUnderflows-cardBefore.OutputUnderflows, cardAfter.Slips-cardBefore.Slips)
		if after.Dropped == before.Dropped {
			t.Errorf("a 1.5 s stall dropped no block")
		}
	})

	// Continuity, measured independently of the package's own check: in
	// each steady capture, consecutive unflagged blocks must carry the tone
	// with the same phase offset against PhaseCyc (the path delay is
	// constant). Audio lost or repeated in the path that neither PortAudio
	// nor the continuity check flagged would show as a jump here.
	// jumpTolRad: per-block θ has an sd near 1e−5 rad at these levels;
	// one lost frame at 600 Hz moves it by 0.08 rad. 1e−3 rad separates them.
	const jumpTolRad = 1e-3
	total, worst, confirmed, unconfirmed := 0, 0.0, 0, 0
	for _, c := range steadyCaps {
		n, w := unflaggedJumps(c, jumpTolRad)
		total += n
		worst = max(worst, w)
		y, u := confirmSlips(c, jumpTolRad)
		confirmed += y
		unconfirmed += u
	}
	cs := card.Stats()
	t.Logf("whole run: %d callbacks; PortAudio flagged %d input overflow, %d input underflow, %d output underflow; the continuity check flagged %d slips (in the steady captures %d confirmed independently, %d not); unflagged phase jumps %d (largest block-to-block change %.2g rad)",
		cs.Callbacks, cs.InputOverflows, cs.InputUnderflows, cs.OutputUnderflows, cs.Slips, confirmed, unconfirmed, total, worst)
	if total > 0 {
		t.Errorf("%d discontinuities in the returned tone were not flagged as gaps", total)
	}
	if unconfirmed > 0 {
		t.Errorf("%d blocks flagged as slips show no break by an independent check (false alarms)", unconfirmed)
	}
}

// TestLoopbackDevices checks the device list and Open's errors against the
// real PortAudio device list.
func TestLoopbackDevices(t *testing.T) {
	needLoopback(t)
	devs, err := ListDevices()
	if err != nil {
		t.Fatal(err)
	}
	var in, out bool
	for _, d := range devs {
		in = in || d.DefaultInput
		out = out || d.DefaultOutput
	}
	if !in || !out {
		t.Fatalf("no default input or output among\n%s", FormatDevices(devs))
	}
	t.Logf("devices:\n%s", FormatDevices(devs))

	cfg := DefaultConfig()
	cfg.Device = "no such device here"
	_, err = Open(cfg, Options{})
	var de *DeviceError
	if !errors.As(err, &de) || !strings.Contains(err.Error(), "no device has that name") || !strings.Contains(err.Error(), devs[0].Name) {
		t.Fatalf("missing device: %v", err)
	}

	cfg = DefaultConfig()
	cfg.ResponseChannel = MaxChannel // more inputs than the pulse device's 32
	_, err = Open(cfg, Options{})
	if !errors.As(err, &de) || !strings.Contains(err.Error(), "the configuration needs 64") {
		t.Fatalf("too many channels: %v", err)
	}
}

// TestLoopbackDisconnect kills a private PulseAudio daemon under a running
// card: the source must report a disconnect in plain words, close Blocks
// and leave Close working.
func TestLoopbackDisconnect(t *testing.T) {
	needLoopback(t)
	dir := t.TempDir()
	run, home := filepath.Join(dir, "run"), filepath.Join(dir, "home")
	for _, d := range []string{run, home} {
		if err := os.MkdirAll(d, 0o700); err != nil {
			t.Fatal(err)
		}
	}
	pa := "load-module module-null-sink sink_name=bench rate=48000 channels=2 norewinds=1\nset-default-sink bench\nset-default-source bench.monitor\nload-module module-native-protocol-unix\n"
	if err := os.WriteFile(filepath.Join(home, "bench.pa"), []byte(pa), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(home, ".asoundrc"), []byte("pcm.!default { type pulse }\nctl.!default { type pulse }\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	t.Setenv("XDG_RUNTIME_DIR", run)
	t.Setenv("HOME", home)
	start := exec.Command("pulseaudio", "-n", "-F", filepath.Join(home, "bench.pa"), "--exit-idle-time=-1", "--daemonize=yes")
	if out, err := start.CombinedOutput(); err != nil {
		t.Fatalf("starting a private PulseAudio: %v: %s", err, out)
	}
	t.Cleanup(func() { exec.Command("pulseaudio", "--kill").Run() })
	for i := 0; exec.Command("pactl", "info").Run() != nil; i++ {
		if i == 50 {
			t.Fatal("private PulseAudio did not answer")
		}
		time.Sleep(100 * time.Millisecond)
	}

	card, err := Open(DefaultConfig(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	src := card.Source()
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	if err := card.Drive().Set(1000, 0.2); err != nil {
		t.Fatal(err)
	}
	collect(t, src, 5, nil)
	if out, err := exec.Command("pulseaudio", "--kill").CombinedOutput(); err != nil {
		t.Fatalf("killing PulseAudio: %v: %s", err, out)
	}
	deadline := time.After(30 * time.Second)
drain:
	for {
		select {
		case b, ok := <-src.Blocks():
			if !ok {
				break drain
			}
			src.Release(b)
		case <-deadline:
			t.Fatalf("Blocks still open 30 s after the sound server died (stats %+v)", src.Stats())
		}
	}
	err = src.Err()
	t.Logf("after the kill: %v; stats %+v", err, src.Stats())
	if !errors.Is(err, acquire.ErrDisconnected) || !strings.Contains(err.Error(), "stopped delivering audio") {
		t.Fatalf("Err = %v, want a disconnect", err)
	}
	if src.Stats().Connected {
		t.Fatal("Stats says connected")
	}
	// Close must return; PortAudio's abort can hang for good once the
	// server is gone (seen here about one time in two), which Close reports
	// as ErrStuck after a bounded wait instead of hanging.
	if err := card.Close(); err != nil && !errors.Is(err, ErrStuck) {
		t.Fatalf("Close after the disconnect: %v", err)
	} else {
		t.Logf("Close after the disconnect: %v", err)
	}
}
