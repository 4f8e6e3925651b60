package settle

import (
	"errors"
	"fmt"
	"math"
)

// ErrConfig is wrapped by the errors Config.Validate returns.
var ErrConfig = errors.New("settle: bad configuration")

// Config sets the rules of the detector. Zero values of Window, Hold,
// Sigmas and SlowFactor take the defaults given on each field.
type Config struct {
	// Tol is the allowed remaining error relative to the settled
	// amplitude |z∞| (for example 1e-3). 0 means only Floor applies.
	Tol float64
	// Floor is an absolute error floor in signal units (the units of z),
	// for responses near zero where a relative tolerance means nothing.
	// The allowed error is max(Tol·|z∞|, Floor). At least one of Tol and
	// Floor must be positive.
	Floor float64
	// MinBlocks is the minimum dwell in blocks: no point settles earlier.
	MinBlocks int
	// MaxDwellS is the maximum dwell in seconds; after it the detector
	// reports GaveUp. Must be positive.
	MaxDwellS float64
	// ExpectedTauS is the rig's expected envelope time constant in
	// seconds, τ = Q/(π f0) = 1/(ζω0); 0 means unknown. When known it is
	// used as the slowest decay assumed while the data show none, as the
	// bound below which no decay estimate is believed (a linear resonator,
	// and a Duffing resonator away from a fold, never decays faster), and
	// as the reference for Slow.
	ExpectedTauS float64
	// SlowFactor: Slow is reported when the estimated time constant
	// exceeds SlowFactor·ExpectedTauS. Default 3.
	SlowFactor float64
	// Window is the number of most recent blocks the fit uses (the ring
	// buffer size). Default 64, minimum 16. Choose the block (M drive
	// cycles) so that the expected τ spans 4 to Window/2 blocks: the
	// acceptance test covers 4 to 32 blocks with the default window.
	// Longer blocks also average the noise down; the detector is meant
	// for block noise up to about a third of the allowed error.
	Window int
	// Hold is the number of consecutive blocks the settled test must pass
	// before Settled is reported. Default 3.
	Hold int
	// Sigmas is the number of standard errors added to the estimated
	// remaining error before it is compared with the tolerance. Default 4.
	Sigmas float64
}

// Defaults for the zero-valued fields of Config.
const (
	DefaultSlowFactor = 3
	DefaultWindow     = 64
	DefaultHold       = 3
	DefaultSigmas     = 4
	minWindow         = 16
)

// DefaultConfig returns a configuration for a 0.1 % tolerance: Tol 1e-3,
// MinBlocks 8, MaxDwellS 60, unknown expected τ and the field defaults.
func DefaultConfig() Config {
	return Config{
		Tol:        1e-3,
		MinBlocks:  8,
		MaxDwellS:  60,
		SlowFactor: DefaultSlowFactor,
		Window:     DefaultWindow,
		Hold:       DefaultHold,
		Sigmas:     DefaultSigmas,
	}
}

// withDefaults returns c with its zero-valued optional fields filled in.
func (c Config) withDefaults() Config {
	if c.SlowFactor == 0 {
		c.SlowFactor = DefaultSlowFactor
	}
	if c.Window == 0 {
		c.Window = DefaultWindow
	}
	if c.Hold == 0 {
		c.Hold = DefaultHold
	}
	if c.Sigmas == 0 {
		c.Sigmas = DefaultSigmas
	}
	return c
}

// Validate reports the first field of c (after defaults) that cannot be
// used, wrapping ErrConfig.
func (c Config) Validate() error {
	c = c.withDefaults()
	bad := func(field string, v any, want string) error {
		return fmt.Errorf("%w: %s = %v, want %s", ErrConfig, field, v, want)
	}
	switch {
	case !(c.Tol >= 0) || math.IsInf(c.Tol, 0):
		return bad("Tol", c.Tol, "a finite value >= 0 (e.g. 1e-3)")
	case !(c.Floor >= 0) || math.IsInf(c.Floor, 0):
		return bad("Floor", c.Floor, "a finite value >= 0")
	case c.Tol == 0 && c.Floor == 0:
		return bad("Tol and Floor", 0, "at least one of them > 0")
	case c.MinBlocks < 0:
		return bad("MinBlocks", c.MinBlocks, ">= 0")
	case !(c.MaxDwellS > 0) || math.IsInf(c.MaxDwellS, 0):
		return bad("MaxDwellS", c.MaxDwellS, "a finite number of seconds > 0")
	case !(c.ExpectedTauS >= 0) || math.IsInf(c.ExpectedTauS, 0):
		return bad("ExpectedTauS", c.ExpectedTauS, "seconds >= 0 (0 = unknown)")
	case !(c.SlowFactor > 1) || math.IsInf(c.SlowFactor, 0):
		return bad("SlowFactor", c.SlowFactor, "a finite value > 1 (e.g. 3)")
	case c.Window < minWindow:
		return bad("Window", c.Window, fmt.Sprintf(">= %d blocks", minWindow))
	case c.Hold < 1:
		return bad("Hold", c.Hold, ">= 1")
	case !(c.Sigmas > 0) || math.IsInf(c.Sigmas, 0):
		return bad("Sigmas", c.Sigmas, "a finite value > 0 (e.g. 4)")
	}
	return nil
}
