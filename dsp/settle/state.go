package settle

// State is what the detector says about the point being measured.
type State int

const (
	// Settling: the transient is still being watched; no decision yet.
	Settling State = iota
	// Settled: the estimated remaining error has stayed below the
	// tolerance for Config.Hold blocks after the minimum dwell.
	Settled
	// Slow: the transient decays with a time constant more than
	// Config.SlowFactor times the expected one, or does not decay at all;
	// a jump may be near. Still watching, as for Settling.
	Slow
	// GaveUp: the maximum dwell was reached before the point settled. The
	// point is to be logged as NOT settled.
	GaveUp
)

// String returns the state in plain words.
func (s State) String() string {
	switch s {
	case Settling:
		return "settling"
	case Settled:
		return "settled"
	case Slow:
		return "slow"
	case GaveUp:
		return "gave up"
	}
	return "unknown"
}

// Symbol returns a one-character ASCII mark for the state, readable without
// colour: "~" settling, "=" settled, "!" slow, "x" gave up, "?" otherwise.
func (s State) Symbol() string {
	switch s {
	case Settling:
		return "~"
	case Settled:
		return "="
	case Slow:
		return "!"
	case GaveUp:
		return "x"
	}
	return "?"
}
