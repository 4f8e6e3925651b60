package sim

import (
	"context"
	"math"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// watchdog bounds how long a test waits for a block. It is not a speed
// check: it only turns a hang into a failure.
const watchdog = 30 * time.Second

// bench is a started rig under test.
type bench struct {
	t   testing.TB
	rig *Rig
	src acquire.Source
	drv acquire.Drive
}

// startRig makes and starts a rig; it is closed when the test ends.
func startRig(t testing.TB, cfg Config, opt Options) *bench {
	t.Helper()
	r, err := New(cfg, opt)
	if err != nil {
		t.Fatalf("New: %v", err)
	}
	t.Cleanup(func() { _ = r.Close() })
	if err := r.Source().Start(context.Background()); err != nil {
		t.Fatalf("Start: %v", err)
	}
	return &bench{t: t, rig: r, src: r.Source(), drv: r.Drive()}
}

// next receives the next block; it fails the test if the channel closes or
// the watchdog fires.
func (b *bench) next() *acquire.Block {
	b.t.Helper()
	select {
	case blk, ok := <-b.src.Blocks():
		if !ok {
			b.t.Fatalf("blocks closed early: %v", b.src.Err())
		}
		return blk
	case <-time.After(watchdog):
		b.t.Fatal("no block within the watchdog time")
	}
	return nil
}

// skipS receives and releases blocks covering at least s seconds.
func (b *bench) skipS(s float64) {
	b.t.Helper()
	cfg := b.rig.Config()
	n := int(math.Ceil(s * cfg.RateHz / float64(cfg.BlockFrames)))
	for range n {
		b.src.Release(b.next())
	}
}

// set calls Drive.Set and fails the test on an error.
func (b *bench) set(f, a float64) {
	b.t.Helper()
	if err := b.drv.Set(f, a); err != nil {
		b.t.Fatalf("Set(%g, %g): %v", f, a, err)
	}
}

// demod accumulates a plain lock-in sum of one channel against the drive
// phase the block carries: I = Σ y·cos 2πφ, Q = Σ y·sin 2πφ, and Σ y.
type demod struct {
	i, q, sum float64
	n         int
}

func (d *demod) add(b *acquire.Block, ch int) {
	for k := 0; k < b.Frames; k++ {
		y := b.Data[k*b.Channels+ch]
		s, c := math.Sincos(2 * math.Pi * b.PhaseCyc[k])
		d.i += y * c
		d.q += y * s
		d.sum += y
		d.n++
	}
}

// amp and phase return the amplitude and phase of y ≈ X·cos(2πφ + θ): over a
// whole number of drive cycles I = N·X·cosθ/2 and Q = −N·X·sinθ/2.
func (d *demod) amp() float64   { return 2 * math.Hypot(d.i, d.q) / float64(d.n) }
func (d *demod) phase() float64 { return math.Atan2(-d.q, d.i) }

// quiet returns cfg with no noise, no hum, an ideal converter with wide
// rails and no high-pass, so the samples are the model's displacement
// times the sensitivity.
func quiet(cfg Config) Config {
	cfg.NoiseV, cfg.HumV, cfg.HighPassHz = 0, 0, 0
	cfg.ADCBits, cfg.ADCMinV, cfg.ADCMaxV = 0, -1e6, 1e6
	cfg.OffsetV = 0
	return cfg
}
