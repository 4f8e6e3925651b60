package serialadc

import (
	"math"

	"github.com/sweeplock/sweeplock/acquire"
)

// builder turns decoded frames into calibrated Blocks and hands them to the
// source's channel without blocking. It runs on the reader goroutine only.
type builder struct {
	s       *Source
	nch     int
	size    int // frames per block
	cal     []Calibration
	lo, hi  []float64 // rails in raw units, per channel
	timed   bool      // frames carry timestamps
	rateHz  float64   // configured rate, 0 if estimated
	rateFn  func() float64
	cur     *acquire.Block
	n       int
	over    bool
	gapNext bool
	seq     uint64

	// time base with timestamps
	haveT0  bool
	t0US    int64
	offsetS float64
	lastS   float64
	// time base without timestamps: index of the next frame since start
	idx int64
}

// Frame implements FrameSink.
func (b *builder) Frame(f *Frame) {
	if f.Gap {
		b.flush()
		b.gapNext = true
	}
	if b.cur == nil {
		b.cur = b.s.getBlock()
		b.n = 0
		b.over = false
	}
	blk := b.cur
	row := blk.Data[b.n*b.nch : (b.n+1)*b.nch]
	for c, v := range f.Values[:b.nch] {
		if v <= b.lo[c] || v >= b.hi[c] {
			b.over = true
		}
		row[c] = b.cal[c].Volts(v)
	}
	var t float64
	if b.timed && f.HasTime {
		if !b.haveT0 {
			b.haveT0 = true
			b.t0US = f.TimeUS
		}
		t = b.offsetS + float64(f.TimeUS-b.t0US)*1e-6
		blk.TimeS[b.n] = t
		b.lastS = t
	} else {
		b.idx += f.Lost
		rate := b.rate()
		if rate > 0 {
			t = float64(b.idx) / rate
		}
		b.idx++
	}
	if b.n == 0 {
		blk.StartS = t
	}
	b.n++
	if b.n == b.size {
		b.flush()
	}
}

func (b *builder) rate() float64 {
	if b.rateHz > 0 {
		return b.rateHz
	}
	return b.rateFn()
}

// flush sends the block being filled, if it holds any frame.
func (b *builder) flush() {
	blk := b.cur
	if blk == nil {
		return
	}
	b.cur = nil
	if b.n == 0 {
		b.s.Release(blk)
		return
	}
	blk.Seq = b.seq
	b.seq++
	blk.RateHz = b.rate()
	blk.Channels = b.nch
	blk.Frames = b.n
	blk.Data = blk.Data[:b.n*b.nch]
	if b.timed {
		blk.TimeS = blk.TimeS[:b.n]
	} else {
		blk.TimeS = nil
	}
	blk.PhaseCyc = nil
	blk.DriveHz, blk.DriveAmp = 0, 0
	blk.Flags = acquire.FlagClockUnknown
	if b.gapNext {
		blk.Flags |= acquire.FlagGap
	}
	if b.over {
		blk.Flags |= acquire.FlagOverload
	}
	b.n = 0
	if b.s.send(blk) {
		b.gapNext = false
	} else {
		b.gapNext = true // the dropped block leaves a hole
	}
}

// resume restarts the time base after a reconnect at elapsedS seconds since
// the source started and marks the next block as a gap.
func (b *builder) resume(elapsedS float64) {
	b.flush()
	b.gapNext = true
	if b.timed {
		b.haveT0 = false
		next := b.lastS
		if r := b.rate(); r > 0 {
			next += 1 / r
		}
		b.offsetS = math.Max(elapsedS, next)
		b.lastS = b.offsetS
		return
	}
	if r := b.rate(); r > 0 {
		b.idx = max(b.idx, int64(math.Ceil(elapsedS*r)))
	}
}
