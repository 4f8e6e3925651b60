package sim

import (
	"testing"
)

// benchEngine measures the engine alone (drive, RK4, sensor, ADC) making
// blocks for cfg, and reports the speed as a multiple of real time:
// simulated seconds per second of CPU.
func benchEngine(b *testing.B, cfg Config, hz, amp float64) {
	cfg = cfg.Effective()
	if err := cfg.Validate(); err != nil {
		b.Fatal(err)
	}
	e := newEngine(cfg)
	blk := e.newBlock()
	e.setDrive(hz, amp)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if err := e.fill(blk); err != nil {
			b.Fatal(err)
		}
	}
	simS := float64(b.N) * float64(cfg.BlockFrames) / cfg.RateHz
	b.ReportMetric(simS/b.Elapsed().Seconds(), "x-realtime")
	b.ReportMetric(b.Elapsed().Seconds()*1e9/(float64(b.N)*float64(cfg.BlockFrames)), "ns/sample")
}

func BenchmarkEngine(b *testing.B) {
	at48k := func(sub int) Config {
		c := Demo()
		c.RateHz, c.BlockFrames, c.ADCBits, c.ADCMinV, c.ADCMaxV, c.Substeps = 48000, 960, 16, -1, 1, sub
		c.OffsetV = 0
		c.HighPassHz = 5
		return c
	}
	b.Run("demo-4kHz", func(b *testing.B) { benchEngine(b, Demo(), 37, DemoDriveAmp) })
	b.Run("hardening-8kHz-2ch", func(b *testing.B) {
		benchEngine(b, DemoHardening(), 125, DemoHardeningDriveAmp)
	})
	b.Run("48kHz-8substeps", func(b *testing.B) { benchEngine(b, at48k(8), 37, DemoDriveAmp) })
	b.Run("48kHz-1substep", func(b *testing.B) { benchEngine(b, at48k(1), 37, DemoDriveAmp) })
}

// BenchmarkVirtualRig measures the whole virtual-time rig (goroutine,
// channel, pool, release) on the demo configuration.
func BenchmarkVirtualRig(b *testing.B) {
	cfg := Demo().Effective()
	bn := startRig(b, cfg, Options{Virtual: true})
	bn.set(37, DemoDriveAmp)
	ch := bn.src.Blocks()
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		bn.src.Release(<-ch)
	}
	simS := float64(b.N) * float64(cfg.BlockFrames) / cfg.RateHz
	b.ReportMetric(simS/b.Elapsed().Seconds(), "x-realtime")
}
