package acquire

import (
	"context"
	"fmt"
	"math"
	"os"
	"sync"
)

// Replay is a source that plays back a raw capture (see WAVWriter): the
// sensor channels as they were recorded, with the drive's phase, frequency
// and amplitude from the capture's drive channels. It runs on virtual time:
// block k+1 is made once block k is released.
type Replay struct {
	wav      *WAV
	name     string
	chans    []string
	frames   int // per block
	blocks   chan *Block
	release  chan *Block
	cancel   context.CancelFunc
	done     chan struct{}
	once     sync.Once
	mu       sync.Mutex
	stats    SourceStats
	started  bool
	fullScal float64
}

var _ Source = (*Replay)(nil)

// OpenReplay reads a raw capture for playback in blocks of blockFrames.
// channels names the sensor channels (from the sidecar); nil names them
// by number.
func OpenReplay(path string, channels []string, blockFrames int) (*Replay, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("acquire: replay: %w", err)
	}
	defer f.Close()
	w, err := ReadWAV(f)
	if err != nil {
		return nil, err
	}
	nsens := w.Channels - RawDriveChannels
	if nsens < 1 {
		return nil, fmt.Errorf("acquire: replay: %s has %d channels; a raw capture has the sensor channels and %d drive channels", path, w.Channels, RawDriveChannels)
	}
	if channels == nil {
		for i := 0; i < nsens; i++ {
			channels = append(channels, fmt.Sprintf("ch%d", i))
		}
	}
	if len(channels) > nsens {
		channels = channels[:nsens]
	}
	if blockFrames < 1 {
		blockFrames = int(math.Max(1, math.Round(w.RateHz/50)))
	}
	return &Replay{wav: w, name: path, chans: channels, frames: blockFrames,
		blocks: make(chan *Block), release: make(chan *Block, 1), done: make(chan struct{})}, nil
}

// Info describes the capture.
func (r *Replay) Info() SourceInfo {
	return SourceInfo{Kind: "replay", Name: r.name, RateHz: r.wav.RateHz, Channels: r.chans}
}

// Start begins playback.
func (r *Replay) Start(ctx context.Context) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.started {
		return fmt.Errorf("acquire: replay %s already started", r.name)
	}
	r.started = true
	r.stats.Connected = true
	ctx, r.cancel = context.WithCancel(ctx)
	go r.run(ctx)
	return nil
}

func (r *Replay) run(ctx context.Context) {
	defer close(r.done)
	defer close(r.blocks)
	w := r.wav
	nsens := w.Channels - RawDriveChannels
	nch := len(r.chans)
	b := &Block{Channels: nch, RateHz: w.RateHz}
	unwrapped, prevFrac := 0.0, math.NaN()
	for first, seq := 0, uint64(0); first < w.Frames; first, seq = first+r.frames, seq+1 {
		n := min(r.frames, w.Frames-first)
		b.Seq, b.Frames, b.StartS = seq, n, float64(first)/w.RateHz
		b.Data = b.Data[:0]
		hasPh := !math.IsNaN(float64(w.Data[first*w.Channels+nsens]))
		if hasPh {
			b.PhaseCyc = b.PhaseCyc[:0]
		} else {
			b.PhaseCyc = nil
		}
		for i := first; i < first+n; i++ {
			row := w.Data[i*w.Channels : (i+1)*w.Channels]
			for c := 0; c < nch; c++ {
				b.Data = append(b.Data, float64(row[c]))
			}
			if hasPh {
				frac := float64(row[nsens])
				if math.IsNaN(prevFrac) {
					unwrapped = frac
				} else {
					d := frac - prevFrac
					d -= math.Round(d) // the phase advances less than half a cycle per frame
					unwrapped += d
				}
				prevFrac = frac
				b.PhaseCyc = append(b.PhaseCyc, unwrapped)
			}
			b.DriveHz, b.DriveAmp = float64(row[nsens+1]), float64(row[nsens+2])
		}
		select {
		case r.blocks <- b:
		case <-ctx.Done():
			return
		}
		select {
		case <-r.release:
		case <-ctx.Done():
			return
		}
		r.mu.Lock()
		r.stats.Blocks++
		r.mu.Unlock()
	}
}

// Blocks delivers the capture; it is closed at the end.
func (r *Replay) Blocks() <-chan *Block { return r.blocks }

// Release hands a block back; the next one is made after it.
func (r *Replay) Release(b *Block) {
	select {
	case r.release <- b:
	default:
	}
}

// Stats reports the blocks played.
func (r *Replay) Stats() SourceStats {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.stats
}

// Err is always nil: a capture that reads cannot fail later.
func (r *Replay) Err() error { return nil }

// Close stops playback; safe twice.
func (r *Replay) Close() error {
	r.once.Do(func() {
		r.mu.Lock()
		started := r.started
		r.mu.Unlock()
		if started {
			r.cancel()
			<-r.done
		}
	})
	return nil
}
