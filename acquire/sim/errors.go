package sim

import (
	"errors"
	"fmt"
)

var (
	// ErrConfig: a Config field is out of range. Validate returns a
	// *ConfigError that wraps it.
	ErrConfig = errors.New("sim: invalid rig configuration")
	// ErrFrequency: a drive frequency is negative, not finite, or at or
	// above half the sample rate.
	ErrFrequency = errors.New("sim: drive frequency out of range")
	// ErrAmplitude: a drive amplitude is negative or not a number. (An
	// amplitude above the limit wraps acquire.ErrDriveLimit instead.)
	ErrAmplitude = errors.New("sim: drive amplitude must be a number ≥ 0")
	// ErrStarted: Start was called twice.
	ErrStarted = errors.New("sim: rig already started")
	// ErrClosed: the rig has been closed or has stopped.
	ErrClosed = errors.New("sim: rig closed")
	// ErrOffInterrupted: Set turned the drive on again while Off was
	// waiting for the amplitude to reach zero.
	ErrOffInterrupted = errors.New("sim: drive set on again before it ramped to zero")
)

// ConfigError names the Config field (by its rig-file key) that is out of
// range, the value it had and what is allowed. It wraps ErrConfig.
type ConfigError struct {
	Field   string // rig-file key, e.g. "natural_hz"
	Value   any    // the value found
	Allowed string // what would be accepted, in plain words
}

func (e *ConfigError) Error() string {
	return fmt.Sprintf("sim: rig setting %s = %v: %s", e.Field, e.Value, e.Allowed)
}

// Unwrap returns ErrConfig.
func (e *ConfigError) Unwrap() error { return ErrConfig }
