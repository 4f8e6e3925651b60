package acquire

import "strings"

// Flags mark conditions that hold for a whole Block.
type Flags uint8

const (
	// FlagGap: samples were lost between the previous block and this one
	// (a dropped serial frame, an audio overflow, a reconnect). No point may
	// be measured across it.
	FlagGap Flags = 1 << iota
	// FlagOverload: at least one sample is at or near the source's full
	// scale, so harmonics read from this block are not to be trusted.
	FlagOverload
	// FlagClockUnknown: the sample times are estimated (from the nominal
	// rate or from timestamps of an unknown clock), not read from a clock
	// shared with the drive.
	FlagClockUnknown
)

// String lists the set flags by name, "ok" when none are set.
func (f Flags) String() string {
	if f == 0 {
		return "ok"
	}
	var parts []string
	if f&FlagGap != 0 {
		parts = append(parts, "gap")
	}
	if f&FlagOverload != 0 {
		parts = append(parts, "overload")
	}
	if f&FlagClockUnknown != 0 {
		parts = append(parts, "clock-unknown")
	}
	return strings.Join(parts, "+")
}

// Block is a run of consecutive sample frames from a source.
//
// Data is interleaved: frame i, channel c is Data[i*Channels+c]. Samples are
// in volts at the source's input (a sound card's ±1 full scale counts as
// volts of 1); the rig's calibration turns volts into the display unit.
type Block struct {
	// Seq counts blocks from 0 for one source; a jump in Seq without
	// FlagGap never happens.
	Seq uint64
	// StartS is the time of the first frame in seconds since the source
	// started.
	StartS float64
	// RateHz is the nominal sample rate in hertz.
	RateHz float64
	// Channels is the number of interleaved channels.
	Channels int
	// Frames is the number of frames in Data.
	Frames int
	// Data holds Frames*Channels samples in volts, interleaved.
	Data []float64
	// TimeS, when not nil, holds each frame's time in seconds since the
	// source started (serial ADCs with timestamps jitter). When nil, frame
	// i is at StartS + i/RateHz.
	TimeS []float64
	// PhaseCyc, when not nil, holds the drive's phase at each frame in
	// cycles, unwrapped (it grows by f/RateHz per frame), read from the
	// tool's own phase accumulator. It is nil when the tool does not know
	// the drive's phase at the sampling instants (an external generator, a
	// drive on another clock); the runner then estimates it by a sine fit.
	PhaseCyc []float64
	// DriveHz and DriveAmp are the drive's frequency (hertz) and amplitude
	// (drive units) at the block's last frame, as the drive actually
	// produced them (during a ramp the amplitude differs from the set
	// value; a new frequency shows up in the first block made after it took
	// effect). Zero when unknown. The drive signal is
	// DriveAmp·cos(2π·PhaseCyc): a lock-in phase of 0 means in phase with it.
	DriveHz  float64
	DriveAmp float64
	// Flags mark gaps, overloads and clock trouble.
	Flags Flags
}

// Frame returns the time in seconds of frame i.
func (b *Block) Frame(i int) float64 {
	if b.TimeS != nil {
		return b.TimeS[i]
	}
	return b.StartS + float64(i)/b.RateHz
}
