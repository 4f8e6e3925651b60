package lockin

import (
	"encoding/binary"
	"math"
	"testing"
	"time"
)

// FuzzParseHarmonic checks that ParseHarmonic never panics and that what it
// accepts prints back to itself.
func FuzzParseHarmonic(f *testing.F) {
	for _, s := range []string{"1", "3", "1/2", " 2 / 4 ", "0", "1/0", "-3", "99999999999999999999", "1/", "/2"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		h, err := ParseHarmonic(s)
		if err != nil {
			return
		}
		if h.valid() != nil || gcd(h.Num, h.Den) != 1 {
			t.Fatalf("ParseHarmonic(%q) = %v: not valid or not reduced", s, h)
		}
		g, err := ParseHarmonic(h.String())
		if err != nil || g != h {
			t.Fatalf("round trip of %v: %v, %v", h, g, err)
		}
	})
}

// FuzzPushPhases feeds arbitrary phases (NaN, ±Inf, backwards, huge
// steps) and samples, in arbitrary call sizes, to both modes: Push must not
// panic and must consume frames, and every Sync block it reports must span
// positive time and Cycles whole cycles, with NaN amplitudes exactly when
// it is not OK (when all samples are finite).
func FuzzPushPhases(f *testing.F) {
	f.Add([]byte{0, 0, 0, 0, 0, 0, 0xf0, 0x3f, 1, 2, 3, 4, 5, 6, 7, 8}, uint8(3), false)
	f.Add([]byte("some bytes that become float64 phases and samples!!"), uint8(1), true)
	f.Fuzz(fuzzPush)
}

func fuzzPush(t *testing.T, data []byte, step uint8, lowpass bool) {
	n := len(data) / 16
	if n == 0 {
		return
	}
	ph := make([]float64, 4*n)
	x := make([]float64, 4*n)
	finite := true
	for i := 0; i < n; i++ {
		// Each 16 bytes: a phase step and a sample; the frame is repeated
		// four times so that ordinary runs of steps also occur.
		d := math.Float64frombits(binary.LittleEndian.Uint64(data[16*i:]))
		v := math.Float64frombits(binary.LittleEndian.Uint64(data[16*i+8:]))
		if !math.IsNaN(d) && math.Abs(d) < 1e6 {
			d = math.Mod(d, 3)
		}
		finite = finite && !math.IsNaN(v) && !math.IsInf(v, 0) && math.Abs(v) < 1e100
		for k := 0; k < 4; k++ {
			j := 4*i + k
			prev := 0.0
			if j > 0 {
				prev = ph[j-1]
			}
			ph[j] = prev + d
			x[j] = v
		}
	}
	cfg := Config{Harmonics: []Harmonic{{1, 1}, {3, 1}, {1, 2}}, Cycles: 2, RateHz: 100}
	if lowpass {
		cfg.Mode, cfg.Order, cfg.TimeConstant = LowPass, 2, 10*time.Millisecond
	}
	l, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	s := int(step)%7 + 1
	for len(ph) > 0 {
		m := min(s, len(ph))
		k, done := l.Push(x[:m], nil, ph[:m])
		if k < 1 || k > m {
			t.Fatalf("Push consumed %d of %d", k, m)
		}
		if done {
			r := l.Result()
			if r.Cycles != 2 || !(r.EndS > r.StartS) {
				t.Fatalf("block %+v", *r)
			}
			z := r.At(0, 0)
			isNaN := math.IsNaN(real(z)) || math.IsNaN(imag(z))
			if !r.OK && !isNaN || r.OK && isNaN && finite {
				t.Fatalf("OK %v with value %v", r.OK, z)
			}
		}
		x, ph = x[k:], ph[k:]
	}
}
