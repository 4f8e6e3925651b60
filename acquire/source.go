package acquire

import "context"

// SourceInfo describes a source for the screen and the record.
type SourceInfo struct {
	Kind      string   // "sim", "serial", "soundcard", "replay"
	Name      string   // rig name, port path or device name
	RateHz    float64  // nominal sample rate
	Channels  []string // channel names, in Data order
	FullScale float64  // volts at which a sample counts as overloaded (magnitude)
}

// SourceStats counts a source's troubles since it started.
type SourceStats struct {
	Blocks    uint64 // blocks delivered
	Dropped   uint64 // blocks dropped because the consumer was behind
	Gaps      uint64 // blocks delivered with FlagGap
	Overloads uint64 // blocks delivered with FlagOverload
	Errors    uint64 // frames rejected by the decoder (CRC, unparsable, ...)
	Connected bool   // false while a cable or device is missing
	Detail    string // a short plain-words note on the latest trouble, "" if none
}

// Source delivers blocks of samples.
//
// Start begins acquisition; blocks arrive on Blocks() until ctx ends, Close
// is called, or the source fails for good (then Err says why). Every block
// received must be handed back with Release once the consumer is done with
// it, so its buffers can be reused. Close stops the source, unblocks any
// read, waits for its goroutines and is safe to call twice.
type Source interface {
	Info() SourceInfo
	Start(ctx context.Context) error
	Blocks() <-chan *Block
	Release(b *Block)
	Stats() SourceStats
	Err() error
	Close() error
}

// DriveInfo describes a drive.
type DriveInfo struct {
	Kind   string  // "sim", "soundcard", "manual"
	Unit   string  // drive amplitude unit, e.g. "A" (coil current) or "V"
	MaxAmp float64 // the rig's limit on the drive amplitude
	// Coherent is true when the tool makes the drive itself and sets its
	// frequency exactly, so the runner may choose coherent frequencies and
	// the source fills Block.PhaseCyc.
	Coherent bool
}

// Drive makes the sinusoidal excitation.
//
// Set changes the frequency at once with a continuous phase (a phase
// accumulator, as a DDS generator has) and ramps the amplitude to amp over
// the drive's ramp time, so neither the signal nor the force steps. It
// returns an error wrapping ErrDriveLimit, without changing anything, when
// amp exceeds the limit. Off ramps the amplitude to zero and returns once it
// is there, or when ctx ends. Amp reports the amplitude actually produced
// now (during a ramp it lies between the old and the new value).
type Drive interface {
	Info() DriveInfo
	Set(freqHz, amp float64) error
	Off(ctx context.Context) error
	Amp() float64
}
