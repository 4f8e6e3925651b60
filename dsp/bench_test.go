package dsp

import (
	"fmt"
	"math"
	"testing"
)

// BenchmarkSpectrumAmplitude measures a windowed amplitude spectrum; the
// ns/sample metric divided into 1e9/rate gives the real-time factor.
func BenchmarkSpectrumAmplitude(b *testing.B) {
	for _, n := range []int{8192, 65536} {
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			s := NewSpectrum(n, BlackmanHarris, 48000)
			x := tone(n, 48000, 1001.7, 1, 0)
			amp := make([]float64, s.Bins())
			b.ReportAllocs()
			for b.Loop() {
				s.Amplitude(amp, x)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/sample")
		})
	}
}

func BenchmarkSpectrumDensity(b *testing.B) {
	const n = 8192
	s := NewSpectrum(n, Hann, 48000)
	x := tone(n, 48000, 1001.7, 1, 0)
	den := make([]float64, s.Bins())
	b.ReportAllocs()
	for b.Loop() {
		s.Density(den, x)
	}
}

func BenchmarkSpectrumPeak(b *testing.B) {
	const n = 8192
	s := NewSpectrum(n, BlackmanHarris, 48000)
	amp := s.Amplitude(nil, tone(n, 48000, 1001.7, 1, 0))
	b.ReportAllocs()
	for b.Loop() {
		s.Peak(amp, 1, len(amp))
	}
}

func benchSine(n int) (t, y []float64) {
	t = make([]float64, n)
	y = make([]float64, n)
	for i := range t {
		t[i] = float64(i) / 48000
		y[i] = 0.8*math.Cos(2*math.Pi*1001.7*t[i]+0.3) + 0.01
	}
	return t, y
}

func BenchmarkFit3(b *testing.B) {
	t, y := benchSine(4096)
	b.ReportAllocs()
	for b.Loop() {
		Fit3(t, y, 1001.7)
	}
}

func BenchmarkFit4(b *testing.B) {
	t, y := benchSine(4096)
	b.ReportAllocs()
	var it int
	for b.Loop() {
		f, err := Fit4(t, y, 1001.7+3) // 0.26 bin off
		if err != nil {
			b.Fatal(err)
		}
		it = f.Iterations
	}
	b.ReportMetric(float64(it), "iterations")
}

func BenchmarkWindowProps(b *testing.B) {
	for b.Loop() {
		FlatTop.Props(4096)
	}
}

func BenchmarkOverloaded(b *testing.B) {
	x := tone(4096, 48000, 1001.7, 1.2, 0)
	b.ReportAllocs()
	for b.Loop() {
		Overloaded(x, 1, 0.001)
	}
}
