package lockin

import (
	"testing"
	"time"
)

// TestNoAllocs checks that Push, Result and Value allocate nothing in the
// steady state, in both modes, with and without times, and on the
// per-sample (jittered) path.
func TestNoAllocs(t *testing.T) {
	const rate, f = 48000.0, 1000.37
	for _, tc := range []struct {
		name   string
		cfg    Config
		jitter float64
	}{
		{"sync", Config{Harmonics: testHarmonics, Channels: 2, Cycles: 20, RateHz: rate}, 0},
		{"sync jittered", Config{Harmonics: testHarmonics, Channels: 2, Cycles: 20, RateHz: rate}, 0.5},
		{"lowpass", Config{Harmonics: testHarmonics, Channels: 2, Mode: LowPass, Order: 4, TimeConstant: 10 * time.Millisecond, RateHz: rate}, 0},
		{"lowpass jittered", Config{Harmonics: testHarmonics, Channels: 2, Mode: LowPass, Order: 3, TimeConstant: 10 * time.Millisecond, RateHz: rate}, 0.5},
	} {
		t.Run(tc.name, func(t *testing.T) {
			n := 20000
			s := makeStream(2, n, rate, f, 0.3, tc.jitter, 0, 0, tc.jitter != 0, 2)
			l, err := New(tc.cfg)
			if err != nil {
				t.Fatal(err)
			}
			blocks := 0
			run := func() {
				x, tt, ph := s.x, s.t, s.ph
				for len(ph) > 0 {
					m := min(700, len(ph))
					var tm []float64
					if tt != nil {
						tm = tt[:m]
					}
					k, done := l.Push(x[:2*m], tm, ph[:m])
					if done {
						blocks++
						_ = l.Result().At(1, 4)
					}
					_ = l.Value(0, 0)
					x, ph = x[2*k:], ph[k:]
					if tt != nil {
						tt = tt[k:]
					}
				}
			}
			run() // warm up
			if a := testing.AllocsPerRun(5, run); a != 0 {
				t.Errorf("%v allocations per run of %d frames", a, n)
			}
			if tc.cfg.Mode == Sync && blocks == 0 {
				t.Error("no block completed")
			}
		})
	}
}
