package soundcard

import (
	"math"
	"sync/atomic"

	"github.com/sweeplock/sweeplock/acquire"
)

// status is what the sound system says about one callback's buffers (the
// PortAudio stream callback flags, mapped by the PortAudio file).
type status uint8

const (
	statusInputUnderflow  status = 1 << iota // input data were missing, zeros put in
	statusInputOverflow                      // input data were discarded
	statusOutputUnderflow                    // output was missing, a gap was played
	statusOutputOverflow                     // output was discarded
	statusPriming                            // output primes the stream, input is not real
)

// overloadAt is the magnitude, in full-scale units, at or above which an
// input sample counts as overloaded (a sound card clips at 1; common
// practice leaves a small margin below it).
const overloadAt = 0.99

// trouble kinds, for Stats().Detail (the callback stores a number, never a
// string).
const (
	troubleNone int32 = iota
	troubleDropped
	troubleInputOverflow
	troubleInputUnderflow
	troubleOutputUnderflow
	troubleOutputOverflow
	troublePriming
	troubleOverload
	troubleDisconnected
	troubleSlip
)

var troubleText = [...]string{
	troubleNone:            "",
	troubleDropped:         "blocks dropped: the consumer fell behind the card",
	troubleInputOverflow:   "the card reported input overflow (audio lost before it reached the program)",
	troubleInputUnderflow:  "the card reported input underflow (silence put in for missing audio)",
	troubleOutputUnderflow: "the card reported output underflow (the drive had a gap)",
	troubleOutputOverflow:  "the card reported output overflow (drive audio discarded)",
	troublePriming:         "the stream was priming (input not real)",
	troubleOverload:        "input at full scale: lower the sensor gain or the drive",
	troubleDisconnected:    "the sound device stopped delivering audio",
	troubleSlip:            "the reference tone jumped: audio was lost or repeated in the sound path (try a larger latency)",
}

// setpoint is one Set (or Off) handed to the callback. A new setpoint is a
// new pointer; the callback adopts it when the pointer changes.
type setpoint struct {
	freqHz float64
	inc    uint64
	amp    float64
}

// engine is the body of the audio callback and its hand-over points: the
// drive's generator, the setpoint and read-back atomics, the pool of
// blocks and the counters. process is the callback; everything it touches
// is preallocated, and it talks to other goroutines only through atomics
// and non-blocking channel operations.
type engine struct {
	rateHz   float64
	inCh     int    // channels in the card's input buffer (interleaved)
	outCh    int    // channels in the card's output buffer (interleaved)
	pick     []int  // input channels copied into blocks, in Block order
	driveOut []bool // per output channel: carries the drive
	capacity int    // frames per pooled block

	gen generator

	// Continuity check on the reference input (when there is one).
	check bool
	refCh int // the reference's channel in the card's input buffer
	det   slipDetector

	// Hand-over from Set/Off (any goroutine) to the callback.
	sp atomic.Pointer[setpoint]
	// Read-back from the callback.
	adopted   atomic.Pointer[setpoint] // the setpoint the generator follows
	ampBits   atomic.Uint64            // float64 bits: amplitude at the last frame made
	freqBits  atomic.Uint64            // float64 bits: frequency at the last frame made
	callbacks atomic.Uint64            // callbacks run
	frames    atomic.Uint64            // output frames made

	// Delivery to the consumer.
	deliver atomic.Bool  // blocks go out (Source started, not closed)
	busy    atomic.Int32 // callbacks inside the delivery section
	blocks  chan *acquire.Block
	free    chan *acquire.Block

	// Callback-owned state.
	delivering bool   // deliver was true at the previous callback
	seq        uint64 // next block's Seq
	frame      uint64 // input frames since delivery started
	gapNext    bool   // the next delivered block gets FlagGap
	last       *setpoint
	standIn    acquire.Block // taken when the pool is empty; never sent
	slipNow    bool          // this callback's input broke: its blocks get FlagGap

	// Counters (read by Stats).
	nBlocks, nDropped, nGaps, nOverloads atomic.Uint64
	nInOver, nInUnder, nOutUnder         atomic.Uint64
	nOutOver, nPriming, nSlips           atomic.Uint64
	trouble                              atomic.Int32
}

// newEngine makes an engine for cfg: the stream opens cfg.inputChannels()
// inputs and cfg.outputChannels() outputs; queue blocks may wait for the
// consumer.
func newEngine(cfg Config, queue int) *engine {
	e := &engine{
		rateHz:   cfg.RateHz,
		inCh:     cfg.inputChannels(),
		outCh:    cfg.outputChannels(),
		capacity: cfg.FramesPerBuffer,
		gen:      newGenerator(int(math.Round(cfg.Ramp.Seconds()*cfg.RateHz)), cfg.MaxLevel),
	}
	e.pick = []int{cfg.ResponseChannel}
	if cfg.ReferenceChannel >= 0 {
		e.pick = append(e.pick, cfg.ReferenceChannel)
		e.check, e.refCh = true, cfg.ReferenceChannel
		// An earlier frequency stays a candidate for twice the
		// buffering plus a second: longer than any path delay.
		hold := (2*cfg.Latency.Seconds() + 1) * cfg.RateHz
		e.det = newSlipDetector(cfg.FramesPerBuffer, uint64(hold))
	}
	e.driveOut = make([]bool, e.outCh)
	for _, ch := range cfg.OutputChannels {
		e.driveOut[ch] = true
	}
	pool := 2*queue + 2
	e.blocks = make(chan *acquire.Block, queue)
	e.free = make(chan *acquire.Block, pool)
	nc := len(e.pick)
	for range pool {
		e.free <- &acquire.Block{
			RateHz:   e.rateHz,
			Channels: nc,
			Data:     make([]float64, e.capacity*nc),
			PhaseCyc: make([]float64, e.capacity),
		}
	}
	e.last = &setpoint{}
	e.sp.Store(e.last)
	e.adopted.Store(e.last)
	return e
}

// process is the audio callback: it makes len(out)/outCh frames of drive
// into out and copies the same number of input frames from in into pooled
// blocks. in or out may be nil when the stream lacks that direction (tests
// and benchmarks pass both).
//
// It never blocks, locks or allocates.
func (e *engine) process(in, out []float32, st status) {
	e.callbacks.Add(1)
	n := 0
	switch {
	case out != nil:
		n = len(out) / e.outCh
	case in != nil:
		n = len(in) / e.inCh
	}

	// Adopt a new setpoint at the buffer boundary.
	if sp := e.sp.Load(); sp != e.last {
		e.last = sp
		if e.check && sp.freqHz != e.gen.freqHz {
			e.det.retune(2 * math.Pi * sp.freqHz / e.rateHz)
		}
		e.gen.retune(sp.inc, sp.freqHz)
		e.gen.target(sp.amp)
		e.adopted.Store(sp)
	}
	if st != 0 {
		e.noteStatus(st)
	}
	e.slipNow = false
	if e.check && in != nil {
		if st != 0 {
			e.det.reset()
		}
		for s := 0; s < n; s += e.capacity {
			if e.det.scan(in, s*e.inCh+e.refCh, e.inCh, min(e.capacity, n-s)) {
				e.slipNow = true
			}
		}
		if e.slipNow {
			e.nSlips.Add(1)
			e.trouble.Store(troubleSlip)
		}
	}

	// Delivery section: entered only while deliver is set; Close waits
	// for busy to reach 0 after clearing deliver before it closes blocks.
	send := false
	if e.deliver.Load() {
		e.busy.Add(1)
		if e.deliver.Load() {
			send = true
			if !e.delivering {
				e.delivering, e.seq, e.frame, e.gapNext = true, 0, 0, false
			}
			if st != 0 {
				e.gapNext = true
			}
		}
		if !send {
			e.busy.Add(-1)
		}
	}

	var b *acquire.Block
	bi := 0 // frame index inside b
	amp := e.gen.amp
	for i := range n {
		if send && b == nil {
			b = e.take()
			bi = 0
		}
		ph := e.gen.phaseCyc()
		var x float64
		x, amp = e.gen.next()
		if out != nil {
			o := out[i*e.outCh : (i+1)*e.outCh]
			xf := float32(x)
			for c := range o {
				if e.driveOut[c] {
					o[c] = xf
				} else {
					o[c] = 0
				}
			}
		}
		if !send {
			continue
		}
		if in != nil && b.Data != nil {
			row := in[i*e.inCh : (i+1)*e.inCh]
			d := b.Data[bi*len(e.pick) : (bi+1)*len(e.pick)]
			for j, c := range e.pick {
				v := float64(row[c])
				d[j] = v
				if v >= overloadAt || v <= -overloadAt {
					b.Flags |= acquire.FlagOverload
				}
			}
			b.PhaseCyc[bi] = ph
		}
		bi++
		if bi == e.capacity {
			e.finish(b, bi, amp)
			b = nil
		}
	}
	if b != nil {
		e.finish(b, bi, amp)
	}
	if send {
		e.busy.Add(-1)
	}
	e.frames.Add(uint64(n))
	e.ampBits.Store(math.Float64bits(amp))
	e.freqBits.Store(math.Float64bits(e.gen.freqHz))
}

// take returns a block from the pool, or a bufferless stand-in when the
// pool is empty (the consumer holds every block); the stand-in is counted
// as dropped in finish.
func (e *engine) take() *acquire.Block {
	select {
	case b := <-e.free:
		b.Flags = 0
		return b
	default:
		return &e.standIn
	}
}

// finish stamps a filled block and sends it without blocking; a block the
// queue has no room for is dropped and counted, and the next one marked
// FlagGap.
func (e *engine) finish(b *acquire.Block, frames int, amp float64) {
	seq, start := e.seq, e.frame
	e.seq++
	e.frame += uint64(frames)
	if b == &e.standIn {
		e.drop()
		return
	}
	b.Seq = seq
	b.StartS = float64(start) / e.rateHz
	b.Frames = frames
	b.Data = b.Data[:frames*len(e.pick)]
	b.PhaseCyc = b.PhaseCyc[:frames]
	b.TimeS = nil
	b.DriveHz = e.gen.freqHz
	b.DriveAmp = amp
	if e.gapNext || e.slipNow {
		b.Flags |= acquire.FlagGap
	}
	// The callback is the only sender, so room seen now stays room until
	// the send: counting first lets a consumer that has the block see it
	// counted. (The channel is closed only while no callback is here.)
	if len(e.blocks) == cap(e.blocks) {
		e.recycle(b)
		e.drop()
		return
	}
	e.gapNext = false
	e.nBlocks.Add(1)
	if b.Flags&acquire.FlagGap != 0 {
		e.nGaps.Add(1)
	}
	if b.Flags&acquire.FlagOverload != 0 {
		e.nOverloads.Add(1)
		e.trouble.Store(troubleOverload)
	}
	e.blocks <- b
}

func (e *engine) drop() {
	e.nDropped.Add(1)
	e.gapNext = true
	e.trouble.Store(troubleDropped)
}

// recycle puts b back into the pool without blocking (the pool has room
// for every block it made, so this never fails for one of ours).
func (e *engine) recycle(b *acquire.Block) {
	if b == nil || b == &e.standIn || cap(b.PhaseCyc) != e.capacity {
		return
	}
	b.Data = b.Data[:cap(b.Data)]
	b.PhaseCyc = b.PhaseCyc[:cap(b.PhaseCyc)]
	select {
	case e.free <- b:
	default:
	}
}

func (e *engine) noteStatus(st status) {
	if st&statusInputOverflow != 0 {
		e.nInOver.Add(1)
		e.trouble.Store(troubleInputOverflow)
	}
	if st&statusInputUnderflow != 0 {
		e.nInUnder.Add(1)
		e.trouble.Store(troubleInputUnderflow)
	}
	if st&statusOutputUnderflow != 0 {
		e.nOutUnder.Add(1)
		e.trouble.Store(troubleOutputUnderflow)
	}
	if st&statusOutputOverflow != 0 {
		e.nOutOver.Add(1)
		e.trouble.Store(troubleOutputOverflow)
	}
	if st&statusPriming != 0 {
		e.nPriming.Add(1)
		e.trouble.Store(troublePriming)
	}
}

// amp and freq read back what the generator made at its last frame.
func (e *engine) amp() float64  { return math.Float64frombits(e.ampBits.Load()) }
func (e *engine) freq() float64 { return math.Float64frombits(e.freqBits.Load()) }
