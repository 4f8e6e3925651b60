package soundcard

import (
	"testing"
	"time"
)

// BenchmarkCallback times the audio callback's body — the generator for
// every frame, the drive written to the output channels, the inputs copied
// into a pooled block and sent — without a device, and reports it as a
// percentage of the buffer's duration (the target is under 5 %). The
// consumer's receive and Release are inside the loop, so the pool never
// runs dry. Each case ramps the amplitude for the whole run (the costlier
// path: two cosines per frame).
func BenchmarkCallback(b *testing.B) {
	for _, tc := range []struct {
		name          string
		rateHz        float64
		frames        int
		inCh, outChan int
	}{
		{"192k_stereo_2048", 192000, 2048, 2, 2},
		{"48k_stereo_2048", 48000, 2048, 2, 2},
		{"192k_stereo_256", 192000, 256, 2, 2},
	} {
		b.Run(tc.name, func(b *testing.B) {
			cfg := DefaultConfig()
			cfg.RateHz = tc.rateHz
			cfg.FramesPerBuffer = tc.frames
			cfg.Ramp = MaxRamp // ramping throughout
			cfg.MaxLevel = 1
			e := newEngine(cfg, 16)
			e.deliver.Store(true)
			e.sp.Store(&setpoint{freqHz: 1234.5, inc: phaseInc(1234.5, tc.rateHz), amp: 1})
			in := make([]float32, tc.frames*tc.inCh)
			out := make([]float32, tc.frames*tc.outChan)
			for i := range in {
				in[i] = float32(i%97) / 100
			}
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				e.process(in, out, 0)
				e.recycle(<-e.blocks)
			}
			buffer := time.Duration(float64(time.Second) * float64(tc.frames) / tc.rateHz)
			perOp := b.Elapsed().Seconds() / float64(b.N)
			b.ReportMetric(100*perOp/buffer.Seconds(), "%buffer")
		})
	}
}
