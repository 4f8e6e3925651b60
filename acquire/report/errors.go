package report

import "errors"

var (
	// ErrRead: the record file cannot be read (missing, no permission).
	ErrRead = errors.New("report: cannot read the record")
	// ErrNoPoints: the record holds no point with a frequency and an
	// amplitude.
	ErrNoPoints = errors.New("report: the record has no points")
)
