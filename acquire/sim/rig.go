package sim

import (
	"context"
	"fmt"
	"io"
	"math"
	"sync"
	"sync/atomic"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// Options choose how a Rig keeps time and whether it logs its drive.
type Options struct {
	// Virtual runs the rig as fast as the CPU allows and deterministically
	// (the program's --virtual-time): block k+1 is made only after block k
	// has been handed back with Release, and the drive settings it uses are
	// those set when it is made. So a Set called by the consumer before it
	// releases block k takes effect from the first frame of block k+1
	// exactly, and the same Config (seed included) with the same sequence of
	// calls gives the same samples bit for bit. Start makes block 0 before
	// it returns, so a Set made before Start applies from block 0 and one
	// made after Start (before releasing block 0) from block 1. (A Set made
	// after Release(k) lands in block k+1 or k+2, whichever the rig is
	// making: racy, so the consumer should not do it.) While an Off
	// is waiting the rig runs ahead without waiting for releases, so Off
	// completes even when nobody reads; blocks the consumer has no room for
	// are dropped and counted, as in paced mode.
	//
	// Otherwise the rig is paced to the wall clock: block k is made and
	// delivered (k+1)·BlockFrames/RateHz seconds after Start, when its last
	// sample would have been taken; a block the consumer has no room for
	// (8 blocks already waiting, or every pooled buffer unreleased) is
	// dropped without blocking, counted in Stats.Dropped, and the next
	// delivered block carries FlagGap. A Set takes effect from the next
	// block made.
	Virtual bool
	// DriveLog, when not nil, receives a header "t_s,freq_hz,amp" and then
	// one CSV line per block made, delivered or not: the time of the
	// block's last frame in seconds since Start, and the drive's frequency
	// (Hz) and amplitude (drive units) at that frame, as produced. Each line
	// is one Write, unbuffered, so give it an *os.File for a log that a
	// killed process leaves readable up to its last line; when the rig
	// stops, the log is synced if the writer has a Sync method.
	DriveLog io.Writer
}

const (
	// queueLen is how many delivered blocks may wait for the consumer
	// before blocks are dropped.
	queueLen = 8
	// poolLen is the number of pooled blocks (the queue, one held by the
	// consumer, and spare).
	poolLen = queueLen + 4
)

type runState int

const (
	idle runState = iota
	running
	stopped
)

// offWait is one Off in progress; done closes when the amplitude is zero.
type offWait struct {
	done chan struct{}
	err  error
}

// Rig is a simulated rig: a Duffing resonator with its drive, sensor and
// ADC. Make it with New, use it through Source and Drive, stop it with
// Close.
type Rig struct {
	cfg    Config // effective (defaults filled)
	opt    Options
	eng    *engine // owned by the generator goroutine once started
	blockS float64 // block period, s

	blocks  chan *acquire.Block // delivered blocks
	pool    chan *acquire.Block // free blocks
	scratch *acquire.Block      // the generator's own, for blocks not delivered
	relCh   chan struct{}       // a Release happened (virtual time)
	wake    chan struct{}       // an Off wants the generator to run ahead
	log     driveLog            // the generator's

	released   atomic.Uint64 // 1 + highest Seq released
	offPending atomic.Bool
	ampBits    atomic.Uint64 // amplitude at the last frame made
	nBlocks    atomic.Uint64
	nDropped   atomic.Uint64
	nGaps      atomic.Uint64
	nOver      atomic.Uint64

	mu         sync.Mutex
	state      runState
	closed     bool
	cmdFreq    float64 // latest Set
	cmdAmp     float64
	cmdGen     uint64 // counts Set and Off calls
	appliedGen uint64 // the cmdGen the generator has applied
	rest       bool   // the drive was off and not ramping after the last block made
	off        *offWait
	cancel     context.CancelFunc
	done       chan struct{}
	err        error
	detail     string
}

// New validates cfg and makes a rig that has not started. Zero-valued
// optional fields take their defaults (see Config).
func New(cfg Config, opt Options) (*Rig, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	cfg = cfg.withDefaults()
	e := newEngine(cfg)
	r := &Rig{
		cfg:     cfg,
		opt:     opt,
		eng:     e,
		blockS:  float64(cfg.BlockFrames) / cfg.RateHz,
		blocks:  make(chan *acquire.Block, queueLen),
		pool:    make(chan *acquire.Block, poolLen),
		scratch: e.newBlock(),
		relCh:   make(chan struct{}, 1),
		wake:    make(chan struct{}, 1),
		log:     driveLog{w: opt.DriveLog, buf: make([]byte, 0, 80)},
		rest:    true,
		done:    make(chan struct{}),
	}
	for range poolLen {
		r.pool <- e.newBlock()
	}
	return r, nil
}

// Config returns the rig's configuration with its defaults filled in.
func (r *Rig) Config() Config { return r.cfg }

// Source returns the rig's sample source.
func (r *Rig) Source() acquire.Source { return (*rigSource)(r) }

// Drive returns the rig's drive.
func (r *Rig) Drive() acquire.Drive { return (*rigDrive)(r) }

// Close stops the rig (as Source().Close()).
func (r *Rig) Close() error { return (*rigSource)(r).Close() }

// gen is the generator's loop state, owned by whoever makes blocks: Start
// for block 0 in virtual time, then the generator goroutine.
type gen struct {
	seq      uint64 // Seq of the next block
	gap      bool   // a block was lost since the last delivered one
	awaiting bool   // a delivered block is waiting for its release
	await    uint64 // its Seq
	failed   bool
}

// makeBlock makes the next block with the latest drive settings and
// delivers it, or drops it when the consumer has no room. It returns false
// when the resonator passed its stop (the rig then fails).
func (r *Rig) makeBlock(g *gen) bool {
	r.apply()
	var b *acquire.Block
	select {
	case b = <-r.pool:
	default:
		b = r.scratch // the consumer holds every pooled block
	}
	b.Seq = g.seq
	g.seq++
	if err := r.eng.fill(b); err != nil {
		r.recycle(b)
		r.fail(err)
		g.failed = true
		return false
	}
	r.produced(b)
	if b == r.scratch {
		r.nDropped.Add(1)
		g.gap = true
		return true
	}
	gap := g.gap
	if gap {
		b.Flags |= acquire.FlagGap
	}
	over := b.Flags&acquire.FlagOverload != 0
	select {
	case r.blocks <- b:
		r.nBlocks.Add(1)
		if gap {
			r.nGaps.Add(1)
		}
		if over {
			r.nOver.Add(1)
		}
		g.gap, g.awaiting, g.await = false, true, g.seq-1
	default:
		r.nDropped.Add(1)
		g.gap = true
		r.recycle(b)
	}
	return true
}

// run is the generator goroutine.
func (r *Rig) run(ctx context.Context, g *gen) {
	start := time.Now()
	var timer *time.Timer
	if !r.opt.Virtual {
		timer = time.NewTimer(time.Hour)
		timer.Stop()
	}
	for !g.failed && ctx.Err() == nil {
		if r.opt.Virtual {
			if !r.waitRelease(ctx, g.awaiting, g.await) {
				break
			}
		} else if !r.waitDeadline(ctx, timer, start, g.seq) {
			break
		}
		if !r.makeBlock(g) {
			break
		}
	}
	r.finish()
}

// waitRelease waits, in virtual time, until the last delivered block has
// been released or an Off is pending. It returns false when ctx ends.
func (r *Rig) waitRelease(ctx context.Context, awaiting bool, await uint64) bool {
	for awaiting && r.released.Load() <= await && !r.offPending.Load() {
		select {
		case <-r.relCh:
		case <-r.wake:
		case <-ctx.Done():
			return false
		}
	}
	return ctx.Err() == nil
}

// waitDeadline waits, in paced time, until block seq is due. It returns
// false when ctx ends.
func (r *Rig) waitDeadline(ctx context.Context, timer *time.Timer, start time.Time, seq uint64) bool {
	due := start.Add(time.Duration(float64(seq+1) * r.blockS * float64(time.Second)))
	d := time.Until(due)
	if d <= 0 {
		return ctx.Err() == nil
	}
	timer.Reset(d)
	select {
	case <-timer.C:
		return true
	case <-ctx.Done():
		timer.Stop()
		return false
	}
}

// apply hands the latest drive settings to the engine.
func (r *Rig) apply() {
	r.mu.Lock()
	if r.cmdGen != r.appliedGen {
		r.eng.setDrive(r.cmdFreq, r.cmdAmp)
		r.appliedGen = r.cmdGen
	}
	r.mu.Unlock()
}

// produced records a block just made: amplitude, drive log, Off progress.
func (r *Rig) produced(b *acquire.Block) {
	r.ampBits.Store(math.Float64bits(b.DriveAmp))
	hadErr := r.log.err != nil
	r.log.line(b.StartS+float64(b.Frames-1)/r.cfg.RateHz, b.DriveHz, b.DriveAmp)
	rest := r.eng.atRest() && b.DriveAmp == 0
	r.mu.Lock()
	r.rest = rest
	if r.off != nil && rest && r.appliedGen == r.cmdGen {
		close(r.off.done)
		r.off = nil
		r.offPending.Store(false)
	}
	if !hadErr && r.log.err != nil {
		r.detail = "drive log: " + r.log.err.Error()
	}
	r.mu.Unlock()
}

func (r *Rig) recycle(b *acquire.Block) {
	if b == r.scratch {
		return
	}
	select {
	case r.pool <- b:
	default:
	}
}

func (r *Rig) fail(err error) {
	r.mu.Lock()
	r.err = err
	r.detail = err.Error()
	r.mu.Unlock()
}

// finish runs when the generator stops: it completes the drive's ramp to
// zero at once, in virtual time (those blocks are logged, not delivered; the
// resonator is no longer integrated), so the drive is never cut; then it
// closes Blocks and releases any Off waiting.
func (r *Rig) finish() {
	e := r.eng
	e.setDrive(e.freq, 0)
	last := math.Float64frombits(r.ampBits.Load())
	b := r.scratch
	for !e.atRest() || last != 0 {
		e.skip(b)
		last = b.DriveAmp
		r.ampBits.Store(math.Float64bits(last))
		r.log.line(b.StartS+float64(b.Frames-1)/r.cfg.RateHz, b.DriveHz, b.DriveAmp)
	}
	r.log.sync()
	r.mu.Lock()
	r.state = stopped
	r.rest = true
	if r.off != nil {
		close(r.off.done)
		r.off = nil
	}
	r.offPending.Store(false)
	r.mu.Unlock()
	close(r.blocks) // after the state: a consumer seeing the close sees it stopped
	close(r.done)
}

// rigSource is the Rig seen as an acquire.Source.
type rigSource Rig

var _ acquire.Source = (*rigSource)(nil)

// Info describes the rig: kind "sim", its name, rate, channel names
// ("response", and "drive" with RefChannel) and full scale (the larger
// magnitude of the two ADC rails).
func (s *rigSource) Info() acquire.SourceInfo {
	ch := []string{"response"}
	if s.cfg.RefChannel {
		ch = append(ch, "drive")
	}
	return acquire.SourceInfo{
		Kind:      "sim",
		Name:      s.cfg.Name,
		RateHz:    s.cfg.RateHz,
		Channels:  ch,
		FullScale: max(math.Abs(s.cfg.ADCMinV), math.Abs(s.cfg.ADCMaxV)),
	}
}

// Start begins making blocks until ctx ends or Close is called. In virtual
// time it makes block 0 before it returns, so a Set made after Start takes
// effect from block 1 (one made before Start, from block 0) whatever the
// goroutines' timing. It returns ErrStarted if called twice and ErrClosed
// after Close.
func (s *rigSource) Start(ctx context.Context) error {
	r := (*Rig)(s)
	r.mu.Lock()
	switch {
	case r.closed || r.state == stopped:
		r.mu.Unlock()
		return ErrClosed
	case r.state == running:
		r.mu.Unlock()
		return ErrStarted
	}
	cctx, cancel := context.WithCancel(ctx)
	r.cancel = cancel
	r.state = running
	r.log.header()
	r.mu.Unlock()
	g := &gen{}
	if r.opt.Virtual && cctx.Err() == nil {
		r.makeBlock(g)
	}
	go r.run(cctx, g)
	return nil
}

// Blocks returns the channel blocks arrive on; it is closed when the rig
// stops.
func (s *rigSource) Blocks() <-chan *acquire.Block { return s.blocks }

// Release hands a block back for reuse; call it once per block received
// (twice would hand one buffer out twice), and do not touch the block
// afterwards. In virtual time it lets the rig make the next block.
func (s *rigSource) Release(b *acquire.Block) {
	r := (*Rig)(s)
	if b == nil || b == r.scratch || cap(b.Data) < len(r.scratch.Data) || cap(b.PhaseCyc) < len(r.scratch.PhaseCyc) {
		return // not one of ours
	}
	seq := b.Seq
	r.recycle(b)
	for {
		old := r.released.Load()
		if seq+1 <= old || r.released.CompareAndSwap(old, seq+1) {
			break
		}
	}
	select {
	case r.relCh <- struct{}{}:
	default:
	}
}

// Stats returns the rig's counters (a snapshot; a block being delivered at
// that instant may not be counted yet).
func (s *rigSource) Stats() acquire.SourceStats {
	s.mu.Lock()
	defer s.mu.Unlock()
	return acquire.SourceStats{
		Blocks:    s.nBlocks.Load(),
		Dropped:   s.nDropped.Load(),
		Gaps:      s.nGaps.Load(),
		Overloads: s.nOver.Load(),
		Connected: s.state == running,
		Detail:    s.detail,
	}
}

// Err returns why the rig failed (an error wrapping
// acquire.ErrDisplacementLimit when the resonator hit its stop), or nil.
func (s *rigSource) Err() error {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.err
}

// Close stops the rig, ramps its drive to zero (in virtual time), waits for
// the generator and closes Blocks. It is safe to call twice.
func (s *rigSource) Close() error {
	r := (*Rig)(s)
	r.mu.Lock()
	if r.closed {
		r.mu.Unlock()
		return nil
	}
	r.closed = true
	cancel := r.cancel
	if r.state == idle {
		r.state = stopped
		close(r.blocks)
		close(r.done)
	}
	r.mu.Unlock()
	if cancel != nil {
		cancel()
	}
	<-r.done
	return nil
}

// rigDrive is the Rig seen as an acquire.Drive.
type rigDrive Rig

var _ acquire.Drive = (*rigDrive)(nil)

// Info describes the drive: kind "sim", its unit and limit, coherent.
func (d *rigDrive) Info() acquire.DriveInfo {
	return acquire.DriveInfo{Kind: "sim", Unit: d.cfg.DriveUnit, MaxAmp: d.cfg.MaxAmp, Coherent: true}
}

// Set makes freqHz and amp the drive's settings from the next block made
// (see Options.Virtual for exactly when): the phase stays continuous and the
// amplitude ramps over the rig's ramp time. freqHz must be in [0, RateHz/2)
// (ErrFrequency) and amp in [0, MaxAmp]; above MaxAmp it returns an error
// wrapping acquire.ErrDriveLimit and changes nothing. A Set with amp > 0
// makes a waiting Off return ErrOffInterrupted.
func (d *rigDrive) Set(freqHz, amp float64) error {
	r := (*Rig)(d)
	switch {
	case math.IsNaN(freqHz) || freqHz < 0 || freqHz >= r.cfg.RateHz/2:
		return fmt.Errorf("%w: %g Hz asked; the rig samples at %g Hz, so use 0 up to below %g Hz",
			ErrFrequency, freqHz, r.cfg.RateHz, r.cfg.RateHz/2)
	case math.IsNaN(amp) || amp < 0:
		return fmt.Errorf("%w: got %g", ErrAmplitude, amp)
	case amp > r.cfg.MaxAmp:
		return fmt.Errorf("sim: drive amplitude %g %s asked, the rig's max_amp is %g %s: %w",
			amp, r.cfg.DriveUnit, r.cfg.MaxAmp, r.cfg.DriveUnit, acquire.ErrDriveLimit)
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.closed || r.state == stopped {
		return ErrClosed
	}
	r.cmdFreq, r.cmdAmp = freqHz, amp
	r.cmdGen++
	if amp > 0 && r.off != nil {
		r.off.err = ErrOffInterrupted
		close(r.off.done)
		r.off = nil
		r.offPending.Store(false)
	}
	return nil
}

// Off ramps the amplitude to zero over the ramp time (keeping the
// frequency) and returns once the rig has made the block in which it
// reaches zero, or when ctx ends (an error wrapping ctx.Err(); the ramp
// goes on). In virtual time the rig makes that ramp without waiting for the
// consumer. Before Start, and after the rig stopped (stopping always ramps
// the drive to zero), it returns nil at once.
func (d *rigDrive) Off(ctx context.Context) error {
	r := (*Rig)(d)
	r.mu.Lock()
	if r.state != running {
		r.cmdAmp = 0
		r.cmdGen++
		r.mu.Unlock()
		return nil
	}
	if r.cmdAmp == 0 && r.appliedGen == r.cmdGen && r.rest {
		r.mu.Unlock()
		return nil
	}
	r.cmdAmp = 0
	r.cmdGen++
	w := r.off
	if w == nil {
		w = &offWait{done: make(chan struct{})}
		r.off = w
	}
	r.offPending.Store(true)
	r.mu.Unlock()
	select {
	case r.wake <- struct{}{}:
	default:
	}
	select {
	case <-w.done:
		return w.err
	case <-ctx.Done():
		return fmt.Errorf("sim: drive off: still ramping down: %w", ctx.Err())
	}
}

// Amp returns the drive amplitude at the last frame made, in drive units.
func (d *rigDrive) Amp() float64 { return math.Float64frombits(d.ampBits.Load()) }
