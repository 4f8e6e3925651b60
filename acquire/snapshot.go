package acquire

import (
	"github.com/sweeplock/sweeplock/dsp/settle"
)

// Mode says who moves the drive.
type Mode int

const (
	// ModeManual: the user steps the drive.
	ModeManual Mode = iota
	// ModeSweep: the plan is running.
	ModeSweep
	// ModePaused: the plan is paused; it resumes at the point it left.
	ModePaused
	// ModeDone: the plan finished or was stopped; the drive holds or is off.
	ModeDone
)

// String returns a plain name.
func (m Mode) String() string {
	switch m {
	case ModeManual:
		return "manual"
	case ModeSweep:
		return "sweeping"
	case ModePaused:
		return "paused"
	case ModeDone:
		return "finished"
	}
	return "?"
}

// Phase of the current point.
type PointPhase int

const (
	// PhaseOff: the drive is off.
	PhaseOff PointPhase = iota
	// PhaseChanging: a new setting was asked for and has not reached the
	// samples yet.
	PhaseChanging
	// PhaseSettling: waiting for the transient to die.
	PhaseSettling
	// PhaseMeasuring: settled (or given up) and measuring over whole cycles.
	PhaseMeasuring
	// PhaseHolding: settled and not logging; the readout stays live.
	PhaseHolding
)

// String returns a plain name.
func (p PointPhase) String() string {
	switch p {
	case PhaseOff:
		return "drive off"
	case PhaseChanging:
		return "changing"
	case PhaseSettling:
		return "settling"
	case PhaseMeasuring:
		return "measuring"
	case PhaseHolding:
		return "holding"
	}
	return "?"
}

// Snapshot is the bench's state at one moment, handed to the screen at
// display rate. Slices in it are either fresh copies or append-only shares
// (Points, Jumps) that the bench never rewrites: read, do not modify.
type Snapshot struct {
	TimeS  float64 // source time of the latest block
	Source SourceInfo
	Stats  SourceStats
	// SweepStats are the source's counts when the plan ran to its end
	// (zero until then): what the sweep's points were measured under.
	SweepStats SourceStats
	Drive      DriveInfo

	DriveOn    bool
	FreqHz     float64 // drive frequency set now
	AmpSet     float64 // drive amplitude set
	AmpNow     float64 // drive amplitude actually produced (ramps)
	StepHz     float64
	LimitAmp   float64
	LimitDisp  float64 // display units, 0 = none
	Mode       Mode
	Direction  Direction // of the running or last sweep leg (Manual otherwise)
	PlanDone   int
	PlanTotal  int
	AutoLog    bool
	NextNote   string
	Phase      PointPhase
	Settle     settle.Status
	SinceSetS  float64 // seconds since the current setting reached the samples
	Harmonics  []string
	Unit       string
	Amp        []float64 // live, per harmonic, display unit peak
	PhaseDeg   []float64 // live, per harmonic
	THD        float64   // fraction
	Noise      float64   // display unit per √Hz (latest estimate)
	ThirdPct   float64   // third harmonic ratio in %
	ThirdFlag  bool
	ThirdLimit float64 // % above which ThirdFlag is raised

	Trend   []float64 // fundamental amplitude, one per settle block, oldest first
	TrendDt float64   // seconds between trend values

	Wave     []float64 // response over the last few cycles, display units
	WaveDt   float64   // seconds between Wave samples
	Spectrum []float64 // peak amplitude spectrum of the response, display units
	BinHz    float64

	Points     []Point
	Jumps      []JumpJSON
	BandLoHz   float64
	BandHiHz   float64
	RecordPath string
	Messages   []string // newest last
	Err        string   // the latest error in plain words, "" if none
	Finished   bool     // the bench has stopped for good
}
