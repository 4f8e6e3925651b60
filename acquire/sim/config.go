package sim

import (
	"fmt"
	"math"
	"time"
)

// Defaults used for zero-valued optional Config fields.
const (
	// DefaultSubsteps is the number of Runge–Kutta steps per sample period.
	DefaultSubsteps = 8
	// DefaultRamp is the drive's amplitude ramp time.
	DefaultRamp = 500 * time.Millisecond
	// DefaultBlockS is the block length aimed at when BlockFrames is 0:
	// BlockFrames = round(RateHz·DefaultBlockS), at least 1.
	DefaultBlockS = 0.020
	// DefaultDriveUnit is the drive amplitude unit when DriveUnit is "".
	DefaultDriveUnit = "A"
)

// RampShape is the shape of the drive's amplitude ramp.
type RampShape int

const (
	// RaisedCosine ramps as a + (b−a)·(1 − cos(π·τ/T))/2 for 0 ≤ τ ≤ T:
	// zero slope at both ends, peak slope π(b−a)/(2T).
	RaisedCosine RampShape = iota
	// Linear ramps as a + (b−a)·τ/T: constant slope (b−a)/T.
	Linear
)

// String returns the rig-file name of the shape.
func (s RampShape) String() string {
	switch s {
	case RaisedCosine:
		return "raised-cosine"
	case Linear:
		return "linear"
	}
	return fmt.Sprintf("RampShape(%d)", int(s))
}

// MarshalText encodes the shape by its rig-file name.
func (s RampShape) MarshalText() ([]byte, error) {
	if s != RaisedCosine && s != Linear {
		return nil, &ConfigError{Field: "ramp_shape", Value: int(s), Allowed: `must be "raised-cosine" or "linear"`}
	}
	return []byte(s.String()), nil
}

// UnmarshalText decodes "raised-cosine" or "linear" (the rig file's
// ramp_shape key).
func (s *RampShape) UnmarshalText(b []byte) error {
	switch string(b) {
	case "raised-cosine":
		*s = RaisedCosine
	case "linear":
		*s = Linear
	default:
		return &ConfigError{Field: "ramp_shape", Value: string(b), Allowed: `must be "raised-cosine" or "linear"`}
	}
	return nil
}

// Config describes a simulated rig: the resonator, the drive, the sensor and
// its ADC. The toml keys are those of the rig file's [sim] table. Zero values
// of Substeps, BlockFrames, Ramp and DriveUnit mean the defaults above.
type Config struct {
	// Name is the rig's name for the screen and the record.
	Name string `toml:"name"`

	// NaturalHz is the small-amplitude natural frequency f0 in hertz;
	// ω0 = 2π·f0.
	NaturalHz float64 `toml:"natural_hz"`
	// Q is the quality factor; the damping ratio is ζ = 1/(2Q). At least 0.5.
	Q float64 `toml:"q"`
	// Beta is the cubic stiffness per unit mass β in 1/(m²·s²): > 0 hardens,
	// < 0 softens, 0 is linear.
	Beta float64 `toml:"beta"`
	// Gain is g, the acceleration per drive unit in m/s² per unit (for a
	// coil: force per ampere divided by the moving mass). The forcing
	// amplitude is F = g·A.
	Gain float64 `toml:"gain"`
	// DispLimitM is the displacement in metres at which the resonator
	// hits its stop (a magnet reaching the coil face): the rig then fails
	// with an error wrapping acquire.ErrDisplacementLimit. For a softening
	// rig it must lie below the escape amplitude ω0/√|β|.
	DispLimitM float64 `toml:"disp_limit_m"`

	// DriveUnit names the drive amplitude unit ("A" when empty).
	DriveUnit string `toml:"drive_unit"`
	// MaxAmp is the largest drive amplitude Set accepts, in drive units.
	MaxAmp float64 `toml:"max_amp"`
	// Ramp is the time the drive takes for any amplitude change (0 means
	// DefaultRamp); rig file: "500ms".
	Ramp time.Duration `toml:"ramp"`
	// RampShape is "raised-cosine" (default) or "linear".
	RampShape RampShape `toml:"ramp_shape"`

	// RateHz is the ADC sample rate in hertz.
	RateHz float64 `toml:"rate_hz"`
	// BlockFrames is the number of frames per block (0: about 20 ms).
	BlockFrames int `toml:"block_frames"`
	// Substeps is the number of RK4 steps per sample period (0: 8).
	Substeps int `toml:"substeps"`

	// SensVPerM is the sensor sensitivity in volts per metre (1.5 V/mm is
	// 1500); it may be negative (probe polarity).
	SensVPerM float64 `toml:"sens_v_per_m"`
	// OffsetV is the sensor output at zero displacement, in volts (a probe
	// biased to mid-range of a 0…3.3 V ADC: 1.65).
	OffsetV float64 `toml:"offset_v"`
	// NoiseV is the rms of white Gaussian noise added to each channel
	// before the ADC, in volts.
	NoiseV float64 `toml:"noise_v"`
	// HumHz is the mains frequency (50 or 60) of a hum HumV·sin(2π·HumHz·t)
	// added to each channel before the ADC; HumV is its peak in volts.
	// HumV = 0 turns the hum off (HumHz is then ignored).
	HumHz float64 `toml:"hum_hz"`
	HumV  float64 `toml:"hum_v"`
	// HighPassHz is the corner of a first-order high-pass (AC coupling, as
	// on a sound card input) applied to each channel before the ADC; 0
	// means DC-coupled.
	HighPassHz float64 `toml:"high_pass_hz"`

	// ADCBits is the ADC resolution (1…24); 0 means an ideal converter
	// (no quantisation, clipping only). Codes k = 0 … 2^N−1 stand for
	// ADCMinV + k·Q with Q = (ADCMaxV − ADCMinV)/2^N.
	ADCBits int `toml:"adc_bits"`
	// ADCMinV and ADCMaxV are the ADC's input rails in volts; inputs
	// beyond them clip.
	ADCMinV float64 `toml:"adc_min_v"`
	ADCMaxV float64 `toml:"adc_max_v"`

	// RefChannel adds a second channel carrying the drive as measured
	// (e.g. coil current through a sense resistor), through the same noise,
	// hum, high-pass and ADC: RefVPerUnit·u(t) + RefOffsetV volts.
	RefChannel  bool    `toml:"ref_channel"`
	RefVPerUnit float64 `toml:"ref_v_per_unit"`
	RefOffsetV  float64 `toml:"ref_offset_v"`

	// Seed seeds the noise generator: the same seed gives the same samples.
	Seed uint64 `toml:"seed"`
}

// withDefaults returns c with its zero-valued optional fields filled.
func (c Config) withDefaults() Config {
	if c.Substeps == 0 {
		c.Substeps = DefaultSubsteps
	}
	if c.Ramp == 0 {
		c.Ramp = DefaultRamp
	}
	if c.DriveUnit == "" {
		c.DriveUnit = DefaultDriveUnit
	}
	if c.BlockFrames == 0 && c.RateHz > 0 && !math.IsInf(c.RateHz, 0) {
		c.BlockFrames = max(1, int(math.Round(c.RateHz*DefaultBlockS)))
	}
	return c
}

// Effective returns the configuration New would use: c with the defaults
// filled in for its zero-valued optional fields.
func (c Config) Effective() Config { return c.withDefaults() }

// Zeta returns the damping ratio ζ = 1/(2Q).
func (c Config) Zeta() float64 { return 1 / (2 * c.Q) }

// Omega0 returns the natural angular frequency ω0 = 2π·NaturalHz in rad/s.
func (c Config) Omega0() float64 { return 2 * math.Pi * c.NaturalHz }

// EscapeM returns the escape amplitude of a softening rig, ω0/√|β| in
// metres (the displacement of the potential's hilltop, beyond which the
// undamped resonator does not come back); +Inf when β ≥ 0.
func (c Config) EscapeM() float64 {
	if c.Beta >= 0 {
		return math.Inf(1)
	}
	return c.Omega0() / math.Sqrt(-c.Beta)
}

// maxStepRad is the largest ω·h/Substeps accepted in any case, well inside
// RK4's stability limit y ≈ 2.83 on the imaginary axis.
const maxStepRad = 0.5

// maxNumLoss bounds the integrator's own damping: RK4 scales a linear
// oscillator's energy by |R(iy)|² = 1 − y⁶/72 + O(y⁸) per step (y = ω·dt;
// stability polynomial R(z) = 1 + z + z²/2 + z³/6 + z⁴/24, Hairer, Nørsett &
// Wanner, Solving Ordinary Differential Equations I, 1993), i.e. 2πy⁵/72
// per cycle, against 4πζ per cycle lost to the real damping. Validate asks
// 2πy⁵/72 ≤ maxNumLoss·4πζ, i.e. y ≤ (144·maxNumLoss·ζ)^{1/5}, at the
// stiffest oscillation inside the stop.
const maxNumLoss = 1e-3

// stepLimit returns the largest ω·dt that keeps the numerical loss within
// maxNumLoss of the damping ζ (and within maxStepRad).
func stepLimit(zeta float64) float64 {
	return math.Min(maxStepRad, math.Pow(144*maxNumLoss*zeta, 0.2))
}

// Validate reports the first field out of range as a *ConfigError (wrapping
// ErrConfig) that names the rig-file key, the value and what is allowed.
// Zero-valued optional fields are checked with their defaults.
func (c Config) Validate() error {
	c = c.withDefaults()
	bad := func(field string, v any, allowed string) error {
		return &ConfigError{Field: field, Value: v, Allowed: allowed}
	}
	finite := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	switch {
	case !finite(c.RateHz) || c.RateHz <= 0 || c.RateHz > 1e6:
		return bad("rate_hz", c.RateHz, "must be a sample rate in Hz, above 0 and at most 1e6")
	case !finite(c.NaturalHz) || c.NaturalHz <= 0 || c.NaturalHz >= c.RateHz/4:
		return bad("natural_hz", c.NaturalHz, fmt.Sprintf("must be above 0 and below a quarter of rate_hz (%g Hz)", c.RateHz/4))
	case !finite(c.Q) || c.Q < 0.5 || c.Q > 1e6:
		return bad("q", c.Q, "must be a quality factor from 0.5 to 1e6")
	case !finite(c.Beta):
		return bad("beta", c.Beta, "must be a finite cubic stiffness in 1/(m²·s²)")
	case !finite(c.Gain) || c.Gain <= 0:
		return bad("gain", c.Gain, "must be a positive acceleration per drive unit in m/s²")
	case !finite(c.DispLimitM) || c.DispLimitM <= 0:
		return bad("disp_limit_m", c.DispLimitM, "must be a positive displacement in metres")
	case c.Beta < 0 && c.DispLimitM >= c.EscapeM():
		return bad("disp_limit_m", c.DispLimitM, fmt.Sprintf("must lie below the softening rig's escape amplitude ω0/√|β| = %.4g m", c.EscapeM()))
	case !finite(c.MaxAmp) || c.MaxAmp <= 0:
		return bad("max_amp", c.MaxAmp, "must be a positive drive amplitude limit")
	case c.Ramp < time.Millisecond || c.Ramp > time.Minute:
		return bad("ramp", c.Ramp, "must be a ramp time from 1ms to 1m")
	case c.RampShape != RaisedCosine && c.RampShape != Linear:
		return bad("ramp_shape", c.RampShape, `must be "raised-cosine" or "linear"`)
	case c.BlockFrames < 1 || c.BlockFrames > 1<<20:
		return bad("block_frames", c.BlockFrames, "must be from 1 to 1048576 frames")
	case c.Substeps < 1 || c.Substeps > 1024:
		return bad("substeps", c.Substeps, "must be from 1 to 1024")
	case !finite(c.SensVPerM) || c.SensVPerM == 0:
		return bad("sens_v_per_m", c.SensVPerM, "must be a non-zero sensitivity in V/m")
	case !finite(c.OffsetV):
		return bad("offset_v", c.OffsetV, "must be a finite voltage")
	case !finite(c.NoiseV) || c.NoiseV < 0:
		return bad("noise_v", c.NoiseV, "must be an rms voltage ≥ 0")
	case !finite(c.HumV) || c.HumV < 0:
		return bad("hum_v", c.HumV, "must be a peak voltage ≥ 0")
	case c.HumV > 0 && c.HumHz != 50 && c.HumHz != 60:
		return bad("hum_hz", c.HumHz, "must be 50 or 60 (mains) when hum_v > 0")
	case !finite(c.HighPassHz) || c.HighPassHz < 0 || c.HighPassHz >= c.RateHz/4:
		return bad("high_pass_hz", c.HighPassHz, fmt.Sprintf("must be 0 (DC-coupled) or a corner below a quarter of rate_hz (%g Hz)", c.RateHz/4))
	case c.ADCBits < 0 || c.ADCBits > 24:
		return bad("adc_bits", c.ADCBits, "must be from 1 to 24, or 0 for an ideal converter")
	case !finite(c.ADCMinV) || !finite(c.ADCMaxV) || c.ADCMaxV <= c.ADCMinV:
		return bad("adc_max_v", c.ADCMaxV, fmt.Sprintf("must be a finite voltage above adc_min_v (%g V)", c.ADCMinV))
	case c.RefChannel && (!finite(c.RefVPerUnit) || c.RefVPerUnit == 0):
		return bad("ref_v_per_unit", c.RefVPerUnit, "must be a non-zero volts per drive unit when ref_channel is on")
	case c.RefChannel && !finite(c.RefOffsetV):
		return bad("ref_offset_v", c.RefOffsetV, "must be a finite voltage")
	}
	// The stiffest small oscillation inside the stop: ω² = ω0² + 3β·L² for
	// hardening (the tangent stiffness at the stop), ω0² for softening.
	w2 := c.Omega0() * c.Omega0()
	if c.Beta > 0 {
		w2 += 3 * c.Beta * c.DispLimitM * c.DispLimitM
	}
	lim := stepLimit(c.Zeta())
	if y := math.Sqrt(w2) / (c.RateHz * float64(c.Substeps)); y > lim {
		return bad("substeps", c.Substeps, fmt.Sprintf("is too few for this resonator: its stiffest oscillation inside the stop needs at least %d steps per sample to be integrated accurately",
			int(math.Ceil(math.Sqrt(w2)/(c.RateHz*lim)))))
	}
	return nil
}
