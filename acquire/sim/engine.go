package sim

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/sweeplock/sweeplock/acquire"
)

// engine makes the samples: drive, resonator, sensor and ADC, one block at a
// time, with no goroutines and no allocation. Only one goroutine may use it.
type engine struct {
	rate   float64 // sample rate, Hz
	h      float64 // sample period, s
	sub    int     // RK4 steps per sample
	dt     float64 // RK4 step, s
	frames int
	chans  int
	res    duffing
	gain   float64 // g, m/s² per drive unit
	limitM float64

	// Drive: phase φ(n) = phBase + freq·(n − nBase)/rate cycles — a phase
	// accumulator that grows by freq/rate per sample, restarted from its
	// current value at each frequency change so the phase stays continuous.
	freq       float64
	phBase     float64
	nBase      uint64
	rotC, rotS float64 // cos, sin of 2π·freq·dt/2 (one half RK4 step)
	// Amplitude ramp from ampFrom to ampTo over rampS seconds starting at
	// sample rampN0.
	ampFrom, ampTo float64
	rampN0         uint64
	rampS          float64
	linear         bool
	ramping        bool

	// Resonator state at sample n.
	n    uint64
	x, v float64

	// Sensor.
	sens, offV     float64
	refSens, refOV float64
	noiseV         float64
	humV, humHz    float64
	hpOn           bool
	hp             [2]highPass
	conv           adc
	rng            *rand.Rand
}

func newEngine(c Config) *engine {
	w0 := c.Omega0()
	e := &engine{
		rate:   c.RateHz,
		h:      1 / c.RateHz,
		sub:    c.Substeps,
		dt:     1 / (c.RateHz * float64(c.Substeps)),
		frames: c.BlockFrames,
		chans:  1,
		res:    duffing{c: 2 * c.Zeta() * w0, k: w0 * w0, beta: c.Beta},
		gain:   c.Gain,
		limitM: c.DispLimitM,
		rotC:   1,
		rampS:  c.Ramp.Seconds(),
		linear: c.RampShape == Linear,
		sens:   c.SensVPerM,
		offV:   c.OffsetV,
		noiseV: c.NoiseV,
		conv:   newADC(c.ADCBits, c.ADCMinV, c.ADCMaxV),
		rng:    rand.New(rand.NewPCG(c.Seed, 0x73696d2d72696721)),
	}
	if c.HumV > 0 {
		e.humV, e.humHz = c.HumV, c.HumHz
	}
	if c.RefChannel {
		e.chans = 2
		e.refSens, e.refOV = c.RefVPerUnit, c.RefOffsetV
	}
	if c.HighPassHz > 0 {
		e.hpOn = true
		e.hp[0] = newHighPass(c.HighPassHz, c.RateHz)
		e.hp[1] = e.hp[0]
	}
	return e
}

// newBlock allocates a block with buffers for one engine block.
func (e *engine) newBlock() *acquire.Block {
	return &acquire.Block{
		RateHz:   e.rate,
		Channels: e.chans,
		Frames:   e.frames,
		Data:     make([]float64, e.frames*e.chans),
		PhaseCyc: make([]float64, e.frames),
	}
}

// phase returns the drive phase φ at sample n in cycles, unwrapped.
func (e *engine) phase(n uint64) float64 {
	return e.phBase + e.freq*float64(n-e.nBase)/e.rate
}

// ampAt returns the drive amplitude at sample n plus frac of a sample period.
func (e *engine) ampAt(n uint64, frac float64) float64 {
	if !e.ramping {
		return e.ampTo
	}
	r := (float64(n-e.rampN0) + frac) * e.h / e.rampS
	if r >= 1 {
		return e.ampTo
	}
	if !e.linear {
		r = 0.5 - 0.5*math.Cos(math.Pi*r)
	}
	return e.ampFrom + (e.ampTo-e.ampFrom)*r
}

// setDrive makes freq and amp the drive's settings from the current sample
// on: the phase continues from its present value at the new rate, and the
// amplitude ramps from its present value to amp over the ramp time.
func (e *engine) setDrive(freq, amp float64) {
	if freq != e.freq {
		e.phBase, e.nBase, e.freq = e.phase(e.n), e.n, freq
		e.rotS, e.rotC = math.Sincos(math.Pi * freq * e.dt)
	}
	if amp != e.ampTo {
		e.ampFrom, e.ampTo = e.ampAt(e.n, 0), amp
		e.rampN0, e.ramping = e.n, true
	}
}

// atRest reports whether the drive is off and not ramping.
func (e *engine) atRest() bool { return e.ampTo == 0 && !e.ramping }

// endRamp clears the ramping flag once the ramp covers all of sample n's
// past (the current sample and every RK4 stage before it).
func (e *engine) endRamp() {
	if e.ramping && float64(e.n-e.rampN0)*e.h >= e.rampS {
		e.ramping = false
	}
}

// advance integrates the resonator over one sample period from sample n,
// given cos and sin of the drive phase and the amplitude a at sample n. The
// drive at the RK4 stage times comes from rotating (c, s) by half steps of
// the phase accumulator, so it is continuous and exact to rounding.
func (e *engine) advance(c, s, a float64) {
	x, v := e.x, e.v
	rc, rs := e.rotC, e.rotS
	g := e.gain
	aS, aM, aE := a, a, a
	inv := 1 / float64(2*e.sub)
	for j := 0; j < e.sub; j++ {
		if e.ramping {
			aM = e.ampAt(e.n, float64(2*j+1)*inv)
			aE = e.ampAt(e.n, float64(2*j+2)*inv)
		}
		cm, sm := c*rc-s*rs, s*rc+c*rs
		ce, se := cm*rc-sm*rs, sm*rc+cm*rs
		x, v = e.res.step(x, v, e.dt, g*aS*c, g*aM*cm, g*aE*ce)
		c, s, aS = ce, se, aE
	}
	e.x, e.v = x, v
}

// limitError reports a displacement beyond the stop.
func (e *engine) limitError() error {
	return fmt.Errorf("sim: tip displacement %.4g m at t = %.4f s passed the stop at %.4g m (drive %.4g Hz, amplitude %.4g): %w",
		e.x, float64(e.n)*e.h, e.limitM, e.freq, e.ampAt(e.n, 0), acquire.ErrDisplacementLimit)
}

// fill makes the next block into b (whose buffers must fit): samples, drive
// phase per frame, drive frequency and amplitude at the last frame, and
// FlagOverload when a sample sits at an ADC rail. It sets every field but
// Seq. It returns an error wrapping acquire.ErrDisplacementLimit, leaving
// the block unfinished, if the resonator passes its stop.
func (e *engine) fill(b *acquire.Block) error {
	b.StartS = float64(e.n) / e.rate
	b.RateHz = e.rate
	b.Channels = e.chans
	b.Frames = e.frames
	b.TimeS = nil
	b.Flags = 0
	data := b.Data[:e.frames*e.chans]
	ph := b.PhaseCyc[:e.frames]
	over := false
	a := 0.0
	for i := range ph {
		p := e.phase(e.n)
		ph[i] = p
		s, c := math.Sincos(2 * math.Pi * (p - math.Floor(p)))
		a = e.ampAt(e.n, 0)

		// Common pick-up of this sample instant.
		hum := 0.0
		if e.humV != 0 {
			t := e.humHz * float64(e.n) / e.rate
			hum = e.humV * math.Sin(2*math.Pi*(t-math.Floor(t)))
		}
		y := e.sens*e.x + e.offV + hum
		if e.noiseV != 0 {
			y += e.noiseV * e.rng.NormFloat64()
		}
		if e.hpOn {
			y = e.hp[0].step(y)
		}
		var o bool
		if e.chans == 1 {
			data[i], o = e.conv.convert(y)
			over = over || o
		} else {
			data[2*i], o = e.conv.convert(y)
			over = over || o
			r := e.refSens*a*c + e.refOV + hum
			if e.noiseV != 0 {
				r += e.noiseV * e.rng.NormFloat64()
			}
			if e.hpOn {
				r = e.hp[1].step(r)
			}
			data[2*i+1], o = e.conv.convert(r)
			over = over || o
		}

		e.advance(c, s, a)
		e.n++
		e.endRamp()
		if !(math.Abs(e.x) <= e.limitM) { // also catches NaN
			return e.limitError()
		}
	}
	b.DriveHz, b.DriveAmp = e.freq, a
	if over {
		b.Flags |= acquire.FlagOverload
	}
	return nil
}

// skip advances the drive alone by one block (the resonator and sensor are
// left as they are) and fills b's time, frame count and drive fields; used
// to finish the drive's ramp to zero once the rig has stopped delivering.
func (e *engine) skip(b *acquire.Block) {
	b.StartS = float64(e.n) / e.rate
	b.Frames = e.frames
	a := 0.0
	for range e.frames {
		a = e.ampAt(e.n, 0)
		e.n++
		e.endRamp()
	}
	b.DriveHz, b.DriveAmp = e.freq, a
}
