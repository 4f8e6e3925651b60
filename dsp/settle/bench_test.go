package settle

import (
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// BenchmarkUpdate measures one Update with a full 64-block window on a
// decaying transient in noise (Q = 100 at 100 Hz, blocks of 2 cycles).
func BenchmarkUpdate(b *testing.B) {
	r := linear{f0: 100, zeta: 0.005, force: 1}
	x0, v0 := fromSteady(r, 100.5, 0.3)
	st := newStep(r, 100.8, 0.3, 2, x0, v0)
	rng := rand.New(rand.NewPCG(3, 4))
	sigma := 1e-4 * cmplx.Abs(st.zinf)
	zs := make([]complex128, 4096)
	for i := range zs {
		zs[i] = st.block(i%400) + noisy(rng, sigma)
	}
	cfg := DefaultConfig()
	cfg.MaxDwellS = 1e9
	cfg.Tol = 1e-9 // never settles, so every Update does the full work
	d := New(cfg)
	d.Reset(st.blockS)
	for i := 0; i < 64; i++ {
		d.Update(zs[i])
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		d.Update(zs[i%len(zs)])
	}
}

// BenchmarkUpdatePoint measures the mean cost of an Update over whole
// points: drive steps on a Q = 100 resonator with block noise of 0.1 tol,
// each run until Settled.
func BenchmarkUpdatePoint(b *testing.B) {
	r := linear{f0: 100, zeta: 0.005, force: 1}
	x0, v0 := fromSteady(r, 100.5, 0.3)
	st := newStep(r, 100.8, 0.3, 4, x0, v0)
	rng := rand.New(rand.NewPCG(3, 4))
	sigma := 1e-4 * cmplx.Abs(st.zinf)
	cfg := DefaultConfig()
	d := New(cfg)
	d.Reset(st.blockS)
	k := 0
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		s := d.Update(st.block(k) + noisy(rng, sigma))
		k++
		if s.State != Settling {
			d.Reset(st.blockS)
			k = 0
		}
	}
}
