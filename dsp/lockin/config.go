package lockin

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
)

var (
	// ErrConfig: a Config value is out of range; the message names the
	// field, the value and what is accepted.
	ErrConfig = errors.New("lockin: bad configuration")
	// ErrHarmonic: a harmonic is not a positive fraction within the limits
	// MaxNum and MaxDen, or is listed twice.
	ErrHarmonic = errors.New("lockin: bad harmonic")
)

// Mode selects how a LockIn turns demodulated samples into amplitudes.
type Mode int

const (
	// Sync measures over blocks of whole drive cycles: each result is the
	// weighted least-squares fit of the offset and every configured
	// harmonic over exactly Config.Cycles drive cycles. Results come once
	// per block and do not overlap.
	Sync Mode = iota
	// LowPass mixes each harmonic down and smooths it with Order cascaded
	// first-order low-pass stages of time constant TimeConstant, the
	// output filter of a classic lock-in amplifier. A smoothed value is
	// available after every sample.
	LowPass
)

// String returns "sync" or "lowpass".
func (m Mode) String() string {
	switch m {
	case Sync:
		return "sync"
	case LowPass:
		return "lowpass"
	}
	return fmt.Sprintf("Mode(%d)", int(m))
}

// ParseMode reads "sync" or "lowpass" (any letter case).
func ParseMode(s string) (Mode, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "sync":
		return Sync, nil
	case "lowpass":
		return LowPass, nil
	}
	return 0, fmt.Errorf("%w: mode %q (want sync or lowpass)", ErrConfig, s)
}

// MaxOrder is the largest LowPass filter order (number of cascaded
// first-order stages) accepted.
const MaxOrder = 4

// Config sets up a LockIn. The zero values of Harmonics and Channels mean
// Default() and 1.
type Config struct {
	// Harmonics to measure, in the order At and Value index them. Each
	// must be within MaxNum/MaxDen, none may repeat (2/4 repeats 1/2), at
	// most MaxHarmonics. Nil means Default().
	Harmonics []Harmonic
	// Channels is the number of interleaved channels in x; 0 means 1.
	Channels int
	// Mode is Sync (the zero value) or LowPass.
	Mode Mode
	// Cycles is the number of drive cycles per Sync result, at least 1. It
	// is rounded up to a multiple of every harmonic's Den, so a 1/2
	// subharmonic always completes whole cycles of its own.
	Cycles int
	// Order is the number of cascaded first-order stages of the LowPass
	// filter, 1..MaxOrder (6 dB/octave each).
	Order int
	// TimeConstant is the LowPass time constant τ of each stage.
	TimeConstant time.Duration
	// RateHz is the nominal sample rate in hertz, > 0. It gives the frame
	// times when Push is called with t == nil (frame spacing 1/RateHz) and
	// the interval before the first frame in LowPass mode.
	RateHz float64
}

// normalized checks c and returns it with defaults filled in and the
// harmonics reduced to lowest terms (in a fresh slice).
func (c Config) normalized() (Config, error) {
	if c.Harmonics == nil {
		c.Harmonics = Default()
	} else {
		c.Harmonics = append([]Harmonic(nil), c.Harmonics...)
	}
	if len(c.Harmonics) == 0 || len(c.Harmonics) > MaxHarmonics {
		return c, fmt.Errorf("%w: %d harmonics (want 1..%d)", ErrConfig, len(c.Harmonics), MaxHarmonics)
	}
	for i, h := range c.Harmonics {
		if err := h.valid(); err != nil {
			return c, err
		}
		c.Harmonics[i] = h.reduced()
		for _, g := range c.Harmonics[:i] {
			if g == c.Harmonics[i] {
				return c, fmt.Errorf("%w: %v is listed twice", ErrHarmonic, h)
			}
		}
	}
	l := 1
	for _, h := range c.Harmonics {
		l = lcm(l, h.Den)
	}
	if l > MaxLCM {
		return c, fmt.Errorf("%w: the denominators %v have a least common multiple of %d (at most %d)", ErrHarmonic, c.Harmonics, l, MaxLCM)
	}
	if c.Channels == 0 {
		c.Channels = 1
	}
	if c.Channels < 1 || c.Channels > 64 {
		return c, fmt.Errorf("%w: Channels = %d (want 1..64)", ErrConfig, c.Channels)
	}
	if !(c.RateHz > 0) || math.IsInf(c.RateHz, 0) {
		return c, fmt.Errorf("%w: RateHz = %g (want the sample rate in hertz, > 0)", ErrConfig, c.RateHz)
	}
	switch c.Mode {
	case Sync:
		if c.Cycles < 1 || c.Cycles > 1<<20 {
			return c, fmt.Errorf("%w: Cycles = %d (want drive cycles per result, 1..%d)", ErrConfig, c.Cycles, 1<<20)
		}
		c.Cycles = (c.Cycles + l - 1) / l * l
	case LowPass:
		if c.Order < 1 || c.Order > MaxOrder {
			return c, fmt.Errorf("%w: Order = %d (want 1..%d stages)", ErrConfig, c.Order, MaxOrder)
		}
		if c.TimeConstant <= 0 {
			return c, fmt.Errorf("%w: TimeConstant = %v (want > 0)", ErrConfig, c.TimeConstant)
		}
	default:
		return c, fmt.Errorf("%w: Mode = %d (want Sync or LowPass)", ErrConfig, int(c.Mode))
	}
	return c, nil
}
