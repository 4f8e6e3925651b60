package duffing

import "errors"

var (
	// ErrParams: a model parameter is out of its domain (F0Hz ≤ 0, Zeta ≤ 0,
	// Force < 0, or a value that is not finite).
	ErrParams = errors.New("duffing: model parameters out of range")
	// ErrNoSettled: the record holds no settled point to fit.
	ErrNoSettled = errors.New("duffing: no settled points to fit")
	// ErrTooFewPoints: fewer settled points than the fit needs.
	ErrTooFewPoints = errors.New("duffing: too few settled points to fit")
	// ErrFewNearPeak: too few settled points around the resonance peak to
	// pin its width and height.
	ErrFewNearPeak = errors.New("duffing: too few settled points near the peak")
	// ErrBadPoint: a point has a frequency or amplitude that is not a
	// positive finite number.
	ErrBadPoint = errors.New("duffing: point with an invalid frequency or amplitude")
	// ErrNoFit: no starting guess gave a model that reaches the data.
	ErrNoFit = errors.New("duffing: fit found no model that reaches the data")
)
