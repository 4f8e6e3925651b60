package jump_test

import (
	"fmt"

	"github.com/sweeplock/sweeplock/dsp/jump"
)

// An up-sweep of a hardening resonator (f0 = 100 Hz, ζ = 0.05, amplitudes
// in units of the static deflection: the first-order harmonic-balance
// response with γ = 0.018) drops off its upper branch near 133.003 Hz.
func ExampleFind() {
	pts := []jump.Point{
		{131.0, 7.436}, {131.2, 7.451}, {131.4, 7.466}, {131.6, 7.480}, {131.8, 7.493},
		{132.0, 7.506}, {132.2, 7.516}, {132.4, 7.525}, {132.6, 7.530}, {132.8, 7.529},
		{133.0, 7.498}, {133.2, 1.311}, {133.4, 1.301}, {133.6, 1.292}, {133.8, 1.283},
		{134.0, 1.274}, {134.2, 1.264}, {134.4, 1.256}, {134.6, 1.247}, {134.8, 1.238},
	}
	for _, j := range jump.Find(pts, jump.DefaultConfig()) {
		fmt.Println(j)
	}
	// Output:
	// jump down ×5.72 between 133 Hz and 133.2 Hz (points 10–11, 7.498 → 1.311)
}

// The streaming form, here waiting for no later point, reports the jump as
// soon as the point after it is logged: the down-sweep of the same resonator climbs back onto the upper
// branch near 119.366 Hz.
func ExampleDetector() {
	d := jump.NewDetector(jump.DefaultConfig(), 0)
	for _, p := range []jump.Point{
		{120.0, 2.839}, {119.8, 2.936}, {119.6, 3.064}, {119.4, 3.291}, {119.2, 6.251},
		{119.0, 6.229}, {118.8, 6.207},
	} {
		if j, ok := d.Add(p); ok {
			fmt.Printf("at %.1f Hz: %v\n", p.FreqHz, j)
		}
	}
	// Output:
	// at 119.2 Hz: jump up ×1.90 between 119.4 Hz and 119.2 Hz (points 3–4, 3.291 → 6.251)
}
