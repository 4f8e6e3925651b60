package rig

import (
	"context"
	"math"
	"math/cmplx"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
)

// loopback is a simulated sound card with its output wired to its input,
// on virtual time (a block is made when the one before is taken): the
// generator (a phase accumulator, as the card's) feeds a delay of a whole
// number of frames and a first-order digital high-pass (the input's AC
// coupling),
//
//	y[n] = α·(y[n−1] + u[n] − u[n−1]),  H(z) = α(1 − z⁻¹)/(1 − αz⁻¹),
//
// whose response at ω = 2πf/fs is exact (the difference equation's
// z-transform, common practice). From frame slipAt on, the delay is
// slipBy frames longer (audio repeated in the path).
type loopback struct {
	rate        float64
	delay       int
	alpha       float64
	slipAt      int64
	slipBy      int
	blockFrames int
	mu          sync.Mutex
	f, amp      float64
	blocks      chan *acquire.Block
	done        chan struct{}
	closeOnce   sync.Once
	phase       float64 // cycles
	hist        []float64
	n           int64
	y, uPrev    float64
}

func newLoopback(rate float64, delay int, fcHz float64) *loopback {
	return &loopback{rate: rate, delay: delay, alpha: 1 / (1 + 2*math.Pi*fcHz/rate), slipAt: -1, blockFrames: 2048,
		blocks: make(chan *acquire.Block), done: make(chan struct{})}
}

// response is the loopback's exact response at f with the delay d frames.
func (l *loopback) response(f float64, d int) complex128 {
	z1 := cmplx.Exp(complex(0, -2*math.Pi*f/l.rate))
	a := complex(l.alpha, 0)
	return a * (1 - z1) / (1 - a*z1) * cmplx.Exp(complex(0, -2*math.Pi*f*float64(d)/l.rate))
}

func (l *loopback) Info() acquire.SourceInfo {
	return acquire.SourceInfo{Kind: "soundcard", Name: "loopback", RateHz: l.rate, Channels: []string{"response"}}
}
func (l *loopback) Blocks() <-chan *acquire.Block { return l.blocks }
func (l *loopback) Release(*acquire.Block)        {}
func (l *loopback) Stats() acquire.SourceStats    { return acquire.SourceStats{Connected: true} }
func (l *loopback) Err() error                    { return nil }
func (l *loopback) Close() error {
	l.closeOnce.Do(func() { close(l.done) })
	return nil
}
func (l *loopback) Start(ctx context.Context) error {
	go l.run(ctx)
	return nil
}

func (l *loopback) run(ctx context.Context) {
	defer close(l.blocks)
	for seq := uint64(0); ; seq++ {
		l.mu.Lock()
		f, amp := l.f, l.amp
		l.mu.Unlock()
		b := &acquire.Block{Seq: seq, RateHz: l.rate, Channels: 1, Frames: l.blockFrames, DriveHz: f, DriveAmp: amp,
			Data: make([]float64, l.blockFrames), PhaseCyc: make([]float64, l.blockFrames)}
		for i := range l.blockFrames {
			b.PhaseCyc[i] = l.phase
			l.hist = append(l.hist, amp*math.Cos(2*math.Pi*l.phase))
			l.phase += f / l.rate
			d := l.delay
			if l.slipAt >= 0 && l.n >= l.slipAt {
				d += l.slipBy
			}
			u := 0.0
			if k := int(l.n) - d; k >= 0 {
				u = l.hist[k]
			}
			l.y = l.alpha * (l.y + u - l.uPrev)
			l.uPrev = u
			b.Data[i] = l.y
			l.n++
		}
		select {
		case l.blocks <- b:
		case <-ctx.Done():
			return
		case <-l.done:
			return
		}
	}
}

func (l *loopback) Set(f, amp float64) error {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.f, l.amp = f, amp
	return nil
}
func (l *loopback) Off(context.Context) error {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.amp = 0
	return nil
}
func (l *loopback) Amp() float64 {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.amp
}
func (l *loopback) Info2() acquire.DriveInfo {
	return acquire.DriveInfo{Kind: "soundcard", Unit: "V", MaxAmp: 1, Coherent: true}
}

// loopDrive gives the loopback the Drive interface (Info clashes with the
// source's).
type loopDrive struct{ *loopback }

func (d loopDrive) Info() acquire.DriveInfo { return d.Info2() }

// The calibration of a simulated card recovers its response: the delay of
// whole frames and the high-pass's gain and phase, exactly at the grid
// points, whatever the delay (the phase slope is unwrapped step by step);
// and a delay that changes during a pass makes it measure again.
func TestMeasureCalLoopback(t *testing.T) {
	const rate = 48000.0
	const gridTol = 1e-6
	cfg := soundcard.DefaultConfig()
	freqs := []float64{10, 40, 160, 640, 2560}
	// The reported latency is 0.5 s each way (as PortAudio reports more
	// than the sound server's true delay) but where a case says otherwise.
	for _, tc := range []struct {
		name    string
		delay   int
		fc      float64
		slipAt  int64
		passes  int           // passes expected
		latency time.Duration // reported each way
		tol     float64       // at the grid points, relative
	}{
		// gridTol: the simulation is noiseless (float64 throughout) and the
		// coupling's transient has decayed for over 10τ when the
		// measurement starts: the fits recover the response to rounding.
		{"sound server delay", 32768, 5, -1, 1, 500 * time.Millisecond, gridTol},
		{"long odd delay", 91234, 3, -1, 1, 1200 * time.Millisecond, gridTol},
		{"short delay", 7, 20, -1, 1, 500 * time.Millisecond, gridTol},
		{"delay changes in the first pass", 32768, 5, 600000, 2, 500 * time.Millisecond, gridTol},
		// A delay beyond the reported one: the measurement starts on the
		// old tone and is measured again until its halves agree to
		// calAgree; the coupling's transient, which halves e^{−T/τ} apart
		// (T = 0.1 s and more, τ = 53 ms) differ by most of, is left below
		// about 2·calAgree.
		{"delay beyond the reported latency", 91234, 3, -1, 1, 500 * time.Millisecond, 2 * calAgree},
	} {
		t.Run(tc.name, func(t *testing.T) {
			l := newLoopback(rate, tc.delay, tc.fc)
			if tc.slipAt >= 0 {
				l.slipAt, l.slipBy = tc.slipAt, 3
			}
			in, out := tc.latency, tc.latency
			var progress strings.Builder
			ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
			defer cancel()
			cal, err := measureCal(ctx, l, loopDrive{l}, cfg, in, out, freqs, CalOptions{LevelFS: 0.25, Progress: &progress})
			l.Close()
			if err != nil {
				t.Fatalf("%v\n%s", err, progress.String())
			}
			again := strings.Count(progress.String(), "measuring again")
			if again != tc.passes-1 {
				t.Errorf("%d passes measured again, want %d:\n%s", again, tc.passes-1, progress.String())
			}
			d := tc.delay
			if tc.slipAt >= 0 {
				d += l.slipBy // the pass kept is after the change
			}
			worst := 0.0
			for _, p := range cal.Points {
				want := l.response(p.FreqHz, d)
				worst = math.Max(worst, cmplx.Abs(cal.At(p.FreqHz)/want-1))
				if got := cal.At(p.FreqHz); cmplx.Abs(got/want-1) > tc.tol {
					t.Errorf("%g Hz: calibration %v, exact %v (|H| %.6f vs %.6f)", p.FreqHz, got, want, cmplx.Abs(got), cmplx.Abs(want))
				}
			}
			t.Logf("largest error at the grid %.2g (relative); delay %.4f frames; %d passes measured again", worst, cal.DelayS*rate, again)
			// The delay it takes out is the frames' delay plus the
			// high-pass's phase slope between the last two probes (fm and
			// fm + 1000·step, step = 0.25 Hz / (2·(in+out) + 1 s)), from
			// the exact response.
			fm := math.Sqrt(freqs[0] * freqs[len(freqs)-1])
			df := 1000 * 0.25 / (2*(in+out).Seconds() + 1)
			hp := func(f float64) complex128 { return l.response(f, 0) }
			wantTau := float64(d)/rate - cmplx.Phase(hp(fm+df)/hp(fm))/(2*math.Pi*df)
			// tauTol: a thousandth of a frame; the simulation is noiseless.
			const tauTol = 1e-3 / rate
			if math.Abs(cal.DelayS-wantTau) > tauTol {
				t.Errorf("delay %.9f s (%.4f frames), want %.9f s (%.4f frames)", cal.DelayS, cal.DelayS*rate, wantTau, wantTau*rate)
			}
		})
	}
}
