package acquire

import (
	"context"
	"math"
	"sync"
	"testing"
	"time"
)

// genSource stands in for an input wired to an external generator: the
// response (ch 0) and the generator itself as the reference (ch 1), at a
// frequency a "person" sets, on virtual time (block k+1 once k is back).
type genSource struct {
	rate   float64
	mu     sync.Mutex
	freq   float64
	amp    float64
	blocks chan *Block
	back   chan *Block
	t      float64
	phase  float64
	cancel context.CancelFunc
	done   chan struct{}
}

func (g *genSource) set(f, a float64) {
	g.mu.Lock()
	g.freq, g.amp = f, a
	g.mu.Unlock()
}

func (g *genSource) Info() SourceInfo {
	return SourceInfo{Kind: "test", Name: "generator", RateHz: g.rate, Channels: []string{"resp", "ref"}}
}
func (g *genSource) Start(ctx context.Context) error {
	ctx, g.cancel = context.WithCancel(ctx)
	g.done = make(chan struct{})
	go func() {
		defer close(g.done)
		defer close(g.blocks)
		const n = 200
		for seq := uint64(0); ; seq++ {
			b := &Block{Seq: seq, RateHz: g.rate, Channels: 2, Frames: n, Data: make([]float64, 2*n)}
			g.mu.Lock()
			f, a, t0 := g.freq, g.amp, g.t
			g.t += n / g.rate
			g.mu.Unlock()
			b.StartS = t0
			for i := 0; i < n; i++ {
				c := math.Cos(2 * math.Pi * g.phase)
				b.Data[2*i], b.Data[2*i+1] = 0.25*a*c, a*c
				g.phase += f / g.rate
			}
			select {
			case g.blocks <- b:
			case <-ctx.Done():
				return
			}
			select {
			case <-g.back:
			case <-ctx.Done():
				return
			}
		}
	}()
	return nil
}
func (g *genSource) Blocks() <-chan *Block { return g.blocks }
func (g *genSource) Release(b *Block) {
	select {
	case g.back <- b:
	default:
	}
}
func (g *genSource) Stats() SourceStats { return SourceStats{Connected: true} }
func (g *genSource) Err() error         { return nil }
func (g *genSource) Close() error {
	if g.cancel != nil {
		g.cancel()
		<-g.done
		g.cancel = nil
	}
	return nil
}

// With a generator set by hand the bench asks for each frequency and waits
// until the reference channel, measured by a four-parameter sine fit (IEEE
// Std 1057), reads it; only then does the point settle and get logged. The
// person here first sets the dial 1 % off, then corrects it a second later.
func TestManualGeneratorIsConfirmedBeforeMeasuring(t *testing.T) {
	src := &genSource{rate: 8000, blocks: make(chan *Block), back: make(chan *Block, 1)}
	var (
		mu      sync.Mutex
		asked   []ManualSetting
		correct = map[float64]float64{} // requested frequency → source time it was set right
	)
	var drv *ManualDrive
	var err error
	drv, err = NewManualDrive("V", 2, func(m ManualSetting) {
		mu.Lock()
		asked = append(asked, m)
		mu.Unlock()
		if m.Amp == 0 {
			src.set(m.FreqHz, 0)
			return
		}
		go func() {
			src.set(m.FreqHz*1.01, m.Amp) // a first, careless setting
			time.Sleep(300 * time.Millisecond)
			src.mu.Lock()
			at := src.t
			src.mu.Unlock()
			mu.Lock()
			correct[m.FreqHz] = at
			mu.Unlock()
			src.set(m.FreqHz, m.Amp)
		}()
	})
	if err != nil {
		t.Fatal(err)
	}
	cfg := BenchConfig{Response: 0, Reference: 1, VoltsPerUnit: 1, Unit: "V", DriveAmp: 1, SettleCycles: 4,
		Plan: Plan{StartHz: 200, StopHz: 201, StepHz: 1, Direction: Up, MaxDwell: 30 * time.Second, MeasureCycles: 20, SettleTol: 0.002}}
	b, err := NewBench(src, drv, cfg)
	if err != nil {
		t.Fatal(err)
	}
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	done := make(chan error, 1)
	go func() { done <- b.Run(ctx) }()
	b.StartSweep()
	deadline := time.After(50 * time.Second)
	var logged []Point
	for len(logged) < 2 {
		select {
		case <-deadline:
			t.Fatalf("only %d points logged", len(logged))
		case sn := <-b.Latest():
			logged = sn.Points
		}
	}
	cancel()
	<-done
	if sn, ok := <-b.Latest(); ok {
		for _, m := range sn.Messages {
			t.Log(m)
		}
	}
	for _, p := range logged {
		mu.Lock()
		setAt, ok := correct[p.FreqSetHz]
		mu.Unlock()
		if !ok {
			t.Fatalf("point at %g Hz was never asked for", p.FreqSetHz)
		}
		if math.Abs(p.FreqMeasHz-p.FreqSetHz) > 1e-6*p.FreqSetHz {
			t.Errorf("point at %g Hz measured the generator at %g Hz", p.FreqSetHz, p.FreqMeasHz)
		}
		// The response is a quarter of the generator: 0.25 V at 1 V.
		if math.Abs(p.Amp[0]-0.25) > 1e-6 || !p.Settled {
			t.Errorf("point at %g Hz: %g V, settled %v", p.FreqSetHz, p.Amp[0], p.Settled)
		}
		if p.TimeS < setAt {
			t.Errorf("point at %g Hz logged at %.3f s, before the generator was set right at %.3f s", p.FreqSetHz, p.TimeS, setAt)
		}
	}
	if drv.Amp() != 0 {
		t.Errorf("the generator was not asked to go to zero at the end: %g", drv.Amp())
	}
}
