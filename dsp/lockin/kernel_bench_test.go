package lockin

import "testing"

// Kernel benchmarks: the inner loops of the Sync fast path over 1024
// samples, in ns per sample. goertzel3 runs three harmonics per loop,
// goertzel2 two, goertzel1 one; linear is the check that a chunk's phases
// lie on a line.

func BenchmarkKernelGoertzel2(b *testing.B) {
	x := make([]float64, 1024)
	for i := range x {
		x[i] = float64(i%17) * 0.01
	}
	var st [4]float64
	var k [8]float64
	lookAhead(k[:], 1.99)
	lookAhead(k[4:], 1.98)
	for range b.N {
		st = [4]float64{}
		goertzel2(x, 1, 1024, &k, &st)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*1024), "ns/frame")
}

func BenchmarkKernelLinear(b *testing.B) {
	ph := make([]float64, 1026)
	for i := range ph {
		ph[i] = 0.3 + float64(i)*0.0052
	}
	for range b.N {
		if !linear(ph, 0.3, 0.0052, 1e-12) {
			b.Fatal("not linear")
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*1026), "ns/frame")
}

func BenchmarkKernelGoertzel3(b *testing.B) {
	x := make([]float64, 1024)
	for i := range x {
		x[i] = float64(i%17) * 0.01
	}
	var st [6]float64
	var k [12]float64
	lookAhead(k[:], 1.99)
	lookAhead(k[4:], 1.98)
	lookAhead(k[8:], 1.97)
	for range b.N {
		st = [6]float64{}
		goertzel3(x, 1, 1024, &k, &st)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*1024), "ns/frame")
}

func BenchmarkKernelGoertzel1(b *testing.B) {
	x := make([]float64, 1024)
	for i := range x {
		x[i] = float64(i%17) * 0.01
	}
	var st [4]float64
	var k [8]float64
	lookAhead(k[:], 1.99)
	for range b.N {
		st = [4]float64{}
		goertzel1(x, 1, 1024, &k, &st)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*1024), "ns/frame")
}
