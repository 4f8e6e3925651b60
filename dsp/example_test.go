package dsp_test

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/sweeplock/sweeplock/dsp"
)

func ExampleWindow_Weights() {
	w := dsp.Hann.Weights(make([]float64, 8))
	for _, v := range w {
		fmt.Printf("%.4f ", v)
	}
	fmt.Println()
	// Output:
	// 0.0000 0.1464 0.5000 0.8536 1.0000 0.8536 0.5000 0.1464
}

func ExampleWindow_Props() {
	for _, w := range []dsp.Window{dsp.Rect, dsp.Hann, dsp.BlackmanHarris, dsp.FlatTop} {
		p := w.Props(4096)
		fmt.Printf("%-15s CG %.5f  NENBW %.4f  3dB %.4f  flatness %+.4f dB  sidelobe %.1f dB\n",
			w, p.CoherentGain, p.NENBW, p.Width3dBBins, p.MaxAmpErrorDB, p.PeakSidelobeDB)
	}
	// Output:
	// rect            CG 1.00000  NENBW 1.0000  3dB 0.8845  flatness -3.9224 dB  sidelobe -13.3 dB
	// hann            CG 0.50000  NENBW 1.5000  3dB 1.4382  flatness -1.4236 dB  sidelobe -31.5 dB
	// blackman-harris CG 0.35875  NENBW 2.0044  3dB 1.8962  flatness -0.8256 dB  sidelobe -92.0 dB
	// flat-top        CG 0.21364  NENBW 3.8112  3dB 3.7592  flatness +0.0044 dB  sidelobe -95.0 dB
}

func ExampleParseWindow() {
	w, err := dsp.ParseWindow("HFT95")
	fmt.Println(w, err)
	_, err = dsp.ParseWindow("triangle")
	fmt.Println(err)
	// Output:
	// flat-top <nil>
	// dsp: unknown window "triangle": use rect, hann, blackman-harris or flat-top
}

// A tone between bins: the flat-top reads its amplitude off the bin, and
// Peak refines frequency and amplitude for any window.
func ExampleSpectrum_Peak() {
	const n, rate = 8192, 48000.0
	x := make([]float64, n)
	for i := range x {
		x[i] = 0.25 * math.Cos(2*math.Pi*1001.7*float64(i)/rate)
	}
	s := dsp.NewSpectrum(n, dsp.BlackmanHarris, rate)
	amp := s.Amplitude(nil, x)
	f, a := s.Peak(amp, 1, len(amp))
	fmt.Printf("bin width %.4f Hz; peak %.4f Hz, amplitude %.6f\n", s.BinHz(), f, a)
	// Output:
	// bin width 5.8594 Hz; peak 1001.7000 Hz, amplitude 0.250000
}

func ExampleSpectrum_Amplitude() {
	const n, rate = 4096, 4096.0
	x := make([]float64, n)
	for i := range x {
		th := 2 * math.Pi * 100.4 * float64(i) / rate
		x[i] = 0.1 + math.Cos(th) + 0.01*math.Cos(3*th)
	}
	s := dsp.NewSpectrum(n, dsp.FlatTop, rate)
	amp := s.Amplitude(nil, x)
	fmt.Printf("DC %.4f  fundamental %.3f  third %.5f\n", amp[0], amp[100], amp[301])
	// Output:
	// DC 0.1000  fundamental 1.000  third 0.01000
}

func ExampleSpectrum_Density() {
	const n, rate, sigma = 8192, 1000.0, 0.01
	rng := rand.New(rand.NewPCG(1, 1))
	s := dsp.NewSpectrum(n, dsp.Hann, rate)
	x := make([]float64, n)
	den := make([]float64, s.Bins())
	var sum float64
	const blocks = 8
	for b := 0; b < blocks; b++ {
		for i := range x {
			x[i] = sigma * rng.NormFloat64()
		}
		s.Density(den, x)
		for _, d := range den[1 : len(den)-1] {
			sum += d * d
		}
	}
	rms := math.Sqrt(sum / float64(blocks*(len(den)-2)))
	fmt.Printf("measured %.2e /√Hz, expected σ·√(2/fs) = %.2e /√Hz\n", rms, sigma*math.Sqrt(2/rate))
	// Output:
	// measured 4.49e-04 /√Hz, expected σ·√(2/fs) = 4.47e-04 /√Hz
}

func ExampleFit3() {
	t := make([]float64, 500)
	y := make([]float64, 500)
	for i := range t {
		t[i] = float64(i) / 10000
		y[i] = 0.3*math.Cos(2*math.Pi*120*t[i]-1.0) + 0.05
	}
	f := dsp.Fit3(t, y, 120)
	fmt.Printf("amp %.4f phase %.4f rad offset %.4f, residual below 1e-12: %v\n", f.Amp, f.PhaseRad, f.Offset, f.RMSResidual < 1e-12)
	// Output:
	// amp 0.3000 phase -1.0000 rad offset 0.0500, residual below 1e-12: true
}

// Measuring a generator's frequency from samples on an irregular clock.
func ExampleFit4() {
	rng := rand.New(rand.NewPCG(5, 5))
	t := make([]float64, 2000)
	y := make([]float64, 2000)
	for i := range t {
		t[i] = (float64(i) + 0.3*(rng.Float64()-0.5)) / 1000 // jittered 1 kHz clock
		y[i] = 1.2 * math.Cos(2*math.Pi*37.123456*t[i]+0.5)
	}
	f, err := dsp.Fit4(t, y, 37.0)
	fmt.Printf("%.6f Hz amp %.4f phase %.4f, %v\n", f.FreqHz, f.Amp, f.PhaseRad, err)
	// Output:
	// 37.123456 Hz amp 1.2000 phase 0.5000, <nil>
}

func ExampleFreqGuess() {
	const rate = 8000.0
	y := make([]float64, 1024)
	t := make([]float64, len(y))
	for i := range y {
		t[i] = float64(i) / rate
		y[i] = 2 + 0.7*math.Sin(2*math.Pi*443.21*t[i])
	}
	g := dsp.FreqGuess(y, rate)
	f, _ := dsp.Fit4(t, y, g)
	fmt.Printf("guess %.2f Hz, fit %.4f Hz\n", g, f.FreqHz)
	// Output:
	// guess 443.21 Hz, fit 443.2100 Hz
}

func ExampleTHD() {
	amps := []float64{100, 0, 20} // fundamental, 2nd, 3rd
	fmt.Printf("THD_F %.6f  THD_R %.6f  (%.2f dB)\n", dsp.THD(amps), dsp.THDR(amps), dsp.DB(dsp.THD(amps)))
	// Output:
	// THD_F 0.200000  THD_R 0.196116  (-13.98 dB)
}

func ExampleRatios() {
	r := dsp.Ratios(nil, []float64{0.5, 0.005, 0.0005})
	for k, v := range r[1:] {
		fmt.Printf("H%d %.0f dB\n", k+2, dsp.DB(v))
	}
	// Output:
	// H2 -40 dB
	// H3 -60 dB
}

func ExampleOverloaded() {
	x := []float64{0.2, 0.9995, 1, 1, -0.7, -1, 0.3}
	fmt.Println(dsp.Overloaded(x, 1, 0.001))
	// Output:
	// 4
}

func ExampleRange_Clipped() {
	adc := dsp.Range{Min: 0, Max: 3.3} // unipolar microcontroller ADC, volts
	low, high := adc.Clipped([]float64{0, 0, 0.4, 1.6, 3.1, 3.3}, 0.001)
	fmt.Println(low, high)
	// Output:
	// 2 1
}

func ExampleFlatRuns() {
	// A stage saturating at 0.8, below the converter's range.
	x := []float64{0.1, 0.5, 0.8, 0.8, 0.8, 0.8, 0.4, -0.3, -0.8, -0.8, -0.8, -0.2}
	fmt.Println(dsp.FlatRuns(x, 3))
	// Output:
	// 7
}
