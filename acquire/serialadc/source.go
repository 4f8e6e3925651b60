package serialadc

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"sync"
	"sync/atomic"
	"time"

	"go.bug.st/serial"

	"github.com/sweeplock/sweeplock/acquire"
)

// Timing of the reader. The read timeout bounds how long Close and a stall
// check wait; the back-off is the wait between attempts to reopen a port.
const (
	readTimeout = 50 * time.Millisecond
	minBackoff  = 100 * time.Millisecond
	maxBackoff  = 2 * time.Second
	readBufSize = 4096
	// queueBlocks is how many delivered blocks may wait for the consumer.
	queueBlocks = 16
)

var _ acquire.Source = (*Source)(nil)

// ErrClosed is returned by Start after Close.
var ErrClosed = errors.New("serialadc: source is closed")

// decoder is what the source needs of TextDecoder and BinaryDecoder.
type decoder interface {
	io.Writer
	Reset()
	Stats() DecodeStats
	Trouble() Trouble
}

// Source reads a serial ADC; it implements acquire.Source.
type Source struct {
	cfg     Config
	dec     decoder
	text    *TextDecoder // nil for binary
	bld     *builder
	blocks  chan *acquire.Block
	free    chan *acquire.Block
	fullAbs float64

	mu      sync.Mutex
	port    serial.Port
	started bool
	closed  bool
	cancel  context.CancelFunc
	done    chan struct{}
	err     error
	once    sync.Once

	nBlocks    atomic.Uint64
	nDropped   atomic.Uint64
	nGaps      atomic.Uint64
	nOverloads atomic.Uint64
	connected  atomic.Bool
	detail     atomic.Pointer[string]
	trouble    atomic.Uint32
	rateBits   atomic.Uint64
	dec1       statsCell
}

// statsCell publishes DecodeStats from the reader goroutine without locks.
type statsCell struct {
	bytes, frames, garbage, badHeaders, crc, chans, seqGaps, lost         atomic.Uint64
	lines, badLines, cols, rng, headers, headerMis, jumps, rejects, total atomic.Uint64
}

func (c *statsCell) store(s DecodeStats) {
	c.bytes.Store(s.Bytes)
	c.frames.Store(s.Frames)
	c.garbage.Store(s.Garbage)
	c.badHeaders.Store(s.BadHeaders)
	c.crc.Store(s.CRCErrors)
	c.chans.Store(s.ChannelMismatch)
	c.seqGaps.Store(s.SeqGaps)
	c.lost.Store(s.LostFrames)
	c.lines.Store(s.Lines)
	c.badLines.Store(s.BadLines)
	c.cols.Store(s.ColumnErrors)
	c.rng.Store(s.RangeErrors)
	c.headers.Store(s.Headers)
	c.headerMis.Store(s.HeaderMismatch)
	c.jumps.Store(s.TimeJumps)
	c.rejects.Store(s.TimeRejects)
	c.total.Store(s.Rejected())
}

func (c *statsCell) load() DecodeStats {
	return DecodeStats{
		Bytes: c.bytes.Load(), Frames: c.frames.Load(), Garbage: c.garbage.Load(),
		BadHeaders: c.badHeaders.Load(), CRCErrors: c.crc.Load(), ChannelMismatch: c.chans.Load(),
		SeqGaps: c.seqGaps.Load(), LostFrames: c.lost.Load(), Lines: c.lines.Load(),
		BadLines: c.badLines.Load(), ColumnErrors: c.cols.Load(), RangeErrors: c.rng.Load(),
		Headers: c.headers.Load(), HeaderMismatch: c.headerMis.Load(), TimeJumps: c.jumps.Load(),
		TimeRejects: c.rejects.Load(),
	}
}

// New checks cfg (see Config.Validate) and returns a source that has not
// opened the port yet; Start does that.
func New(cfg Config) (*Source, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	cfg = cfg.WithDefaults()
	cfg.Channels = append([]string(nil), cfg.Channels...)
	nch := len(cfg.Channels)
	s := &Source{
		cfg:    cfg,
		blocks: make(chan *acquire.Block, queueBlocks),
		free:   make(chan *acquire.Block, 2*queueBlocks+4),
		done:   make(chan struct{}),
	}
	b := &builder{
		s:      s,
		nch:    nch,
		size:   cfg.BlockFrames,
		cal:    make([]Calibration, nch),
		lo:     make([]float64, nch),
		hi:     make([]float64, nch),
		timed:  cfg.Format == FormatText && cfg.Timestamps,
		rateHz: cfg.RateHz,
		rateFn: s.estimatedRate,
	}
	for i, name := range cfg.Channels {
		cal := cfg.Calibration[name]
		cal.Table = append([]CalPoint(nil), cal.Table...)
		b.cal[i] = cal
		if cfg.Values == ValuesVolts {
			b.lo[i], b.hi[i] = cfg.VoltsMin, cfg.VoltsMax
		} else {
			b.lo[i], b.hi[i] = float64(cfg.CountsMin), float64(cfg.CountsMax)
		}
	}
	s.bld = b
	r := cfg.index(cfg.Response)
	s.fullAbs = math.Max(math.Abs(b.cal[r].Volts(b.lo[r])), math.Abs(b.cal[r].Volts(b.hi[r])))
	if cfg.Format == FormatBinary {
		d, err := NewBinaryDecoder(nch, b)
		if err != nil {
			return nil, err
		}
		s.dec = d
	} else {
		opt := TextOptions{
			Channels:   cfg.Channels,
			Timestamps: cfg.Timestamps,
			Volts:      cfg.Values == ValuesVolts,
			CountsMin:  cfg.CountsMin,
			CountsMax:  cfg.CountsMax,
		}
		if cfg.RateHz > 0 {
			opt.IntervalUS = 1e6 / cfg.RateHz
		}
		d, err := NewTextDecoder(opt, b)
		if err != nil {
			return nil, err
		}
		s.dec = d
		s.text = d
	}
	s.setDetail("not started")
	return s, nil
}

// Config returns the source's config with defaults applied.
func (s *Source) Config() Config { return s.cfg }

// estimatedRate is the text decoder's timestamp-based rate, 0 before it is known.
func (s *Source) estimatedRate() float64 {
	if s.text == nil {
		return 0
	}
	if iv := s.text.IntervalUS(); iv > 0 {
		r := 1e6 / iv
		s.rateBits.Store(math.Float64bits(r))
		return r
	}
	return 0
}

// Info describes the source. RateHz is the configured rate or, for text
// with timestamps and no rate_hz, the estimate (0 until 16 intervals were
// seen). FullScale is the larger magnitude of the response channel's rails
// in volts.
func (s *Source) Info() acquire.SourceInfo {
	rate := s.cfg.RateHz
	if rate == 0 {
		rate = math.Float64frombits(s.rateBits.Load())
	}
	return acquire.SourceInfo{
		Kind:      "serial",
		Name:      s.cfg.Port,
		RateHz:    rate,
		Channels:  append([]string(nil), s.cfg.Channels...),
		FullScale: s.fullAbs,
	}
}

// Start opens the port in the background and begins delivering blocks; it
// returns at once. The port being absent is not an error: the source keeps
// trying and says so in Stats. Stats().Connected turns true when the first
// bytes arrive. Start may be called once.
func (s *Source) Start(ctx context.Context) error {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.closed {
		return ErrClosed
	}
	if s.started {
		return errors.New("serialadc: Start called twice")
	}
	s.started = true
	ctx, s.cancel = context.WithCancel(ctx)
	s.setDetail("opening " + s.cfg.Port)
	go s.run(ctx)
	return nil
}

// Blocks returns the channel of blocks. It is closed when the source stops.
func (s *Source) Blocks() <-chan *acquire.Block { return s.blocks }

// Release hands a block back for reuse.
func (s *Source) Release(b *acquire.Block) {
	if b == nil {
		return
	}
	select {
	case s.free <- b:
	default:
	}
}

// Stats returns the counters. Errors counts frames, packets and lines
// rejected by the decoder; Detail says in plain words what is wrong now, or
// what last went wrong.
func (s *Source) Stats() acquire.SourceStats {
	st := acquire.SourceStats{
		Blocks:    s.nBlocks.Load(),
		Dropped:   s.nDropped.Load(),
		Gaps:      s.nGaps.Load(),
		Overloads: s.nOverloads.Load(),
		Errors:    s.dec1.total.Load(),
		Connected: s.connected.Load(),
	}
	if p := s.detail.Load(); p != nil {
		st.Detail = *p
	}
	if st.Connected {
		if t := Trouble(s.trouble.Load()); t != TroubleNone {
			st.Detail = fmt.Sprintf("%s (%d rejected so far)", t, st.Errors)
		}
	}
	return st
}

// DecodeStats returns the decoder's detailed counters.
func (s *Source) DecodeStats() DecodeStats { return s.dec1.load() }

// Err returns why the source stopped for good, nil while it runs or after
// an ordinary stop.
func (s *Source) Err() error {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.err
}

// Close stops the source, closes the port, waits for the reader and closes
// the Blocks channel. It is safe to call twice.
func (s *Source) Close() error {
	s.once.Do(func() {
		s.mu.Lock()
		s.closed = true
		started := s.started
		if s.cancel != nil {
			s.cancel()
		}
		port := s.port
		s.mu.Unlock()
		if port != nil {
			port.Close() // unblocks a pending read
		}
		if started {
			<-s.done
		} else {
			close(s.blocks)
		}
	})
	return nil
}

func (s *Source) setDetail(msg string) {
	if msg == "" {
		s.detail.Store(nil)
		return
	}
	s.detail.Store(&msg)
}

func (s *Source) disconnected(msg string) {
	s.connected.Store(false)
	s.setDetail(msg)
}

func (s *Source) getBlock() *acquire.Block {
	select {
	case b := <-s.free:
		if cap(b.Data) >= s.bld.size*s.bld.nch && (!s.bld.timed || cap(b.TimeS) >= s.bld.size) {
			b.Data = b.Data[:s.bld.size*s.bld.nch]
			if s.bld.timed {
				b.TimeS = b.TimeS[:s.bld.size]
			}
			return b
		}
	default:
	}
	b := &acquire.Block{Data: make([]float64, s.bld.size*s.bld.nch)}
	if s.bld.timed {
		b.TimeS = make([]float64, s.bld.size)
	}
	return b
}

// send delivers a block without blocking; it reports false when the
// consumer was behind and the block was dropped.
func (s *Source) send(b *acquire.Block) bool {
	gap := b.Flags&acquire.FlagGap != 0
	over := b.Flags&acquire.FlagOverload != 0
	select {
	case s.blocks <- b:
		s.nBlocks.Add(1)
		if gap {
			s.nGaps.Add(1)
		}
		if over {
			s.nOverloads.Add(1)
		}
		return true
	default:
		s.nDropped.Add(1)
		s.Release(b)
		return false
	}
}

// permanent reports errors that retrying cannot cure: the port rejects the
// line settings themselves.
func permanent(err error) bool {
	var pe *serial.PortError
	if !errors.As(err, &pe) {
		return false
	}
	switch pe.Code() {
	case serial.InvalidSpeed, serial.InvalidDataBits, serial.InvalidParity, serial.InvalidStopBits:
		return true
	}
	return false
}

// openHint explains an open failure in plain words.
func openHint(path string, err error) string {
	var pe *serial.PortError
	if errors.As(err, &pe) {
		switch pe.Code() {
		case serial.PermissionDenied:
			return fmt.Sprintf("no permission to open %s (on Linux, join the dialout group and log in again)", path)
		case serial.PortBusy:
			return fmt.Sprintf("%s is busy: another program has it open", path)
		}
	}
	return fmt.Sprintf("cannot open %s (%v): cable unplugged or wrong port name?", path, err)
}

func sleepCtx(ctx context.Context, d time.Duration) bool {
	t := time.NewTimer(d)
	defer t.Stop()
	select {
	case <-ctx.Done():
		return false
	case <-t.C:
		return true
	}
}

func (s *Source) publish() {
	st := s.dec.Stats()
	s.dec1.store(st)
	s.trouble.Store(uint32(s.dec.Trouble()))
}

// run is the reader goroutine.
func (s *Source) run(ctx context.Context) {
	defer close(s.done)
	defer close(s.blocks)
	buf := make([]byte, readBufSize)
	backoff := minBackoff
	start := time.Now()
	sessions := 0
	path := s.cfg.Port
	for ctx.Err() == nil {
		port, err := serial.Open(path, &serial.Mode{BaudRate: s.cfg.Baud})
		if err == nil {
			if err = port.SetReadTimeout(readTimeout); err != nil {
				port.Close()
			}
		}
		if err != nil {
			if permanent(err) {
				s.mu.Lock()
				s.err = fmt.Errorf("serialadc: %s at %d baud: %w", path, s.cfg.Baud, err)
				s.mu.Unlock()
				s.disconnected(fmt.Sprintf("%s refused %d baud: %v", path, s.cfg.Baud, err))
				return
			}
			s.disconnected(fmt.Sprintf("%s; trying again in %v", openHint(path, err), backoff))
			if !sleepCtx(ctx, backoff) {
				return
			}
			backoff = min(2*backoff, maxBackoff)
			continue
		}
		s.mu.Lock()
		if s.closed {
			s.mu.Unlock()
			port.Close()
			return
		}
		s.port = port
		s.mu.Unlock()

		if sessions > 0 {
			s.bld.resume(time.Since(start).Seconds())
		}
		sessions++
		s.dec.Reset()
		if !s.connected.Load() {
			s.setDetail(fmt.Sprintf("%s is open; waiting for data", path))
		}

		got := false
		last := time.Now()
		reason := ""
		for {
			n, err := port.Read(buf)
			if ctx.Err() != nil {
				break
			}
			if err != nil {
				reason = fmt.Sprintf("reading %s failed (%v): cable unplugged? reconnecting", path, err)
				break
			}
			now := time.Now()
			if n == 0 {
				if now.Sub(last) > s.cfg.StallTimeout {
					reason = fmt.Sprintf("no data from %s for %v: device stopped or unplugged? reconnecting", path, s.cfg.StallTimeout)
					break
				}
				continue
			}
			last = now
			if !got {
				got = true
				backoff = minBackoff
				if !s.connected.Load() {
					s.connected.Store(true)
					if sessions > 1 {
						s.setDetail(fmt.Sprintf("reconnected to %s; samples sent while it was away are lost", path))
					} else {
						s.setDetail("")
					}
				}
			}
			s.dec.Write(buf[:n])
			s.publish()
		}
		s.mu.Lock()
		s.port = nil
		s.mu.Unlock()
		port.Close()
		s.bld.flush()
		if ctx.Err() != nil {
			return
		}
		s.disconnected(reason)
		if !got {
			if !sleepCtx(ctx, backoff) {
				return
			}
			backoff = min(2*backoff, maxBackoff)
		}
	}
}
