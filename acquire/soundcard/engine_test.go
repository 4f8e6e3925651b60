package soundcard

import (
	"math"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// testConfig is a small valid configuration for engine and card tests.
func testConfig() Config {
	c := DefaultConfig()
	c.FramesPerBuffer = 256
	c.Ramp = 10 * time.Millisecond // 480 frames at 48 kHz
	return c
}

// raisedCos is the ramp the drive must follow (common practice; see
// generator): from a0 to a1 over n frames, value at frame k.
func raisedCos(a0, a1 float64, k, n int) float64 {
	if k >= n {
		return a1
	}
	return a0 + (a1-a0)*0.5*(1-math.Cos(math.Pi*float64(k)/float64(n)))
}

// TestEngineBlocks checks what one callback puts where: the chosen input
// channels in Block order, the drive on the chosen output channel only,
// PhaseCyc equal to the exact accumulator phase of the output frame made
// in the same callback, the drive sample equal to a(k)·cos(2π·PhaseCyc)
// with a(k) the raised-cosine ramp, and Seq, StartS, DriveHz, DriveAmp.
func TestEngineBlocks(t *testing.T) {
	// outTol: the output is float32: half a unit in the last place of a
	// value ≤ 1 is 6e−8.
	const outTol = 6e-8
	cfg := testConfig()
	cfg.ResponseChannel, cfg.ReferenceChannel = 1, 0 // swapped: Block order is response first
	cfg.OutputChannels = []int{1}                    // output 0 must stay silent
	e := newEngine(cfg, 8)
	const f, amp = 1000.0, 0.3
	inc := phaseInc(f, cfg.RateHz)
	e.sp.Store(&setpoint{freqHz: f, inc: inc, amp: amp})
	e.deliver.Store(true)
	n := cfg.FramesPerBuffer
	rampN := int(math.Round(cfg.Ramp.Seconds() * cfg.RateHz))
	in := make([]float32, 2*n)
	out := make([]float32, 2*n)
	for k := range 5 {
		for i := range n {
			g := float32(k*n + i)
			in[2*i] = -g / 1e6
			in[2*i+1] = g / 1e6
		}
		e.process(in, out, 0)
		b := <-e.blocks
		if b.Seq != uint64(k) || b.Frames != n || b.Channels != 2 || b.Flags != 0 || b.PhaseCyc == nil || b.TimeS != nil {
			t.Fatalf("block %d: seq %d frames %d channels %d flags %v", k, b.Seq, b.Frames, b.Channels, b.Flags)
		}
		if want := float64(k*n) / cfg.RateHz; b.StartS != want {
			t.Fatalf("block %d: StartS %g, want %g", k, b.StartS, want)
		}
		for i := range n {
			gi := k*n + i
			if b.Data[2*i] != float64(in[2*i+1]) || b.Data[2*i+1] != float64(in[2*i]) {
				t.Fatalf("block %d frame %d: data %v, want response=in1 %v reference=in0 %v",
					k, i, b.Data[2*i:2*i+2], in[2*i+1], in[2*i])
			}
			w, fr := bigPhase(uint64(gi), inc)
			if want := float64(w) + float64(fr)/twoTo64; b.PhaseCyc[i] != want {
				t.Fatalf("frame %d: PhaseCyc %.17g, want %.17g", gi, b.PhaseCyc[i], want)
			}
			a := raisedCos(0, amp, gi, rampN)
			if want := a * math.Cos(2*math.Pi*float64(fr)/twoTo64); math.Abs(float64(out[2*i+1])-want) > outTol {
				t.Fatalf("frame %d: drive %g, want %g", gi, out[2*i+1], want)
			}
			if out[2*i] != 0 {
				t.Fatalf("frame %d: output 0 carries %g, want silence", gi, out[2*i])
			}
		}
		if b.DriveHz != f || b.DriveAmp != raisedCos(0, amp, k*n+n-1, rampN) {
			t.Fatalf("block %d: DriveHz %g DriveAmp %g, want %g and %g", k, b.DriveHz, b.DriveAmp, f, raisedCos(0, amp, k*n+n-1, rampN))
		}
		e.recycle(b)
	}
}

// TestEngineGaps checks that every way of losing data marks the next
// delivered block FlagGap and is counted: the consumer's queue full, the
// pool empty (the consumer holds every block), and each PortAudio status
// flag (common practice: a point is never measured across lost samples).
func TestEngineGaps(t *testing.T) {
	cfg := testConfig()
	n := cfg.FramesPerBuffer
	in := make([]float32, n*cfg.inputChannels())
	out := make([]float32, n*cfg.outputChannels())

	t.Run("queue full", func(t *testing.T) {
		e := newEngine(cfg, 2)
		e.deliver.Store(true)
		for range 4 {
			e.process(in, out, 0)
		}
		for range 2 {
			e.recycle(<-e.blocks)
		}
		e.process(in, out, 0)
		b := <-e.blocks
		if b.Seq != 4 || b.Flags&acquire.FlagGap == 0 {
			t.Fatalf("after 2 drops: seq %d flags %v, want seq 4 with gap", b.Seq, b.Flags)
		}
		if d, g, bl := e.nDropped.Load(), e.nGaps.Load(), e.nBlocks.Load(); d != 2 || g != 1 || bl != 3 {
			t.Fatalf("dropped %d gaps %d blocks %d, want 2 1 3", d, g, bl)
		}
		e.process(in, out, 0)
		if b := <-e.blocks; b.Flags != 0 || b.Seq != 5 {
			t.Fatalf("block after the gap block: seq %d flags %v, want 5 ok", b.Seq, b.Flags)
		}
	})

	t.Run("pool empty", func(t *testing.T) {
		e := newEngine(cfg, 2) // pool of 2·2+2 = 6
		e.deliver.Store(true)
		var held []*acquire.Block
		for range 9 {
			e.process(in, out, 0)
			select {
			case b := <-e.blocks:
				held = append(held, b)
			default:
			}
		}
		if len(held) != 6 || e.nDropped.Load() != 3 {
			t.Fatalf("held %d, dropped %d; want 6 held and 3 dropped", len(held), e.nDropped.Load())
		}
		for _, b := range held {
			e.recycle(b)
		}
		e.process(in, out, 0)
		b := <-e.blocks
		if b.Seq != 9 || b.Flags&acquire.FlagGap == 0 {
			t.Fatalf("after the pool ran dry: seq %d flags %v, want 9 with gap", b.Seq, b.Flags)
		}
	})

	for _, tc := range []struct {
		name string
		st   status
		cnt  func(e *engine) uint64
	}{
		{"input overflow", statusInputOverflow, func(e *engine) uint64 { return e.nInOver.Load() }},
		{"input underflow", statusInputUnderflow, func(e *engine) uint64 { return e.nInUnder.Load() }},
		{"output underflow", statusOutputUnderflow, func(e *engine) uint64 { return e.nOutUnder.Load() }},
		{"output overflow", statusOutputOverflow, func(e *engine) uint64 { return e.nOutOver.Load() }},
		{"priming", statusPriming, func(e *engine) uint64 { return e.nPriming.Load() }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			e := newEngine(cfg, 4)
			e.deliver.Store(true)
			e.process(in, out, 0)
			e.process(in, out, tc.st)
			e.process(in, out, 0)
			want := []acquire.Flags{0, acquire.FlagGap, 0}
			for k, w := range want {
				if b := <-e.blocks; b.Flags != w {
					t.Fatalf("block %d: flags %v, want %v", k, b.Flags, w)
				}
			}
			if tc.cnt(e) != 1 || e.nGaps.Load() != 1 {
				t.Fatalf("counter %d, gaps %d; want 1 and 1", tc.cnt(e), e.nGaps.Load())
			}
		})
	}
}

// TestEngineOverload checks that a sample at or above 0.99 of full scale
// marks the block FlagOverload (a sound card clips at ±1; the margin is
// common practice) and one below does not.
func TestEngineOverload(t *testing.T) {
	cfg := testConfig()
	n := cfg.FramesPerBuffer
	for _, tc := range []struct {
		name string
		v    float32
		want acquire.Flags
	}{
		{"clean", 0.98, 0},
		{"at", 0.99, acquire.FlagOverload},
		{"negative clip", -1, acquire.FlagOverload},
	} {
		t.Run(tc.name, func(t *testing.T) {
			e := newEngine(cfg, 4)
			e.deliver.Store(true)
			in := make([]float32, n*cfg.inputChannels())
			in[2*(n/2)+cfg.ResponseChannel] = tc.v // the response: a lone spike on the reference would also be a slip
			e.process(in, make([]float32, n*cfg.outputChannels()), 0)
			if b := <-e.blocks; b.Flags != tc.want {
				t.Fatalf("flags %v, want %v", b.Flags, tc.want)
			}
		})
	}
}

// TestEngineLongCallback checks that a callback longer than a block is
// split into full blocks and a remainder, contiguous in Seq, StartS and
// phase.
func TestEngineLongCallback(t *testing.T) {
	cfg := testConfig()
	e := newEngine(cfg, 8)
	e.deliver.Store(true)
	f := 440.0
	inc := phaseInc(f, cfg.RateHz)
	e.sp.Store(&setpoint{freqHz: f, inc: inc, amp: 0.1})
	n := cfg.FramesPerBuffer
	frames := 3*n + n/2
	e.process(make([]float32, frames*2), make([]float32, frames*2), 0)
	total := 0
	for k, want := range []int{n, n, n, n / 2} {
		b := <-e.blocks
		if b.Seq != uint64(k) || b.Frames != want || b.StartS != float64(total)/cfg.RateHz {
			t.Fatalf("block %d: seq %d frames %d start %g", k, b.Seq, b.Frames, b.StartS)
		}
		w, fr := bigPhase(uint64(total), inc)
		if b.PhaseCyc[0] != float64(w)+float64(fr)/twoTo64 {
			t.Fatalf("block %d starts at phase %g, want %g", k, b.PhaseCyc[0], float64(w)+float64(fr)/twoTo64)
		}
		total += b.Frames
	}
	if total != frames {
		t.Fatalf("delivered %d frames of %d", total, frames)
	}
}

// TestEngineIdle checks that before Start no block goes out but the drive
// plays, and that the first block after Start has Seq 0 and StartS 0.
func TestEngineIdle(t *testing.T) {
	cfg := testConfig()
	e := newEngine(cfg, 4)
	f := 500.0
	e.sp.Store(&setpoint{freqHz: f, inc: phaseInc(f, cfg.RateHz), amp: 0.2})
	n := cfg.FramesPerBuffer
	in, out := make([]float32, 2*n), make([]float32, 2*n)
	for range 3 {
		e.process(in, out, 0)
	}
	if len(e.blocks) != 0 {
		t.Fatalf("%d blocks before Start", len(e.blocks))
	}
	if e.amp() == 0 || e.freq() != f {
		t.Fatalf("drive not playing before Start: amp %g freq %g", e.amp(), e.freq())
	}
	e.deliver.Store(true)
	e.process(in, out, 0)
	if b := <-e.blocks; b.Seq != 0 || b.StartS != 0 || b.Flags != 0 {
		t.Fatalf("first block: seq %d start %g flags %v", b.Seq, b.StartS, b.Flags)
	}
}

// TestEngineAllocs checks that the callback body allocates nothing
// (STYLE.md §15), consumer included.
func TestEngineAllocs(t *testing.T) {
	cfg := testConfig()
	e := newEngine(cfg, 4)
	e.deliver.Store(true)
	e.sp.Store(&setpoint{freqHz: 1000, inc: phaseInc(1000, cfg.RateHz), amp: 0.3})
	n := cfg.FramesPerBuffer
	in, out := make([]float32, 2*n), make([]float32, 2*n)
	allocs := testing.AllocsPerRun(200, func() {
		e.process(in, out, statusInputOverflow)
		e.recycle(<-e.blocks)
	})
	if allocs != 0 {
		t.Fatalf("callback allocates %g times per buffer", allocs)
	}
}
