package soundcard

import "errors"

var (
	// ErrNotBuilt: this binary has no sound card support.
	ErrNotBuilt = errors.New("soundcard: this binary was built without sound card support; " +
		"to build it with PortAudio: apt-get install portaudio19-dev, then go build -tags portaudio ./cmd/sweeplock")
	// ErrConfig: a value in the [soundcard] table is not allowed (see ConfigError).
	ErrConfig = errors.New("soundcard: bad configuration")
	// ErrDevice: the device asked for is missing or cannot do what the
	// configuration needs (see DeviceError).
	ErrDevice = errors.New("soundcard: device cannot be used")
	// ErrClosed: the card was closed.
	ErrClosed = errors.New("soundcard: card is closed")
	// ErrNoDC: a DC offset was asked of a sound card output, which is
	// AC-coupled; the drive has no DC term.
	ErrNoDC = errors.New("soundcard: a sound card output is AC-coupled and cannot hold a DC offset; the drive has no DC term")
	// ErrStuck: the audio stream did not stop when closed (its thread hangs
	// in the sound library, typically after the sound server died).
	ErrStuck = errors.New("soundcard: the audio stream did not stop")
	// ErrFreq: a drive frequency outside (0, rate/2).
	ErrFreq = errors.New("soundcard: drive frequency out of range")
)

// DeviceError says which device could not be used, why, and what there is.
// It wraps ErrDevice.
type DeviceError struct {
	Dir       string   // "input" or "output"
	Asked     string   // the device reference as configured ("" for the default)
	Problem   string   // what is wrong, in plain words
	Available []Device // the devices there are, to choose from
}

func (e *DeviceError) Error() string {
	asked := e.Asked
	if asked == "" {
		asked = "(system default)"
	}
	s := "soundcard: " + e.Dir + " device " + asked + ": " + e.Problem
	if len(e.Available) == 0 {
		return s + "; PortAudio lists no devices at all (is a sound server running?)"
	}
	return s + "; devices available:\n" + FormatDevices(e.Available)
}

// Unwrap returns ErrDevice.
func (e *DeviceError) Unwrap() error { return ErrDevice }
