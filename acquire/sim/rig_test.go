package sim

import (
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// script is a run of a virtual rig: at block k (before releasing it) it
// sets the drive to the entry's frequency and amplitude.
type script map[uint64][2]float64

// record runs cfg in virtual time for n blocks under s and returns a copy
// of every block's samples and phases.
func record(t *testing.T, cfg Config, s script, n int) ([][]float64, [][]float64) {
	t.Helper()
	b := startRig(t, cfg, Options{Virtual: true})
	var data, phase [][]float64
	for range n {
		blk := b.next()
		data = append(data, append([]float64(nil), blk.Data...))
		phase = append(phase, append([]float64(nil), blk.PhaseCyc...))
		if c, ok := s[blk.Seq]; ok {
			b.set(c[0], c[1])
		}
		b.src.Release(blk)
	}
	return data, phase
}

// TestVirtualDeterminism: the same configuration, seed and script give the
// same samples bit for bit in virtual time; another seed gives other noise.
func TestVirtualDeterminism(t *testing.T) {
	s := script{0: {36.5, 0.2}, 37: {36.9, 0.2}, 61: {37.3, 0.3}, 90: {37.3, 0}, 130: {35, 0.1}}
	const n = 200
	cfg := Demo()
	cfg.RefChannel, cfg.RefVPerUnit, cfg.RefOffsetV = true, 2, 1.65
	d1, p1 := record(t, cfg, s, n)
	d2, p2 := record(t, cfg, s, n)
	for k := range n {
		for i := range d1[k] {
			if math.Float64bits(d1[k][i]) != math.Float64bits(d2[k][i]) {
				t.Fatalf("block %d sample %d: %v then %v", k, i, d1[k][i], d2[k][i])
			}
		}
		for i := range p1[k] {
			if p1[k][i] != p2[k][i] {
				t.Fatalf("block %d frame %d phase: %v then %v", k, i, p1[k][i], p2[k][i])
			}
		}
	}
	cfg.Seed++
	d3, _ := record(t, cfg, s, n)
	same := 0
	for i := range d1[n-1] {
		if d1[n-1][i] == d3[n-1][i] {
			same++
		}
	}
	// Two independent draws of 2 mV rms noise round to the same 0.806 mV
	// code with probability ≈ Q/(2√π·σ) ≈ 11 % (difference of two
	// Gaussians, density 1/(2√π·σ) at 0); half the samples is far above.
	if same > len(d1[n-1])/2 {
		t.Errorf("another seed left %d of %d samples the same", same, len(d1[n-1]))
	}
}

// TestVirtualSetTiming: a Set made while holding block k takes effect from
// the first frame of block k+1 exactly, every time.
func TestVirtualSetTiming(t *testing.T) {
	cfg := refRig()
	b := startRig(t, cfg, Options{Virtual: true})
	b.set(30, 0.2)
	b.skipS(1)
	f := 30.0
	for step := range 12 {
		held := b.next()
		if held.DriveHz != f {
			t.Fatalf("block %d DriveHz %g, want %g", held.Seq, held.DriveHz, f)
		}
		nf := 30 + 0.37*float64(step+1)
		b.set(nf, 0.2)
		// Let the rig run a little on the wall clock: in virtual time it
		// must still wait for the release.
		time.Sleep(time.Millisecond)
		b.src.Release(held)
		nb := b.next()
		if nb.Seq != held.Seq+1 || nb.DriveHz != nf {
			t.Fatalf("block %d after Set(%g) while holding %d: DriveHz %g", nb.Seq, nf, held.Seq, nb.DriveHz)
		}
		if d := nb.PhaseCyc[1] - nb.PhaseCyc[0]; math.Abs(d-nf/cfg.RateHz) > 1e-12 {
			t.Fatalf("block %d first phase step %g, want the new f/fs %g", nb.Seq, d, nf/cfg.RateHz)
		}
		b.src.Release(nb)
		f = nf
	}
}

// TestVirtualStartSet: in virtual time a Set made right after Start takes
// effect from block 1, one made before Start from block 0, whatever the
// goroutines' timing (repeated to give a race a chance to show).
func TestVirtualStartSet(t *testing.T) {
	for i := range 30 {
		before := i%2 == 0
		r, err := New(refRig(), Options{Virtual: true})
		if err != nil {
			t.Fatal(err)
		}
		if before {
			if err := r.Drive().Set(33, 0.2); err != nil {
				t.Fatal(err)
			}
		}
		if err := r.Source().Start(context.Background()); err != nil {
			t.Fatal(err)
		}
		if !before {
			if err := r.Drive().Set(33, 0.2); err != nil {
				t.Fatal(err)
			}
		}
		b0 := <-r.Source().Blocks()
		r.Source().Release(b0)
		b1 := <-r.Source().Blocks()
		r.Source().Release(b1)
		want0 := 0.0
		if before {
			want0 = 33
		}
		if b0.Seq != 0 || b0.DriveHz != want0 || b1.DriveHz != 33 {
			t.Fatalf("Set before Start %v: block 0 at %g Hz, block 1 at %g Hz; want %g and 33", before, b0.DriveHz, b1.DriveHz, want0)
		}
		r.Close()
	}
}

// TestPacedDrops: in paced time a consumer that stops reading loses blocks
// without stalling the rig; every loss is counted in Stats.Dropped, shows
// as a jump in Seq, and the block after it carries FlagGap. (No wall-clock
// duration is asserted: the test waits until drops have happened.)
func TestPacedDrops(t *testing.T) {
	cfg := Demo()
	cfg.BlockFrames = 20 // 5 ms blocks keep the test short
	b := startRig(t, cfg, Options{})
	first := b.next()
	lastSeq := first.Seq
	b.src.Release(first)
	deadline := time.Now().Add(watchdog)
	for b.src.Stats().Dropped < 5 {
		if time.Now().After(deadline) {
			t.Fatal("no drops while the consumer slept")
		}
		time.Sleep(10 * time.Millisecond)
	}
	var jumps, gapBlocks uint64
	for range 60 {
		blk := b.next()
		if d := blk.Seq - lastSeq; d != 1 {
			jumps += d - 1
			if blk.Flags&acquire.FlagGap == 0 {
				t.Errorf("block %d follows %d without FlagGap", blk.Seq, lastSeq)
			}
		} else if blk.Flags&acquire.FlagGap != 0 {
			t.Errorf("block %d follows %d with FlagGap", blk.Seq, lastSeq)
		}
		if blk.Flags&acquire.FlagGap != 0 {
			gapBlocks++
		}
		if math.Abs(blk.StartS-float64(blk.Seq)*float64(cfg.BlockFrames)/cfg.RateHz) > 1e-12 {
			t.Errorf("block %d StartS %g does not match its Seq", blk.Seq, blk.StartS)
		}
		lastSeq = blk.Seq
		b.src.Release(blk)
	}
	// Stop, then read what was queued, so the counts are final.
	if err := b.rig.Close(); err != nil {
		t.Fatal(err)
	}
	for blk := range b.src.Blocks() {
		if d := blk.Seq - lastSeq; d != 1 {
			jumps += d - 1
		}
		if blk.Flags&acquire.FlagGap != 0 {
			gapBlocks++
		}
		lastSeq = blk.Seq
		b.src.Release(blk)
	}
	st := b.src.Stats()
	if jumps == 0 || st.Dropped != jumps || st.Gaps != gapBlocks {
		t.Errorf("Seq jumps %d, gap blocks %d; Stats: Dropped %d, Gaps %d", jumps, gapBlocks, st.Dropped, st.Gaps)
	}
	if st.Blocks != lastSeq+1-st.Dropped {
		t.Errorf("Stats.Blocks %d, want %d made less %d dropped", st.Blocks, lastSeq+1, st.Dropped)
	}
	if st.Connected {
		t.Error("Stats.Connected after Close")
	}
}

// TestCloseRampsDown: closing a rig whose drive is on ramps the drive to
// zero (in the log), with no step, and the log on an *os.File is complete
// and parsable. It also checks the log's times: one line per block, at the
// block's last frame.
func TestCloseRampsDown(t *testing.T) {
	cfg := Demo()
	path := filepath.Join(t.TempDir(), "drive.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	b := startRig(t, cfg, Options{Virtual: true, DriveLog: f})
	b.set(37, DemoDriveAmp)
	b.skipS(2)
	if err := b.rig.Close(); err != nil {
		t.Fatal(err)
	}
	if err := b.rig.Close(); err != nil {
		t.Fatalf("second Close: %v", err)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := parseDriveLog(t, string(raw))
	blockS := float64(cfg.BlockFrames) / cfg.RateHz
	lastFrame := float64(cfg.BlockFrames-1) / cfg.RateHz
	slope := math.Pi * DemoDriveAmp / (2 * cfg.Ramp.Seconds()) // raised cosine
	peak := 0.0
	for i, l := range lines {
		// Times print to the microsecond.
		if want := float64(i)*blockS + lastFrame; math.Abs(l.t-want) > 1e-6 {
			t.Fatalf("line %d time %.6f, want %.6f", i, l.t, want)
		}
		if i > 0 {
			if d := math.Abs(l.amp - lines[i-1].amp); d > slope*blockS*(1+1e-9) {
				t.Errorf("t = %.3f s: amplitude stepped by %.4g in one block, the ramp allows %.4g", l.t, d, slope*blockS)
			}
		}
		peak = math.Max(peak, l.amp)
	}
	if peak != DemoDriveAmp {
		t.Errorf("logged peak amplitude %g, want %g", peak, DemoDriveAmp)
	}
	if last := lines[len(lines)-1]; last.amp != 0 || last.hz != 37 {
		t.Errorf("log ends at %g Hz, amplitude %g; want 37 Hz, 0", last.hz, last.amp)
	}
	if got := b.drv.Amp(); got != 0 {
		t.Errorf("Amp() = %g after Close", got)
	}
}

// TestDisplacementLimit: a resonator driven past its stop makes the rig
// fail for good with an error wrapping acquire.ErrDisplacementLimit; the
// blocks channel closes and the drive ends at zero.
func TestDisplacementLimit(t *testing.T) {
	cfg := Demo()
	cfg.DispLimitM = 0.2e-3 // below the 0.26 mm the default drive reaches at 37.5 Hz
	b := startRig(t, cfg, Options{Virtual: true})
	b.set(37.5, DemoDriveAmp)
	deadline := time.After(watchdog)
	for done := false; !done; {
		select {
		case blk, ok := <-b.src.Blocks():
			if !ok {
				done = true
				break
			}
			b.src.Release(blk)
		case <-deadline:
			t.Fatal("the rig did not stop at its displacement limit")
		}
	}
	err := b.src.Err()
	if !errors.Is(err, acquire.ErrDisplacementLimit) {
		t.Fatalf("Err() = %v, want acquire.ErrDisplacementLimit", err)
	}
	t.Logf("Err: %v", err)
	if s := b.src.Stats(); s.Detail == "" || s.Connected {
		t.Errorf("Stats after the failure: %+v", s)
	}
	if got := b.drv.Amp(); got != 0 {
		t.Errorf("Amp() = %g after the failure, want 0", got)
	}
	if err := b.drv.Set(37, 0.1); !errors.Is(err, ErrClosed) {
		t.Errorf("Set after the failure = %v, want ErrClosed", err)
	}
}

// TestLifecycle: Start twice, Start after Close, Close before Start, Close
// twice, Info.
func TestLifecycle(t *testing.T) {
	r, err := New(Demo(), Options{Virtual: true})
	if err != nil {
		t.Fatal(err)
	}
	info := r.Source().Info()
	if info.Kind != "sim" || info.RateHz != 4000 || len(info.Channels) != 1 || info.FullScale != 3.3 || info.Name == "" {
		t.Errorf("Info() = %+v", info)
	}
	if err := r.Close(); err != nil {
		t.Fatal(err)
	}
	if err := r.Close(); err != nil {
		t.Fatalf("second Close: %v", err)
	}
	if _, ok := <-r.Source().Blocks(); ok {
		t.Error("Blocks open after Close")
	}
	if err := r.Source().Start(context.Background()); !errors.Is(err, ErrClosed) {
		t.Errorf("Start after Close = %v, want ErrClosed", err)
	}

	r2, err := New(DemoHardening(), Options{Virtual: true})
	if err != nil {
		t.Fatal(err)
	}
	defer r2.Close()
	if ch := r2.Source().Info().Channels; len(ch) != 2 || ch[1] != "drive" {
		t.Errorf("channels %v, want response and drive", ch)
	}
	ctx, cancel := context.WithCancel(context.Background())
	if err := r2.Source().Start(ctx); err != nil {
		t.Fatal(err)
	}
	if err := r2.Source().Start(ctx); !errors.Is(err, ErrStarted) {
		t.Errorf("second Start = %v, want ErrStarted", err)
	}
	blk := <-r2.Source().Blocks()
	if blk.Channels != 2 || blk.Frames != 160 || len(blk.Data) != 320 || blk.RateHz != 8000 {
		t.Errorf("block shape %d×%d, %d samples, %g Hz", blk.Frames, blk.Channels, len(blk.Data), blk.RateHz)
	}
	r2.Source().Release(blk)
	cancel() // ending the context stops the rig as Close does
	for range r2.Source().Blocks() {
	}
	if err := r2.Source().Err(); err != nil {
		t.Errorf("Err() after a normal stop = %v", err)
	}
}

// TestSteadyStateAllocs: once running, receiving and releasing a block
// allocates nothing, in the rig's goroutine or the consumer's.
func TestSteadyStateAllocs(t *testing.T) {
	cfg := DemoHardening()
	b := startRig(t, cfg, Options{Virtual: true, DriveLog: &lockedBuffer{}})
	b.set(125, DemoHardeningDriveAmp)
	b.skipS(1)
	ch := b.src.Blocks()
	allocs := testing.AllocsPerRun(200, func() {
		b.src.Release(<-ch)
	})
	// The drive log's bytes.Buffer grows now and then (amortised), so
	// allow a fraction of an allocation per block; without a log, none.
	if allocs > 0.1 {
		t.Errorf("%.2f allocations per block with a drive log", allocs)
	}
	b2 := startRig(t, cfg, Options{Virtual: true})
	b2.set(125, DemoHardeningDriveAmp)
	b2.skipS(1)
	ch2 := b2.src.Blocks()
	if allocs := testing.AllocsPerRun(200, func() { b2.src.Release(<-ch2) }); allocs != 0 {
		t.Errorf("%.2f allocations per block", allocs)
	}
}

// TestPacedOff: in paced time Off waits for the ramp to be made while
// nobody reads (blocks are dropped meanwhile) and returns with the
// amplitude at zero.
func TestPacedOff(t *testing.T) {
	cfg := Demo()
	cfg.BlockFrames, cfg.Ramp = 20, 50*time.Millisecond
	b := startRig(t, cfg, Options{})
	b.set(37, DemoDriveAmp)
	for b.drv.Amp() != DemoDriveAmp { // drain until the ramp up is done
		b.src.Release(b.next())
	}
	ctx, cancel := context.WithTimeout(context.Background(), watchdog)
	defer cancel()
	if err := b.drv.Off(ctx); err != nil {
		t.Fatalf("Off: %v", err)
	}
	if got := b.drv.Amp(); got != 0 {
		t.Errorf("Amp() = %g after Off", got)
	}
}

// TestOffInterrupted: a Set that turns the drive on again while Off is
// waiting makes Off return ErrOffInterrupted, and an Off whose context ends
// returns the context's error.
func TestOffInterrupted(t *testing.T) {
	cfg := Demo()
	cfg.Ramp = time.Minute // an Off that cannot finish during the test
	b := startRig(t, cfg, Options{})
	b.set(37, DemoDriveAmp)
	for b.drv.Amp() == 0 {
		b.src.Release(b.next())
	}
	done := make(chan error, 1)
	go func() { done <- b.drv.Off(context.Background()) }()
	deadline := time.Now().Add(watchdog)
	for !b.rig.offPending.Load() {
		if time.Now().After(deadline) {
			t.Fatal("Off never started waiting")
		}
		time.Sleep(time.Millisecond)
	}
	b.set(37, 0.1)
	if err := <-done; !errors.Is(err, ErrOffInterrupted) {
		t.Errorf("Off interrupted by Set = %v, want ErrOffInterrupted", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if err := b.drv.Off(ctx); !errors.Is(err, context.Canceled) {
		t.Errorf("Off with an ended context = %v, want context.Canceled", err)
	}
}
