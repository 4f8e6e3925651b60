package soundcard

import (
	"context"
	"fmt"
	"math"
	"sync"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// stream is what a Card needs of an open full-duplex audio stream. The
// PortAudio file implements it; tests use a stand-in that calls the
// engine's process directly.
type stream interface {
	Start() error
	Stop() error  // returns once pending output has been played
	Abort() error // stops at once
	Close() error
	Latency() (in, out time.Duration)
}

// Card is an open sound card: one full-duplex stream whose output carries
// the drive and whose inputs carry the response (and the reference).
//
// The stream runs from Open until Close, so the drive plays whether or not
// the source has been started; blocks flow from Source().Start on.
type Card struct {
	cfg  Config
	opt  Options
	eng  *engine
	st   stream
	name string // device name(s) for Info
	term func() // releases the audio library, after the stream is closed

	src cardSource
	drv cardDrive

	mu      sync.Mutex
	started bool
	err     error // why the source ended for good (disconnect)
	dead    bool  // the device stopped delivering

	closing   chan struct{} // closed when Close begins
	stopWatch chan struct{} // stops the watchdog
	watchDone chan struct{} // closed when the watchdog returns
	blocksOff sync.Once     // closes the Blocks channel once
	closeOnce sync.Once
	closeErr  error
	stopCtx   func() bool // stops the Start context's AfterFunc
}

var (
	_ acquire.Source = (*cardSource)(nil)
	_ acquire.Drive  = (*cardDrive)(nil)
)

// newCard wires an engine and a stream that was made for it, starts the
// stream and the watchdog. On error the stream is closed.
func newCard(cfg Config, opt Options, eng *engine, st stream, name string, term func()) (*Card, error) {
	c := &Card{
		cfg:       cfg,
		opt:       opt,
		eng:       eng,
		st:        st,
		name:      name,
		term:      term,
		closing:   make(chan struct{}),
		stopWatch: make(chan struct{}),
		watchDone: make(chan struct{}),
	}
	c.src.c = c
	c.drv.c = c
	if err := st.Start(); err != nil {
		st.Close()
		if term != nil {
			term()
		}
		return nil, fmt.Errorf("soundcard: starting the stream on %s: %w", name, err)
	}
	go c.watch()
	return c, nil
}

// Source returns the card's input side.
func (c *Card) Source() acquire.Source { return &c.src }

// Drive returns the card's output side.
func (c *Card) Drive() acquire.Drive { return &c.drv }

// Config returns the configuration the card was opened with.
func (c *Card) Config() Config { return c.cfg }

// Latency returns PortAudio's estimate of the stream's input and output
// delay. Their sum is the delay between a drive frame leaving the
// generator and that frame coming back on an input with a loopback cable;
// it shifts the response's phase against Block.PhaseCyc by −360°·f·delay,
// which the reference channel removes.
func (c *Card) Latency() (in, out time.Duration) { return c.st.Latency() }

// CardStats are the sound card's own counters, beyond acquire.SourceStats.
type CardStats struct {
	Callbacks        uint64 // audio callbacks run
	Frames           uint64 // drive frames made
	InputOverflows   uint64 // callbacks PortAudio flagged with input overflow
	InputUnderflows  uint64 // ... with input underflow
	OutputUnderflows uint64 // ... with output underflow
	OutputOverflows  uint64 // ... with output overflow
	Priming          uint64 // ... as priming the output
	Slips            uint64 // callbacks whose reference input broke without a flag (audio lost in the path)
}

// Stats returns the card's own counters.
func (c *Card) Stats() CardStats {
	e := c.eng
	return CardStats{
		Callbacks:        e.callbacks.Load(),
		Frames:           e.frames.Load(),
		InputOverflows:   e.nInOver.Load(),
		InputUnderflows:  e.nInUnder.Load(),
		OutputUnderflows: e.nOutUnder.Load(),
		OutputOverflows:  e.nOutOver.Load(),
		Priming:          e.nPriming.Load(),
		Slips:            e.nSlips.Load(),
	}
}

func (c *Card) isDead() bool {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.dead
}

func (c *Card) isClosing() bool {
	select {
	case <-c.closing:
		return true
	default:
		return false
	}
}

// bufferDur is one buffer's duration.
func (c *Card) bufferDur() time.Duration {
	return time.Duration(float64(time.Second) * float64(c.cfg.FramesPerBuffer) / c.cfg.RateHz)
}

// poll is how often waits look at the callback's read-back.
func (c *Card) poll() time.Duration {
	return min(max(c.bufferDur()/4, time.Millisecond), 20*time.Millisecond)
}

// watch declares the card disconnected when callbacks stop: no first
// callback within StartGrace, or none for Stall after that.
func (c *Card) watch() {
	defer close(c.watchDone)
	tick := time.NewTicker(max(c.opt.Stall/4, time.Millisecond))
	defer tick.Stop()
	begun := time.Now()
	lastN := c.eng.callbacks.Load()
	lastT := begun
	for {
		select {
		case <-c.stopWatch:
			return
		case now := <-tick.C:
			n := c.eng.callbacks.Load()
			if n != lastN {
				lastN, lastT = n, now
				continue
			}
			limit := c.opt.Stall
			if n == 0 {
				limit = c.opt.StartGrace
			}
			if now.Sub(lastT) < limit {
				continue
			}
			var err error
			if n == 0 {
				err = fmt.Errorf("soundcard: %w: %s started but delivered no audio within %v; check that the device is free and the sound server is running, then open it again",
					acquire.ErrDisconnected, c.name, limit)
			} else {
				err = fmt.Errorf("soundcard: %w: %s stopped delivering audio (no callback for %v after %d); the sound server or the device went away; open it again once it is back",
					acquire.ErrDisconnected, c.name, limit, n)
			}
			c.mu.Lock()
			c.dead = true
			c.err = err
			c.mu.Unlock()
			c.eng.trouble.Store(troubleDisconnected)
			c.endBlocks()
			return
		}
	}
}

// endBlocks stops delivery and closes the Blocks channel, once. It waits
// for a callback inside the delivery section to leave it (a few
// microseconds), so no send can follow the close.
func (c *Card) endBlocks() {
	c.blocksOff.Do(func() {
		c.eng.deliver.Store(false)
		for c.eng.busy.Load() != 0 {
			time.Sleep(50 * time.Microsecond)
		}
		close(c.eng.blocks)
	})
}

// rampDown sets the drive to zero and waits until the generator is there
// and the output delay has passed, so the card is silent. It gives up when
// ctx ends or the device stops.
func (c *Card) rampDown(ctx context.Context) error {
	e := c.eng
	zero := func() {
		for {
			cur := e.sp.Load()
			if cur.amp == 0 || e.sp.CompareAndSwap(cur, &setpoint{freqHz: cur.freqHz, inc: cur.inc, amp: 0}) {
				return
			}
		}
	}
	zero()
	tick := time.NewTicker(c.poll())
	defer tick.Stop()
	for {
		sp := e.sp.Load()
		if sp.amp != 0 {
			if !c.isClosing() {
				return fmt.Errorf("soundcard: the drive was set again while it was turning off")
			}
			// A Set that passed its check just before Close began: Close
			// wins (Set refuses from now on).
			zero()
			continue
		}
		if e.adopted.Load() == sp && e.amp() == 0 {
			break
		}
		if c.isDead() {
			return c.Err()
		}
		select {
		case <-ctx.Done():
			return fmt.Errorf("soundcard: turning the drive off: %w", ctx.Err())
		case <-tick.C:
		}
	}
	// The zero frames are made; wait until they have been played.
	_, out := c.st.Latency()
	wait := time.NewTimer(out + c.bufferDur())
	defer wait.Stop()
	select {
	case <-ctx.Done():
		return fmt.Errorf("soundcard: turning the drive off: %w", ctx.Err())
	case <-wait.C:
	}
	return nil
}

// Close ramps the drive down, waits for the ramp to be played, stops and
// closes the stream, and closes the Blocks channel. It is safe to call
// twice and from several goroutines; Source().Close is the same call.
//
// If the stream does not stop (it can hang for good once the sound server
// has died under it), Close gives up after the output delay plus two
// seconds and returns an error wrapping ErrStuck.
func (c *Card) Close() error {
	c.closeOnce.Do(func() {
		close(c.closing)
		c.mu.Lock()
		stop := c.stopCtx
		c.mu.Unlock()
		if stop != nil {
			stop()
		}
		var errs []error
		// The ramp takes cfg.Ramp and is then played out through the
		// output delay; allow a stall and two seconds on top.
		_, outDelay := c.st.Latency()
		ctx, cancel := context.WithTimeout(context.Background(), c.cfg.Ramp+outDelay+c.opt.Stall+2*time.Second)
		if !c.isDead() {
			if err := c.rampDown(ctx); err != nil && !c.isDead() {
				errs = append(errs, err)
			}
		}
		cancel()
		c.endBlocks()
		close(c.stopWatch)
		<-c.watchDone
		// Stop plays out what is queued; a dead stream is aborted. Either can
		// hang for good when the sound server died under the stream (its
		// audio thread is stuck inside the sound library), so wait a bounded
		// time and leave the thread behind if it does not come back.
		halt, how := c.st.Stop, "stopping"
		if c.isDead() {
			halt, how = c.st.Abort, "aborting"
		}
		limit := outDelay + 2*c.bufferDur() + 2*time.Second
		if ok, err := bounded(halt, limit); !ok {
			errs = append(errs, fmt.Errorf("%w: %s it took over %v; its audio thread is stuck in the sound library and was left behind (restart the program before opening the card again)", ErrStuck, how, limit))
		} else {
			if err != nil && !c.isDead() {
				errs = append(errs, fmt.Errorf("soundcard: stopping the stream: %w", err))
			}
			if err := c.st.Close(); err != nil {
				errs = append(errs, fmt.Errorf("soundcard: closing the stream: %w", err))
			}
			if c.term != nil {
				c.term()
			}
		}
		if len(errs) > 0 {
			c.closeErr = errs[0]
		}
	})
	return c.closeErr
}

// bounded runs f and waits up to d for it; ok is false when f is still
// running (it is left to finish on its own).
func bounded(f func() error, d time.Duration) (ok bool, err error) {
	done := make(chan error, 1)
	go func() { done <- f() }()
	t := time.NewTimer(d)
	defer t.Stop()
	select {
	case err := <-done:
		return true, err
	case <-t.C:
		return false, nil
	}
}

// Err reports why the source ended for good, nil if it has not.
func (c *Card) Err() error {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.err
}

// cardSource is the card's acquire.Source.
type cardSource struct{ c *Card }

// Info describes the source. The channels are the response and, when
// configured, the reference, in that order in Block.Data.
func (s *cardSource) Info() acquire.SourceInfo {
	c := s.c
	ch := []string{fmt.Sprintf("response (input %d)", c.cfg.ResponseChannel)}
	if c.cfg.ReferenceChannel >= 0 {
		ch = append(ch, fmt.Sprintf("reference (input %d)", c.cfg.ReferenceChannel))
	}
	return acquire.SourceInfo{
		Kind:      "soundcard",
		Name:      c.name,
		RateHz:    c.cfg.RateHz,
		Channels:  ch,
		FullScale: overloadAt,
	}
}

// Start begins delivering blocks. When ctx ends the card is closed (the
// drive ramps down first). Start may be called once.
func (s *cardSource) Start(ctx context.Context) error {
	c := s.c
	c.mu.Lock()
	defer c.mu.Unlock()
	switch {
	case c.isClosing():
		return ErrClosed
	case c.dead:
		return c.err
	case c.started:
		return fmt.Errorf("soundcard: the source was already started")
	}
	c.started = true
	c.eng.deliver.Store(true)
	c.stopCtx = context.AfterFunc(ctx, func() { c.Close() })
	return nil
}

// Blocks returns the channel blocks arrive on; it is closed when the card
// closes or the device goes away (then Err says why).
func (s *cardSource) Blocks() <-chan *acquire.Block { return s.c.eng.blocks }

// Release hands a block back to the pool. Blocks not from this card are
// ignored.
func (s *cardSource) Release(b *acquire.Block) { s.c.eng.recycle(b) }

// Stats counts the source's troubles since it started.
func (s *cardSource) Stats() acquire.SourceStats {
	e := s.c.eng
	t := e.trouble.Load()
	detail := ""
	if t >= 0 && int(t) < len(troubleText) {
		detail = troubleText[t]
	}
	return acquire.SourceStats{
		Blocks:    e.nBlocks.Load(),
		Dropped:   e.nDropped.Load(),
		Gaps:      e.nGaps.Load(),
		Overloads: e.nOverloads.Load(),
		Connected: !s.c.isDead(),
		Detail:    detail,
	}
}

// Err reports why the source ended for good.
func (s *cardSource) Err() error { return s.c.Err() }

// Close closes the whole card (drive ramped down first).
func (s *cardSource) Close() error { return s.c.Close() }

// cardDrive is the card's acquire.Drive.
type cardDrive struct{ c *Card }

// Info describes the drive: amplitudes in full-scale units (±1 is the
// card's full scale, counted as volts of 1), coherent with the source.
func (d *cardDrive) Info() acquire.DriveInfo {
	return acquire.DriveInfo{Kind: "soundcard", Unit: "V", MaxAmp: d.c.cfg.MaxLevel, Coherent: true}
}

// Set changes the frequency at the next buffer with a continuous phase and
// ramps the amplitude to amp over the configured ramp time. It refuses,
// changing nothing, an amplitude above the level limit (wrapping
// acquire.ErrDriveLimit), a frequency outside (0, rate/2) (ErrFreq), or
// any call after Close or a disconnect.
func (d *cardDrive) Set(freqHz, amp float64) error {
	c := d.c
	if math.IsNaN(amp) || amp < 0 {
		return fmt.Errorf("soundcard: drive amplitude %g: must be 0 or more", amp)
	}
	if amp > c.cfg.MaxLevel {
		return fmt.Errorf("soundcard: drive amplitude %g asked, the limit (max_level) is %g: %w", amp, c.cfg.MaxLevel, acquire.ErrDriveLimit)
	}
	if math.IsNaN(freqHz) || freqHz <= 0 || freqHz >= c.cfg.RateHz/2 {
		return fmt.Errorf("%w: %g Hz asked, at %g Hz the card makes 0 to %g Hz (both exclusive)", ErrFreq, freqHz, c.cfg.RateHz, c.cfg.RateHz/2)
	}
	if c.isClosing() {
		return ErrClosed
	}
	if c.isDead() {
		return c.Err()
	}
	c.eng.sp.Store(&setpoint{freqHz: freqHz, inc: phaseInc(freqHz, c.cfg.RateHz), amp: amp})
	return nil
}

// Off ramps the amplitude to zero and returns once the generator is at
// zero and the output delay has passed (the card is silent), or when ctx
// ends. The frequency and phase carry on.
func (d *cardDrive) Off(ctx context.Context) error {
	if d.c.isDead() {
		return d.c.Err()
	}
	return d.c.rampDown(ctx)
}

// Amp reports the amplitude the generator made at its last frame.
func (d *cardDrive) Amp() float64 { return d.c.eng.amp() }

// DriveHz reports the frequency the generator made at its last frame.
func (c *Card) DriveHz() float64 { return c.eng.freq() }

// SetOffset refuses any DC offset but 0: a sound card output is
// AC-coupled and the drive has no DC term.
func (c *Card) SetOffset(offsetV float64) error {
	if offsetV != 0 {
		return fmt.Errorf("%w (asked %g)", ErrNoDC, offsetV)
	}
	return nil
}
