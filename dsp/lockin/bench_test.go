package lockin

import (
	"fmt"
	"math/rand/v2"
	"testing"
	"time"
)

// benchHarmonics are the five harmonics of the speed target: the
// fundamental, the 2nd, 3rd and 5th and the 1/2 subharmonic.
var benchHarmonics = []Harmonic{{1, 1}, {2, 1}, {3, 1}, {5, 1}, {1, 2}}

// BenchmarkPush measures Push on a 997 Hz drive for the sample rates,
// channel counts and modes of the project's speed target, fed in calls of
// 1024 frames (a typical audio buffer). Each iteration is 0.1 s of samples
// (the buffer is reused, its phases advanced by one addition per frame
// between iterations, so it stays in cache as a freshly filled audio buffer
// would). It reports ns
// per channel sample and the real-time factor, frames per second processed
// over the sample rate.
func BenchmarkPush(b *testing.B) {
	for _, mode := range []Mode{Sync, LowPass} {
		for _, rate := range []float64{48000, 192000} {
			for _, ch := range []int{1, 2} {
				name := fmt.Sprintf("%v/%gk/ch%d", mode, rate/1000, ch)
				b.Run(name, func(b *testing.B) {
					benchPush(b, Config{Harmonics: benchHarmonics, Channels: ch, Mode: mode,
						Cycles: 20, Order: 4, TimeConstant: 100 * time.Millisecond, RateHz: rate}, 997, 0)
				})
			}
		}
	}
	// A serial ADC: 2 kS/s with jittered times and the phase fitted to
	// them; every frame takes the per-sample path.
	b.Run("sync/jittered/2k/ch1", func(b *testing.B) {
		benchPush(b, Config{Harmonics: benchHarmonics, Cycles: 20, RateHz: 2000}, 37.3, 0.5)
	})
	b.Run("lowpass/jittered/2k/ch1", func(b *testing.B) {
		benchPush(b, Config{Harmonics: benchHarmonics, Mode: LowPass, Order: 4, TimeConstant: time.Second, RateHz: 2000}, 37.3, 0.5)
	})
}

func benchPush(b *testing.B, cfg Config, f, jitter float64) {
	if cfg.Channels == 0 {
		cfg.Channels = 1
	}
	n := int(cfg.RateHz / 10)
	rng := rand.New(rand.NewPCG(1, 2))
	ph := make([]float64, n)
	var tt []float64
	if jitter != 0 {
		tt = make([]float64, n)
	}
	for i := range ph {
		ti := float64(i) / cfg.RateHz
		if jitter != 0 {
			ti += jitter * (rng.Float64() - 0.5) / cfg.RateHz
			tt[i] = ti
		}
		ph[i] = 0.3 + f*ti
	}
	x := make([]float64, n*cfg.Channels)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	l, err := New(cfg)
	if err != nil {
		b.Fatal(err)
	}
	const buf = 1024
	span := float64(n) / cfg.RateHz
	b.ResetTimer()
	for it := range b.N {
		if it > 0 {
			// Continue the phase (and the times): 1 addition per
			// frame, included in the time measured.
			for i := range ph {
				ph[i] += f * span
			}
			for i := range tt {
				tt[i] += span
			}
		}
		xx, pp, ttt := x, ph, tt
		for len(pp) > 0 {
			m := min(buf, len(pp))
			var tm []float64
			if ttt != nil {
				tm = ttt[:m]
			}
			k, _ := l.Push(xx[:m*cfg.Channels], tm, pp[:m])
			xx, pp = xx[k*cfg.Channels:], pp[k:]
			if ttt != nil {
				ttt = ttt[k:]
			}
		}
	}
	sec := b.Elapsed().Seconds() / float64(b.N)
	b.ReportMetric(sec*1e9/float64(n*cfg.Channels), "ns/sample")
	b.ReportMetric(float64(n)/sec/cfg.RateHz, "x-realtime")
}
