package tui

import "testing"

// BenchmarkView measures one full render at 120×40 of the busiest scene
// (a sweep with jumps, band and 117 points), with colour, and of the
// spectrum view. Target: under 2 ms per render.
func BenchmarkView(b *testing.B) {
	for _, tc := range []struct {
		name   string
		signal signalView
	}{{"wave", showWave}, {"spectrum", showSpectrum}} {
		b.Run(tc.name, func(b *testing.B) {
			m := show(b, &recorder{}, Options{}, 120, 40, sceneSweepJump())
			m.signal = tc.signal
			b.ReportAllocs()
			for b.Loop() {
				_ = m.View()
			}
		})
	}
}
