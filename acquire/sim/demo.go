package sim

import "time"

// Plan is a stepped sweep over a rig's interesting range: up from StartHz to
// StopHz in steps of StepHz, then back down.
type Plan struct {
	StartHz float64
	StopHz  float64
	StepHz  float64
}

// DemoDriveAmp is the demo rig's default drive amplitude: 0.2 A of coil
// current (forcing F = g·A = 0.48 m/s²).
const DemoDriveAmp = 0.2

// Demo returns the built-in demo rig: a spring-steel strip clamped at one
// end with a small magnet at its tip, pulled by a drive coil, the tip read
// by an inductive proximity probe through a 12-bit microcontroller ADC.
//
//   - Resonator: f0 = 38 Hz (ω0 = 238.76 rad/s), Q = 60 (ζ = 1/120),
//     softening β = −2.0e10 1/(m²·s²) (the magnet's attraction to the coil
//     core softens the strip), g = 2.4 m/s² per A, stop at 1.5 mm (the
//     magnet meets the coil face).
//   - Drive: coil current, max_amp 0.4 A, 500 ms raised-cosine ramps; the
//     default DemoDriveAmp = 0.2 A gives F = 0.48 m/s², static deflection
//     x_s = F/ω0² = 8.420 µm.
//   - Sensor: 1.5 V/mm, biased to 1.65 V (mid-range of 0…3.3 V), 2 mV rms
//     noise, 1 mV of 50 Hz hum, DC-coupled, 12-bit ADC (0.806 mV codes),
//     4000 samples/s in 20 ms blocks, one channel.
//   - Integration: 4 RK4 steps per sample (ω0·dt = 0.015; the integrator's
//     own energy loss is 5e-10 of the damping's), half the default 8, for
//     speed: the whole demo sweep runs in virtual time in tests.
//
// At 0.2 A, γ = βF²/ω0⁶ = −2.487e−5, and first-order harmonic balance
// [(1−Ω²+¾γY²)²+(2ζΩ)²]Y² = 1 (Y = x·ω0²/F, Ω = ω/ω0) puts the bistable
// band at Ω = 0.962614 … 0.976850, i.e. 36.579 … 37.120 Hz (0.541 Hz wide,
// 1.42 % of f0): an up-sweep jumps up near 37.12 Hz and a down-sweep falls
// off the upper branch near 36.58 Hz, at the peak Y = 61.93, i.e. 0.521 mm
// (0.78 V of the ADC's ±1.65 V). In the simulated ODE (sweep in DemoPlan's
// 0.05 Hz steps, 5 s dwell) the up-sweep jumps between 37.10 and 37.15 Hz
// and the down-sweep falls between 36.60 and 36.55 Hz. The escape amplitude ω0/√|β| is 1.688 mm,
// so the peak is 31 % of it (energy 18 % of the barrier ¼ω0⁴/|β|), and the
// 1.5 mm stop lies below it. (Demo's tests check these numbers and that
// the simulated jumps fall within two steps of them.)
func Demo() Config {
	return Config{
		Name:        "demo strip",
		NaturalHz:   38,
		Q:           60,
		Beta:        -2.0e10,
		Gain:        2.4,
		DispLimitM:  1.5e-3,
		DriveUnit:   "A",
		MaxAmp:      0.4,
		Ramp:        500 * time.Millisecond,
		RampShape:   RaisedCosine,
		RateHz:      4000,
		BlockFrames: 80,
		Substeps:    4,
		SensVPerM:   1500,
		OffsetV:     1.65,
		NoiseV:      0.002,
		HumHz:       50,
		HumV:        0.001,
		ADCBits:     12,
		ADCMinV:     0,
		ADCMaxV:     3.3,
		Seed:        1,
	}
}

// DemoPlan is the demo rig's sweep: 35 Hz to 39 Hz in 0.05 Hz steps (81
// points, about 11 inside the bistable band).
func DemoPlan() Plan { return Plan{StartHz: 35, StopHz: 39, StepHz: 0.05} }

// DemoHardeningDriveAmp is the hardening rig's default drive amplitude,
// 0.2 A (F = 0.7 m/s²).
const DemoHardeningDriveAmp = 0.2

// DemoHardening returns a hardening rig for tests: a clamped-clamped steel
// beam whose mid-span stretching hardens it, driven by a coil, read by an
// optical displacement sensor on a sound card input (AC-coupled, with the
// coil current on the second input).
//
//   - Resonator: f0 = 120 Hz, Q = 50 (ζ = 0.01), β = +2.25e13 1/(m²·s²),
//     g = 3.5 m/s² per A, stop at 0.5 mm.
//   - Drive: max_amp 0.5 A, 200 ms raised-cosine ramps; at
//     DemoHardeningDriveAmp = 0.2 A, F = 0.7 m/s², x_s = 1.2313 µm.
//   - Sensor: 8 V/mm, 0.2 mV rms noise, no hum, 3 Hz high-pass, 16-bit
//     ±1 V converter at 8000 samples/s in 20 ms blocks; reference channel
//     1 V/A (a 1 Ω sense resistor).
//
// At 0.2 A, γ = 6.0008e−5 and first-order harmonic balance puts the band at
// Ω = 1.030572 … 1.050283, i.e. 123.669 … 126.034 Hz (1.97 % of f0): an
// up-sweep falls off the upper branch near 126.03 Hz (peak Y = 47.35,
// 58.3 µm, 0.47 V), a down-sweep jumps up near 123.67 Hz. In the simulated
// ODE (0.1 Hz steps, 2 s dwell) the up-sweep falls after 126.0 Hz (the
// point at 126.1 Hz is caught mid-way by the slowing down near the fold)
// and the down-sweep jumps between 123.7 and 123.6 Hz.
func DemoHardening() Config {
	return Config{
		Name:        "demo beam",
		NaturalHz:   120,
		Q:           50,
		Beta:        2.25e13,
		Gain:        3.5,
		DispLimitM:  0.5e-3,
		DriveUnit:   "A",
		MaxAmp:      0.5,
		Ramp:        200 * time.Millisecond,
		RampShape:   RaisedCosine,
		RateHz:      8000,
		BlockFrames: 160,
		Substeps:    DefaultSubsteps,
		SensVPerM:   8000,
		NoiseV:      0.0002,
		HighPassHz:  3,
		ADCBits:     16,
		ADCMinV:     -1,
		ADCMaxV:     1,
		RefChannel:  true,
		RefVPerUnit: 1,
		Seed:        2,
	}
}

// DemoHardeningPlan is the hardening rig's sweep: 118 Hz to 130 Hz in
// 0.1 Hz steps.
func DemoHardeningPlan() Plan { return Plan{StartHz: 118, StopHz: 130, StepHz: 0.1} }
