package soundcard

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestScratchSlipMask(t *testing.T) {
	fs := 48000.0
	for _, withOld := range []bool{false, true} {
		missed, total := 0, 0
		rng := rand.New(rand.NewPCG(1, 2))
		for trial := 0; trial < 400; trial++ {
			d := newSlipDetector(2048, 96000)
			if withOld {
				d.retune(2 * math.Pi * 1742.287 / fs)
				d.frames = 10
			}
			d.retune(2 * math.Pi * 2000 / fs)
			w := 2 * math.Pi * 2000 / fs
			a := 0.0525
			ph := rng.Float64() * 2 * math.Pi
			k := 6 + rng.IntN(15)
			at := 100 + rng.IntN(1800)
			x := make([]float32, 2048*3)
			n := 0
			for i := range x {
				if i == 2048+at {
					n += k
				}
				x[i] = float32(a * math.Cos(ph+w*float64(n)))
				n++
			}
			d.scan(x, 0, 1, 2048)
			got := d.scan(x, 2048, 1, 2048)
			total++
			if !got {
				missed++
			}
		}
		t.Logf("old candidate %v: missed %d of %d", withOld, missed, total)
	}
}
