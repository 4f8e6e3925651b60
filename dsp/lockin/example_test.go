package lockin_test

import (
	"fmt"
	"math"
	"math/cmplx"
	"time"

	"github.com/sweeplock/sweeplock/dsp/lockin"
)

// A resonator's response to a 1 kHz drive, sampled at 48 kHz, measured over
// blocks of 20 drive cycles: amplitude and phase of the fundamental and the
// third harmonic, and the offset.
func ExampleLockIn_Push() {
	const rate, f = 48000.0, 1000.0
	l, err := lockin.New(lockin.Config{
		Harmonics: []lockin.Harmonic{{Num: 1, Den: 1}, {Num: 3, Den: 1}},
		Cycles:    20,
		RateHz:    rate,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	// The drive's phase accumulator, and the response it causes.
	n := 2400
	ph := make([]float64, n)
	x := make([]float64, n)
	for i := range ph {
		ph[i] = f * float64(i) / rate
		x[i] = 0.02 + 0.5*math.Cos(2*math.Pi*ph[i]-math.Pi/2) + 0.004*math.Cos(3*2*math.Pi*ph[i]+1)
	}
	for len(ph) > 0 {
		k, done := l.Push(x, nil, ph)
		if done {
			r := l.Result()
			z1, z3 := r.At(0, 0), r.At(0, 1)
			fmt.Printf("%.4f–%.4f s: %d samples, fundamental %.4f at %.1f°, third %.4f (%.1f dB), offset %.3f\n",
				r.StartS, r.EndS, r.Samples, cmplx.Abs(z1), cmplx.Phase(z1)*180/math.Pi,
				cmplx.Abs(z3), 20*math.Log10(cmplx.Abs(z3)/cmplx.Abs(z1)), r.Offset(0))
		}
		x, ph = x[k:], ph[k:]
	}
	// Output:
	// 0.0000–0.0200 s: 960 samples, fundamental 0.5000 at -90.0°, third 0.0040 (-41.9 dB), offset 0.020
	// 0.0200–0.0400 s: 960 samples, fundamental 0.5000 at -90.0°, third 0.0040 (-41.9 dB), offset 0.020
}

// A classic lock-in reading: the fundamental smoothed by a 4-stage filter
// of 10 ms, half a second after the signal appeared.
func ExampleLockIn_Value() {
	const rate, f = 48000.0, 997.0
	tau := 10 * time.Millisecond
	l, err := lockin.New(lockin.Config{
		Harmonics:    []lockin.Harmonic{{Num: 1, Den: 1}},
		Mode:         lockin.LowPass,
		Order:        4,
		TimeConstant: tau,
		RateHz:       rate,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	n := int(0.5 * rate)
	ph := make([]float64, n)
	x := make([]float64, n)
	for i := range ph {
		ph[i] = f * float64(i) / rate
		x[i] = 0.25 * math.Cos(2*math.Pi*ph[i]+0.5)
	}
	l.Push(x, nil, ph)
	z := l.Value(0, 0)
	fmt.Printf("amplitude %.4f, phase %.3f rad\n", cmplx.Abs(z), cmplx.Phase(z))
	fmt.Printf("noise bandwidth %.3f Hz, 99.9 %% settled after %v\n", l.NoiseBandwidthHz(), l.SettleTime(0.999).Round(time.Microsecond))
	// Output:
	// amplitude 0.2500, phase 0.500 rad
	// noise bandwidth 7.812 Hz, 99.9 % settled after 130.622ms
}

func ExampleParseHarmonic() {
	for _, s := range []string{"3", "1/2", "2/4", "0"} {
		h, err := lockin.ParseHarmonic(s)
		if err != nil {
			fmt.Println(err)
			continue
		}
		fmt.Printf("%s: %v = %.2f × drive\n", s, h, h.Ratio())
	}
	// Output:
	// 3: 3 = 3.00 × drive
	// 1/2: 1/2 = 0.50 × drive
	// 2/4: 1/2 = 0.50 × drive
	// lockin: bad harmonic: 0/1 (numerator 1..64, denominator 1..16)
}

func ExampleRCSettleTime() {
	tau := 100 * time.Millisecond
	for n := 1; n <= 4; n++ {
		fmt.Printf("order %d: ENBW %.4f Hz, 99 %% after %v\n", n,
			lockin.RCNoiseBandwidthHz(n, tau), lockin.RCSettleTime(n, tau, 0.99).Round(time.Millisecond/10))
	}
	// Output:
	// order 1: ENBW 2.5000 Hz, 99 % after 460.5ms
	// order 2: ENBW 1.2500 Hz, 99 % after 663.8ms
	// order 3: ENBW 0.9375 Hz, 99 % after 840.6ms
	// order 4: ENBW 0.7812 Hz, 99 % after 1.0045s
}
