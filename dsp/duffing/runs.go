package duffing

import "math"

// RunsTest counts the runs of equal sign in the residuals r (zeros are
// skipped) and returns the count, its mean and variance under the
// hypothesis that the signs are in random order, and the standardized
// statistic z = (runs − mean)/√variance. With n1 positive and n2 negative
// signs, n = n1 + n2 (A. Wald, J. Wolfowitz, "On a test whether two
// samples are from the same population", Ann. Math. Statist. 11 (1940)
// 147–162):
//
//	mean = 2n1n2/n + 1,   variance = 2n1n2(2n1n2 − n)/(n²(n − 1)).
//
// Too few runs (z well below 0) means the residuals come in long blocks of
// one sign: the model misses structure in the data. z is NaN when either
// sign is missing or n < 3.
func RunsTest(r []float64) (runs int, mean, variance, z float64) {
	var n1, n2 int
	last := 0
	for _, x := range r {
		s := 0
		switch {
		case x > 0:
			s = 1
			n1++
		case x < 0:
			s = -1
			n2++
		default:
			continue
		}
		if s != last {
			runs++
			last = s
		}
	}
	n := float64(n1 + n2)
	if n1 == 0 || n2 == 0 || n < 3 {
		return runs, math.NaN(), math.NaN(), math.NaN()
	}
	p := 2 * float64(n1) * float64(n2)
	mean = p/n + 1
	variance = p * (p - n) / (n * n * (n - 1))
	return runs, mean, variance, (float64(runs) - mean) / math.Sqrt(variance)
}
