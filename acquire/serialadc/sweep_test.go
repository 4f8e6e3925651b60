package serialadc_test

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/serialadc"
	"github.com/sweeplock/sweeplock/acquire/sweep"
)

// The end-to-end checks of the serial ADC path. A test plays the
// microcontroller: it takes the built-in demo rig's simulated samples (the
// 12-bit 0..3.3 V converter's output), turns them back into ADC codes,
// packs one 80-frame block per binary packet and writes it to a
// pseudo-terminal; the bench reads the other end through serialadc.Source,
// built from testdata/serial-demo.toml, and drives the simulated coil.
//
// The device keeps in step with the bench: it hands the simulated rig its
// block k back (so the rig, on virtual time, makes block k+1 with whatever
// drive the bench has set by then) only once the bench has released the
// serial block made from block k−lead. The two sweeps then differ only in
// what the serial path changes: the samples travel as codes over a tty
// (exactly: TestPtyCarriesSimSamples), a drive change reaches them lead
// blocks later, and the blocks carry neither the drive's phase nor its
// frequency, so the bench tracks the drive by fitting the response.

const (
	serialDemo = "../../testdata/serial-demo.toml"
	// runGuard bounds a whole sweep so a broken test fails instead of
	// hanging; it is not a speed requirement.
	runGuard = 3 * time.Minute
	// lead is how many blocks the device may run ahead of the bench: the
	// simulated rig makes block k+1 only once block k-lead has been
	// released by the bench, so a new drive setting reaches the samples
	// lead blocks (80 ms) later than in the in-process sweep, about the
	// latency of a USB serial link with its buffers. The bench allows for
	// such a delay (it cannot see the drive in serial blocks); in lock step
	// (lead 0) every block would cost a full round trip through the pty.
	lead = 4
	// lostBlocks is how many 20 ms blocks the device makes while its cable
	// is out (0.2 s of samples that never arrive).
	lostBlocks = 10
)

// bandPlan is a sweep over the demo's bistable band (36.58 to 37.12 Hz by
// first-order harmonic balance; see sim.Demo) with margins, in the demo's
// own 0.05 Hz steps: 29 points each way instead of 81, to keep the run short.
func bandPlan() rig.Override { return rig.Override{StartHz: 36.2, StopHz: 37.6, StepHz: 0.05} }

// tap is the serial source as the bench sees it; it counts the blocks and
// frames the bench has released and where the gaps fall, so the device can
// keep in step and the test can place the outages among the points.
type tap struct {
	acquire.Source
	sig chan struct{}

	mu       sync.Mutex
	released uint64  // blocks released by the bench
	frames   int64   // frames in them: the bench's own frame count
	gaps     []int64 // frame index at which each FlagGap block starts
}

func newTap(src acquire.Source) *tap { return &tap{Source: src, sig: make(chan struct{}, 1)} }

func (s *tap) Release(b *acquire.Block) {
	s.mu.Lock()
	if b.Flags&acquire.FlagGap != 0 {
		s.gaps = append(s.gaps, s.frames)
	}
	s.frames += int64(b.Frames)
	s.released++
	s.mu.Unlock()
	s.Source.Release(b)
	select {
	case s.sig <- struct{}{}:
	default:
	}
}

func (s *tap) count() (blocks uint64, frames int64) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.released, s.frames
}

func (s *tap) gapFrames() []int64 {
	s.mu.Lock()
	defer s.mu.Unlock()
	return append([]int64(nil), s.gaps...)
}

// device is the simulated microcontroller on the leader side of a pty.
type device struct {
	t      *testing.T
	sim    acquire.Source // the simulated rig's samples
	tap    *tap
	link   string  // the port path the rig file names: a symlink to the pty
	codeV  float64 // volts per ADC code
	lo     float64 // volts of code 0
	top    int32   // highest code
	unplug func(sent uint64) bool
	keep   func(*acquire.Block) // sees each block before it is sent
	blocks <-chan *acquire.Block

	mu       sync.Mutex
	leader   *os.File
	follower *os.File

	seq    uint16
	sent   uint64 // packets written: serial blocks the bench will see
	out    []outage
	buf    []byte
	counts []int32
	stop   chan struct{}
	done   chan struct{}
}

// outage is one pulled cable, seen from the device.
type outage struct {
	afterSent uint64        // packets written before it
	away      time.Duration // wall time until the new pty was in place
}

func newDevice(t *testing.T, dir string, sim acquire.Source, bits int, loV, hiV float64) *device {
	t.Helper()
	leader, follower := serialadc.RawPty(t)
	link := filepath.Join(dir, "ttyADC")
	if err := os.Symlink(follower.Name(), link); err != nil {
		t.Fatal(err)
	}
	// Code k stands for lo + k·Q volts, Q = FSR/2^N (IEEE Std 1241 code
	// width), as the simulated converter makes them.
	return &device{t: t, sim: sim, link: link, codeV: (hiV - loV) / math.Ldexp(1, bits), lo: loV,
		top: int32(math.Ldexp(1, bits)) - 1, leader: leader, follower: follower,
		stop: make(chan struct{}), done: make(chan struct{})}
}

// start runs the device until stop; blocks are written in lock step with tap.
func (d *device) start(tp *tap) {
	d.tap = tp
	d.blocks = d.sim.Blocks()
	go d.run()
}

// halt stops the device and closes its pty.
func (d *device) halt() {
	close(d.stop)
	d.mu.Lock()
	d.leader.Close() // unblocks a write nobody reads any more
	d.follower.Close()
	d.mu.Unlock()
	<-d.done
}

func (d *device) next() (*acquire.Block, bool) {
	select {
	case b, ok := <-d.blocks:
		return b, ok
	case <-d.stop:
		return nil, false
	}
}

func (d *device) run() {
	defer close(d.done)
	for {
		blk, ok := d.next()
		if !ok {
			return
		}
		if d.unplug != nil && d.unplug(d.sent) {
			var ok bool
			if blk, ok = d.pullCable(blk); !ok {
				return
			}
		}
		if err := d.send(blk); err != nil {
			select {
			case <-d.stop:
			default:
				d.t.Errorf("device: %v", err)
			}
			return
		}
		// Keep in step: wait for the bench to release the serial block
		// made lead blocks before this one.
		for {
			if n, _ := d.tap.count(); n+lead >= d.sent {
				break
			}
			select {
			case <-d.tap.sig:
			case <-d.stop:
				d.sim.Release(blk)
				return
			}
		}
		d.sim.Release(blk)
	}
}

// send packs one simulated block as ADC codes in one binary packet.
func (d *device) send(blk *acquire.Block) error {
	if d.keep != nil {
		d.keep(blk)
	}
	d.counts = d.counts[:0]
	for i := 0; i < blk.Frames; i++ {
		v := blk.Data[i*blk.Channels] // the response channel
		k := math.Round((v - d.lo) / d.codeV)
		d.counts = append(d.counts, int32(max(0, min(float64(d.top), k))))
	}
	var err error
	d.buf, err = serialadc.AppendPacket(d.buf[:0], d.seq, 1, 2, d.counts)
	if err != nil {
		return err
	}
	d.seq += uint16(blk.Frames)
	d.mu.Lock()
	w := d.leader
	d.mu.Unlock()
	if _, err := w.Write(d.buf); err != nil {
		return err
	}
	d.sent++
	return nil
}

// pullCable closes the pty (the cable is out), lets lostBlocks simulated
// blocks pass unsent while the resonator goes on, puts a new pty behind the
// same path once the source has noticed, and returns the block to send next.
func (d *device) pullCable(blk *acquire.Block) (*acquire.Block, bool) {
	t0 := time.Now()
	o := outage{afterSent: d.sent}
	d.mu.Lock()
	d.leader.Close()
	d.follower.Close()
	d.mu.Unlock()
	for i := 0; i < lostBlocks; i++ {
		d.sim.Release(blk)
		var ok bool
		if blk, ok = d.next(); !ok {
			return nil, false
		}
	}
	d.seq += uint16(lostBlocks * blk.Frames) // the board kept counting
	for d.tap.Stats().Connected {
		select {
		case <-d.stop:
			return nil, false
		case <-time.After(5 * time.Millisecond):
		}
	}
	leader, follower := serialadc.RawPty(d.t)
	tmp := d.link + ".new"
	if err := os.Symlink(follower.Name(), tmp); err != nil {
		d.t.Errorf("device: %v", err)
		return nil, false
	}
	if err := os.Rename(tmp, d.link); err != nil {
		d.t.Errorf("device: %v", err)
		return nil, false
	}
	d.mu.Lock()
	d.leader, d.follower = leader, follower
	d.mu.Unlock()
	o.away = time.Since(t0)
	d.out = append(d.out, o)
	return blk, true
}

// serialRun is one sweep of the demo strip read over the pty.
type serialRun struct {
	res     *sweep.Result
	side    *acquire.Sidecar
	gaps    []int64
	outages []outage
	wall    time.Duration
}

// runSerial sweeps the demo strip over a pty. unplug, when not nil, is
// asked before each packet whether to pull the cable now; onEvent sees the
// bench's events (from the bench's goroutine) along with the tap.
func runSerial(t *testing.T, o rig.Override, unplug func(sent uint64) bool, onEvent func(acquire.Event, *tap)) *serialRun {
	t.Helper()
	dir := t.TempDir()
	simRig, err := rig.Open("demo", rig.Options{Virtual: true, Override: o, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer simRig.Close()
	sc := simRig.File.Sim
	dev := newDevice(t, dir, simRig.Source, sc.ADCBits, sc.ADCMinV, sc.ADCMaxV)
	dev.unplug = unplug

	f, text, err := rig.Load(serialDemo)
	if err != nil {
		t.Fatal(err)
	}
	f.Serial.Port = dev.link
	// A loaded machine (the race detector, two cores shared) may stall the
	// bench between two packets; the lock step then stalls the device too.
	// 10 s keeps such a pause from passing for a pulled cable, which here
	// shows up at once as a read error instead.
	f.Serial.StallTimeout = 10 * time.Second
	rec := filepath.Join(dir, "run.csv")
	ser, err := rig.Build(f, text, serialDemo, rig.Options{RecordPath: rec, RecordEager: true,
		RawPath: filepath.Join(dir, "raw.wav"), Override: o, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer ser.Close()
	checkSameBench(t, ser.Bench, simRig.Bench)

	tp := newTap(ser.Source)
	cfg := ser.Bench
	if onEvent != nil {
		cfg.OnEvent = func(e acquire.Event) { onEvent(e, tp) }
	}
	ctx, cancel := context.WithTimeout(context.Background(), runGuard)
	defer cancel()
	if err := simRig.Source.Start(ctx); err != nil {
		t.Fatal(err)
	}
	dev.start(tp)
	start := time.Now()
	res, err := sweep.Run(ctx, tp, simRig.Drive, cfg, sweep.Options{})
	wall := time.Since(start)
	dev.halt()
	if err != nil {
		t.Fatalf("serial sweep: %v", err)
	}
	side, err := acquire.ReadSidecar(acquire.SidecarPath(rec))
	if err != nil {
		t.Fatal(err)
	}
	return &serialRun{res: res, side: side, gaps: tp.gapFrames(), outages: dev.out, wall: wall}
}

// checkSameBench makes sure testdata/serial-demo.toml describes the demo's
// bench, so the comparison below is between sources only.
func checkSameBench(t *testing.T, ser, sim acquire.BenchConfig) {
	t.Helper()
	// ExpectedTauS is written to 0.1 µs in the file (2Q/ω0 = 0.50259456 s);
	// the simulated rig computes it exactly.
	const tauTol = 1e-6
	same := len(ser.Harmonics) == len(sim.Harmonics) && ser.Response == sim.Response &&
		ser.Reference == sim.Reference && ser.VoltsPerUnit == sim.VoltsPerUnit && ser.OffsetV == sim.OffsetV &&
		ser.Unit == sim.Unit && ser.SensorKind == sim.SensorKind && ser.Plan.StartHz == sim.Plan.StartHz &&
		ser.Plan.StopHz == sim.Plan.StopHz && ser.Plan.StepHz == sim.Plan.StepHz && ser.Plan.SettleTol == sim.Plan.SettleTol &&
		ser.Plan.MaxDwell == sim.Plan.MaxDwell && ser.Plan.MinDwellCycles == sim.Plan.MinDwellCycles &&
		ser.Plan.MeasureCycles == sim.Plan.MeasureCycles && ser.Plan.Direction == sim.Plan.Direction &&
		ser.DriveAmp == sim.DriveAmp && ser.MaxDisp == sim.MaxDisp && ser.SettleCycles == sim.SettleCycles &&
		ser.ThirdLimitPct == sim.ThirdLimitPct && math.Abs(ser.ExpectedTauS-sim.ExpectedTauS) <= tauTol*sim.ExpectedTauS
	for i := range ser.Harmonics {
		same = same && i < len(sim.Harmonics) && ser.Harmonics[i] == sim.Harmonics[i]
	}
	if !same {
		t.Fatalf("%s does not describe the demo's bench:\nserial %+v\ndemo   %+v", serialDemo, ser, sim)
	}
}

// runSim is the in-process sweep of the same rig: simulated source and drive.
func runSim(t *testing.T, o rig.Override) (*sweep.Result, time.Duration) {
	t.Helper()
	s, err := rig.Open("demo", rig.Options{Virtual: true, Override: o, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ctx, cancel := context.WithTimeout(context.Background(), runGuard)
	defer cancel()
	start := time.Now()
	res, err := sweep.Run(ctx, s.Source, s.Drive, s.Bench, sweep.Options{})
	if err != nil {
		t.Fatalf("simulated sweep: %v", err)
	}
	return res, time.Since(start)
}

// jumpsByDir splits a run's jumps by sweep direction.
func jumpsByDir(js []acquire.JumpJSON) map[string][]acquire.JumpJSON {
	out := map[string][]acquire.JumpJSON{}
	for _, j := range js {
		out[j.Direction] = append(out[j.Direction], j)
	}
	return out
}

func mid(j acquire.JumpJSON) float64 { return (j.FromHz + j.ToHz) / 2 }

// TestPtyCarriesSimSamples: the device's codes come out of the serial
// source as exactly the simulated converter's volts, block for block. The
// 12-bit code k stands for k·Q volts (Q = 3.3 V/4096, the IEEE Std 1241
// code width the simulated converter uses), and the rig file's calibration
// gain is that same Q, so volts → code → volts must be exact; anything else
// would make the comparison of sweeps below a comparison of two signals.
func TestPtyCarriesSimSamples(t *testing.T) {
	const blocks = 60 // 1.2 s of samples, the drive ramping up and steady
	dir := t.TempDir()
	simRig, err := rig.Open("demo", rig.Options{Virtual: true, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer simRig.Close()
	sc := simRig.File.Sim
	dev := newDevice(t, dir, simRig.Source, sc.ADCBits, sc.ADCMinV, sc.ADCMaxV)
	f, text, err := rig.Load(serialDemo)
	if err != nil {
		t.Fatal(err)
	}
	f.Serial.Port = dev.link
	ser, err := rig.Build(f, text, serialDemo, rig.Options{Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer ser.Close()
	if err := simRig.Drive.Set(37, 0.2); err != nil {
		t.Fatal(err)
	}
	// The device keeps a copy of what it sent, in volts.
	var sentMu sync.Mutex
	var sent [][]float64
	tp := newTap(ser.Source)
	dev.keep = func(b *acquire.Block) {
		sentMu.Lock()
		sent = append(sent, append([]float64(nil), b.Data[:b.Frames]...))
		sentMu.Unlock()
	}
	ctx, cancel := context.WithTimeout(context.Background(), runGuard)
	defer cancel()
	if err := simRig.Source.Start(ctx); err != nil {
		t.Fatal(err)
	}
	if err := tp.Start(ctx); err != nil {
		t.Fatal(err)
	}
	dev.start(tp)
	defer dev.halt()
	for k := 0; k < blocks; k++ {
		var b *acquire.Block
		select {
		case b = <-tp.Blocks():
		case <-ctx.Done():
			t.Fatalf("block %d never came", k)
		}
		sentMu.Lock()
		want := sent[k]
		sentMu.Unlock()
		if b.Frames != len(want) || b.Channels != 1 || b.Seq != uint64(k) || b.PhaseCyc != nil || b.DriveHz != 0 ||
			b.Flags != acquire.FlagClockUnknown || b.StartS != float64(k*len(want))/4000 {
			t.Fatalf("block %d: frames %d channels %d seq %d flags %v start %v phase %v driveHz %v",
				k, b.Frames, b.Channels, b.Seq, b.Flags, b.StartS, b.PhaseCyc != nil, b.DriveHz)
		}
		for i, v := range b.Data {
			if v != want[i] {
				t.Fatalf("block %d frame %d: %v V over the pty, %v V simulated", k, i, v, want[i])
			}
		}
		tp.Release(b)
	}
}

// The main job over the serial path: a headless up-then-down sweep of the
// demo strip read through the pty finds the same jumps as the in-process
// simulated sweep, each in the same direction (rise or fall) and with its
// interval within one step of the in-process one. The jumps themselves sit
// at the first-order harmonic-balance folds of the demo (36.579 and
// 37.120 Hz; sim.Demo, REFERENCES.md §5), which the acquire/sweep test
// checks for the in-process sweep; here the in-process sweep is the
// reference and the serial path must not move them.
func TestSerialSweepFindsSimJumps(t *testing.T) {
	if testing.Short() {
		t.Skip("two full sweeps; skipped with -short")
	}
	if raceDetector {
		// The bench's phase tracking makes this sweep CPU-bound (a sine fit
		// per block); under the race detector it takes about a minute on two
		// cores. The goroutines it runs (device, pty, source, bench) run
		// under -race in TestSerialSweepSurvivesUnplug.
		t.Skip("CPU-bound sweep, about 10 times slower under the race detector; run without -race")
	}
	o := bandPlan()
	ref, refWall := runSim(t, o)
	got := runSerial(t, o, nil, nil)
	if !ref.Completed || !got.res.Completed {
		t.Fatalf("completed: in-process %v (%s), serial %v (%s)", ref.Completed, ref.StopReason, got.res.Completed, got.res.StopReason)
	}
	if len(got.res.Points) != len(ref.Points) {
		t.Errorf("serial sweep logged %d points, in-process %d", len(got.res.Points), len(ref.Points))
	}
	for _, p := range got.res.Points {
		if !p.Settled {
			t.Errorf("serial point %d at %.4f Hz (%s) not settled: %s", p.Index, p.FreqSetHz, p.Direction, p.SettleState)
		}
	}
	// The jump's frequencies are plan steps (moved by the coherent choice
	// of frequency by much less than a step); "within one step" allows the
	// serial path to see a jump one point earlier or later, no more.
	step := o.StepHz * (1 + 1e-6)
	rj, sj := jumpsByDir(ref.Jumps), jumpsByDir(got.res.Jumps)
	for _, dir := range []string{"up", "down"} {
		if len(rj[dir]) != 1 {
			t.Fatalf("in-process %s-sweep: want one jump, got %+v", dir, rj[dir])
		}
		if len(sj[dir]) != 1 {
			t.Errorf("serial %s-sweep: want one jump, got %+v", dir, sj[dir])
			continue
		}
		r, s := rj[dir][0], sj[dir][0]
		if r.Rise != s.Rise {
			t.Errorf("%s-sweep: in-process jump rise=%v, serial rise=%v", dir, r.Rise, s.Rise)
		}
		if d := math.Abs(mid(s) - mid(r)); d > step {
			t.Errorf("%s-sweep: serial jump %.4f..%.4f Hz is %.4f Hz from the in-process %.4f..%.4f Hz (step %.3g Hz)",
				dir, s.FromHz, s.ToHz, d, r.FromHz, r.ToHz, o.StepHz)
		}
		t.Logf("%s-sweep jump: in-process %.4f..%.4f Hz (%.4g -> %.4g mm), serial %.4f..%.4f Hz (%.4g -> %.4g mm)",
			dir, r.FromHz, r.ToHz, r.AmpBefore, r.AmpAfter, s.FromHz, s.ToHz, s.AmpBefore, s.AmpAfter)
	}
	// Where both sweeps logged the same frequency in the same direction the
	// amplitudes agree: the samples are the same bits, and the bench's
	// tracked phase gives the exact amplitude (a sine fit of the response).
	// 1 % is the acquire/sweep test's branch-agreement bound (common
	// practice); a point that landed on the other branch differs by far more.
	const ampTol = 0.01
	refAt := map[[2]int64]float64{}
	for _, p := range ref.Points {
		refAt[[2]int64{int64(p.Direction), int64(math.Round(p.FreqSetHz * 1e4))}] = p.Amp[0]
	}
	compared, maxDev := 0, 0.0
	for _, p := range got.res.Points {
		a, ok := refAt[[2]int64{int64(p.Direction), int64(math.Round(p.FreqSetHz * 1e4))}]
		if !ok {
			continue
		}
		compared++
		d := math.Abs(p.Amp[0]-a) / a
		maxDev = math.Max(maxDev, d)
		near := false
		for _, j := range append(rj["up"], rj["down"]...) {
			near = near || math.Abs(p.FreqSetHz-mid(j)) < 1.5*o.StepHz
		}
		if d > ampTol && !near {
			t.Errorf("%s %.4f Hz: serial %.5g mm, in-process %.5g mm (%.2f %%)", p.Direction, p.FreqSetHz, p.Amp[0], a, 100*d)
		}
	}
	if compared < len(ref.Points)/2 {
		t.Errorf("only %d of %d points at the same frequencies to compare", compared, len(ref.Points))
	}
	st := got.res.Stats
	if st.Gaps != 0 || st.Dropped != 0 || st.Errors != 0 {
		t.Errorf("serial source troubles on a clean line: %+v", st)
	}
	t.Logf("in-process: %d points in %.2f s wall; serial: %d points in %.2f s wall, %d blocks; largest amplitude difference %.3g %%",
		len(ref.Points), refWall.Seconds(), len(got.res.Points), got.wall.Seconds(), st.Blocks, 100*maxDev)
}

// unplugPlan decides, from the bench's logged points, when the device
// pulls its cable: in the second half of the next point's measurement as
// far as the previous point's cycle predicts it (from one point logged to
// the next), until one outage has cut into a measurement (at most
// maxTries). Points below the band take similar times, but the settle
// detector's decision moves by a few blocks from point to point, so an
// outage may also land in a point's settling; that one is still checked.
type unplugPlan struct {
	maxTries int
	rateHz   float64
	blockS   float64
	cycles   int // measure_cycles

	mu          sync.Mutex
	at          uint64 // serial block index to pull the cable before; 0: none
	tries       int
	pending     bool // an outage happened; the point it fell in is not logged yet
	hit         bool
	lastLog     uint64 // serial block in which the last point was logged
	cycle       uint64 // blocks from one log to the next, for a point with no outage
	interrupted []int  // index of the point each outage fell in
	flagged     []bool
}

// logged is the bench's EventLogged, seen with the tap's count.
func (u *unplugPlan) logged(p *acquire.Point, tp *tap) {
	u.mu.Lock()
	defer u.mu.Unlock()
	blocks, _ := tp.count()
	last := u.lastLog
	u.lastLog = blocks
	if u.pending {
		u.pending = false
		u.interrupted = append(u.interrupted, p.Index)
		u.flagged = append(u.flagged, p.Flags&acquire.FlagGap != 0)
		u.hit = u.hit || p.Flags&acquire.FlagGap != 0
		return // its cycle includes the outage: do not predict from it
	}
	if p.Index > 0 { // the first point's cycle includes the drive's start
		u.cycle = blocks - last
	}
	if u.hit || u.tries >= u.maxTries || u.cycle == 0 {
		return
	}
	// The next point's measurement ends about one cycle from now (the
	// drive is set now) and spans at least cycles periods of the drive.
	meas := float64(u.cycles) / p.FreqSetHz / u.blockS
	u.at = blocks + u.cycle - uint64(math.Round(meas/2))
}

// due is asked by the device before it sends serial block sent.
func (u *unplugPlan) due(sent uint64) bool {
	u.mu.Lock()
	defer u.mu.Unlock()
	if u.at == 0 || sent < u.at {
		return false
	}
	u.at = 0
	u.tries++
	u.pending = true
	return true
}

// Unplug during a sweep: the device closes its pty while the bench is
// measuring a point, 0.2 s of samples are lost, and a new pty appears
// behind the same path. The source must come back, and the bench must see
// the gap: no logged point may be measured across it (the gap lies outside
// every point's measured frames, taken from the raw capture's index in the
// sidecar), the point it interrupted is measured again and logged once
// (flagged as having met a gap), every plan point is logged and settled,
// and each agrees with the in-process sweep of the same plan within 1 %
// (the same samples and drive; 1 % as in TestSerialSweepFindsSimJumps).
// Below the bistable band the response is single-valued, so no branch
// choice can excuse a difference.
func TestSerialSweepSurvivesUnplug(t *testing.T) {
	if testing.Short() {
		t.Skip("a sweep over a pty with outages; skipped with -short")
	}
	const ampTol = 0.01
	o := rig.Override{StartHz: 36.2, StopHz: 36.5, StepHz: 0.05, Direction: "up"} // 7 points: room for 3 tries
	ref, _ := runSim(t, o)
	dem, _, err := rig.Load("demo")
	if err != nil {
		t.Fatal(err)
	}
	u := &unplugPlan{maxTries: 3, rateHz: dem.Sim.RateHz, blockS: float64(dem.Sim.BlockFrames) / dem.Sim.RateHz,
		cycles: dem.Plan.MeasureCycles}
	got := runSerial(t, o, u.due, func(e acquire.Event, tp *tap) {
		if e.Kind == acquire.EventLogged {
			u.logged(e.Point, tp)
		}
	})
	res := got.res
	if !res.Completed {
		t.Fatalf("sweep did not complete: %s", res.StopReason)
	}
	u.mu.Lock()
	defer u.mu.Unlock()
	if len(got.outages) == 0 || len(got.outages) != u.tries {
		t.Fatalf("%d outages made, %d planned", len(got.outages), u.tries)
	}
	if !u.hit {
		t.Fatalf("none of %d outages fell inside a measurement (points %v)", u.tries, u.interrupted)
	}
	// One FlagGap block per outage, and no other.
	if len(got.gaps) != len(got.outages) || res.Stats.Gaps != uint64(len(got.outages)) || res.Stats.Dropped != 0 {
		t.Errorf("%d outages, the bench saw gaps at frames %v; source stats %+v", len(got.outages), got.gaps, res.Stats)
	}
	// Every plan point logged once, in order, settled.
	if len(res.Points) != len(ref.Points) {
		t.Fatalf("%d points logged, the plan has %d", len(res.Points), len(ref.Points))
	}
	maxDev := 0.0
	for i, p := range res.Points {
		r := ref.Points[i]
		if math.Abs(p.FreqSetHz-r.FreqSetHz) > 1e-9*r.FreqSetHz {
			t.Errorf("point %d at %.4f Hz, in-process at %.4f Hz", i, p.FreqSetHz, r.FreqSetHz)
		}
		if !p.Settled {
			t.Errorf("point %d at %.4f Hz not settled (%s)", i, p.FreqSetHz, p.SettleState)
		}
		d := math.Abs(p.Amp[0]-r.Amp[0]) / r.Amp[0]
		maxDev = math.Max(maxDev, d)
		if d > ampTol {
			t.Errorf("point %d at %.4f Hz: %.5g mm over the pty, %.5g mm in-process (%.2f %%; flags %v)",
				i, p.FreqSetHz, p.Amp[0], r.Amp[0], 100*d, p.Flags)
		}
	}
	// No point measured across a gap; the interrupted ones measured after it.
	if got.side.Raw == nil || len(got.side.Raw.Points) != len(res.Points) {
		t.Fatalf("sidecar raw index: %+v", got.side.Raw)
	}
	for _, rp := range got.side.Raw.Points {
		for _, g := range got.gaps {
			if rp.FirstFrame < g && g < rp.FirstFrame+rp.Frames {
				t.Errorf("point %d was measured over frames %d..%d, across the gap at frame %d",
					rp.Point, rp.FirstFrame, rp.FirstFrame+rp.Frames, g)
			}
		}
	}
	// Only a point whose measurement a gap cut into carries the gap flag.
	hitAt := map[int]bool{}
	for k, idx := range u.interrupted {
		hitAt[idx] = u.flagged[k]
	}
	for _, p := range res.Points {
		if p.Flags&acquire.FlagGap != 0 && !hitAt[p.Index] {
			t.Errorf("point %d at %.4f Hz carries %v but no outage fell in it", p.Index, p.FreqSetHz, p.Flags)
		}
	}
	for k, idx := range u.interrupted {
		if k >= len(got.gaps) {
			break
		}
		rp := got.side.Raw.Points[idx]
		if rp.FirstFrame < got.gaps[k] {
			t.Errorf("point %d, interrupted by outage %d at frame %d, was measured from frame %d", idx, k, got.gaps[k], rp.FirstFrame)
		}
		t.Logf("outage %d: after serial block %d, %d blocks lost, cable out %.0f ms of wall time; point %d (%.4f Hz) measured from frame %d, gap at frame %d, measurement interrupted: %v",
			k, got.outages[k].afterSent, lostBlocks, float64(got.outages[k].away.Microseconds())/1e3,
			idx, res.Points[idx].FreqSetHz, rp.FirstFrame, got.gaps[k], u.flagged[k])
	}
	t.Logf("%d points in %.2f s wall; largest amplitude difference from the in-process sweep %.3g %%",
		len(res.Points), got.wall.Seconds(), 100*maxDev)
}
