package acquire

import "math"

// Interim jump finder, to be replaced by package dsp/jump.
type jumpPoint struct{ FreqHz, Amp float64 }

type jumpFound struct {
	Index                             int
	FromHz, ToHz, AmpBefore, AmpAfter float64
	Rise                              bool
}

func findJumpsShim(pts []jumpPoint) []jumpFound {
	var out []jumpFound
	for i := 1; i < len(pts); i++ {
		a, b := pts[i-1].Amp, pts[i].Amp
		if a <= 0 || b <= 0 {
			continue
		}
		r := math.Log(b / a)
		if math.Abs(r) > math.Log(1.5) {
			out = append(out, jumpFound{i, pts[i-1].FreqHz, pts[i].FreqHz, a, b, r > 0})
		}
	}
	return out
}
