package settle_test

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"

	"github.com/sweeplock/sweeplock/dsp/settle"
)

// A resonator with f0 = 100 Hz and Q = 50 (τ = Q/(π f0) ≈ 0.159 s) has its
// drive stepped; one block is 2 drive cycles (20 ms). The block phasors
// approach the new steady state on a decaying spiral, with a little noise.
// The error starts at 0.90 of the settled amplitude, so the envelope falls
// to 0.1 % after τ·ln(0.90/0.001) ≈ 1.08 s.
func Example() {
	const (
		f0     = 100.0
		q      = 50.0
		blockS = 0.02
	)
	tau := q / (math.Pi * f0)
	final := cmplx.Rect(2.0, -0.8)                         // settled amplitude and phase
	r := cmplx.Rect(math.Exp(-blockS/tau), 2*math.Pi*0.01) // decay and beat per block
	start := cmplx.Rect(1.2, 0.3)

	rng := rand.New(rand.NewPCG(1, 2))
	d := settle.New(settle.Config{
		Tol:          1e-3, // 0.1 % of the settled amplitude
		MinBlocks:    8,
		MaxDwellS:    10,
		ExpectedTauS: tau,
	})
	d.Reset(blockS)
	z := start
	for {
		noise := complex(rng.NormFloat64(), rng.NormFloat64()) * 1e-4
		s := d.Update(z + noise)
		if s.State == settle.Settled || s.State == settle.GaveUp {
			fmt.Printf("%s after %d blocks (%.2f s)\n", s.State, s.Blocks, s.ElapsedS)
			fmt.Printf("tau %.3f s, Q %.1f\n", s.TauS, math.Pi*f0*s.TauS)
			fmt.Printf("amplitude %.4f, phase %.3f rad\n", cmplx.Abs(s.Final), cmplx.Phase(s.Final))
			break
		}
		z = final + (z-final)*r
	}
	// Output:
	// settled after 58 blocks (1.16 s)
	// tau 0.159 s, Q 50.0
	// amplitude 2.0000, phase -0.800 rad
}
