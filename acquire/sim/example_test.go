package sim_test

import (
	"context"
	"errors"
	"fmt"
	"math"

	"github.com/sweeplock/sweeplock/acquire/sim"
)

// The demo rig in virtual time: drive it below resonance, let it settle,
// and read the response's amplitude at the drive frequency from the block's
// own drive phase. (Far below the band the strip is nearly linear:
// F/√((ω0²−ω²)² + (2ζω0ω)²) = 14.84 µm, times 1.5 V/mm, is 22.3 mV.)
func Example() {
	rig, err := sim.New(sim.Demo(), sim.Options{Virtual: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer rig.Close()
	src, drv := rig.Source(), rig.Drive()
	if err := src.Start(context.Background()); err != nil {
		fmt.Println(err)
		return
	}
	if err := drv.Set(25, sim.DemoDriveAmp); err != nil {
		fmt.Println(err)
		return
	}
	var i, q, sum, sc, ss float64
	n := 0
	for k := 0; k < 250; k++ { // 5 s; measure the last second (25 cycles)
		b := <-src.Blocks()
		if k >= 200 {
			for j, y := range b.Data {
				s, c := math.Sincos(2 * math.Pi * b.PhaseCyc[j])
				i, q, sum, sc, ss, n = i+y*c, q+y*s, sum+y, sc+c, ss+s, n+1
			}
		}
		if k == 249 {
			fmt.Printf("%d frames per block at %g Hz, drive %g Hz at %g %s\n",
				b.Frames, b.RateHz, b.DriveHz, b.DriveAmp, drv.Info().Unit)
		}
		src.Release(b)
	}
	mean := sum / float64(n)
	i, q = i-mean*sc, q-mean*ss
	fmt.Printf("mean %.2f V, response %.1f mV\n", mean, 1000*2*math.Hypot(i, q)/float64(n))
	if err := drv.Off(context.Background()); err != nil {
		fmt.Println(err)
	}
	fmt.Println("amplitude after Off:", drv.Amp())
	// Output:
	// 80 frames per block at 4000 Hz, drive 25 Hz at 0.2 A
	// mean 1.65 V, response 22.3 mV
	// amplitude after Off: 0
}

// Validate names the rig-file key at fault.
func ExampleConfig_Validate() {
	cfg := sim.Demo()
	cfg.DispLimitM = 2e-3
	err := cfg.Validate()
	fmt.Println(err)
	fmt.Println(errors.Is(err, sim.ErrConfig))
	// Output:
	// sim: rig setting disp_limit_m = 0.002: must lie below the softening rig's escape amplitude ω0/√|β| = 0.001688 m
	// true
}
