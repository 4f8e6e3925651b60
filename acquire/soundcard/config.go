package soundcard

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// Limits on the configuration, checked by Config.Validate.
const (
	MinRateHz          = 44100  // lowest sample rate accepted, hertz
	MaxRateHz          = 192000 // highest sample rate accepted, hertz
	MinFramesPerBuffer = 64     // smallest buffer, frames
	MaxFramesPerBuffer = 16384  // largest buffer, frames
	MaxChannel         = 63     // highest channel index accepted (0-based)
	MinRamp            = 5 * time.Millisecond
	MaxRamp            = 60 * time.Second
	MaxLatency         = 2 * time.Second
)

// DeviceRef names a PortAudio device by name or by index.
//
// "" means the system's default device. A value of decimal digits only is an
// index as ListDevices reports it; anything else is a name, matched first
// exactly and then, when one device alone contains it, as a case-insensitive
// part of the name. In a rig file both device = "pulse" and device = 3 work.
type DeviceRef string

// UnmarshalText accepts a name or an index (the TOML decoder passes an
// integer as its decimal text).
func (d *DeviceRef) UnmarshalText(b []byte) error {
	*d = DeviceRef(strings.TrimSpace(string(b)))
	return nil
}

// Index reports the device index and true when d is all decimal digits.
func (d DeviceRef) Index() (int, bool) {
	s := string(d)
	if s == "" {
		return 0, false
	}
	for _, r := range s {
		if r < '0' || r > '9' {
			return 0, false
		}
	}
	i, err := strconv.Atoi(s)
	if err != nil {
		return 0, false
	}
	return i, true
}

// Config is the [soundcard] table of a rig file.
//
// The drive is written to every channel in OutputChannels; the response is
// read from input ResponseChannel and, when ReferenceChannel is not -1, the
// reference (the drive itself, wired back to a second input) from
// ReferenceChannel. Levels are in full-scale units: ±1 is the card's full
// scale, counted as volts of 1 (acquire.Block).
type Config struct {
	// Device selects the device for both directions; InputDevice and
	// OutputDevice, when not empty, override it for one direction.
	Device       DeviceRef `toml:"device"`
	InputDevice  DeviceRef `toml:"input_device"`
	OutputDevice DeviceRef `toml:"output_device"`
	// RateHz is the sample rate in hertz, MinRateHz to MaxRateHz.
	RateHz float64 `toml:"rate_hz"`
	// FramesPerBuffer is the number of frames per audio callback and per
	// Block. Large buffers (2048 at 48 kHz) survive a busy machine; with
	// small ones a sound server drops audio.
	FramesPerBuffer int `toml:"frames_per_buffer"`
	// Latency is the buffering asked of the sound system in each
	// direction (PortAudio's suggested latency); 0 takes the device's
	// own high-latency default. Through a sound server on a busy machine
	// short buffers underrun and the server drops or repeats audio without
	// telling PortAudio; half a second holds. A stepped sweep does not mind
	// the delay.
	Latency time.Duration `toml:"latency"`
	// ResponseChannel is the 0-based input channel of the sensor.
	ResponseChannel int `toml:"response_channel"`
	// ReferenceChannel is the 0-based input channel carrying the drive back,
	// or -1 for none.
	ReferenceChannel int `toml:"reference_channel"`
	// OutputChannels are the 0-based output channels that carry the drive;
	// the other output channels of the device stay silent.
	OutputChannels []int `toml:"output_channels"`
	// MaxLevel is the drive's amplitude limit in full-scale units
	// (0 < MaxLevel ≤ 1). Set refuses more, and the generator clamps at it.
	MaxLevel float64 `toml:"max_level"`
	// Ramp is the time every amplitude change takes (raised cosine).
	Ramp time.Duration `toml:"ramp"`
	// OffsetV is a DC offset request. It must be 0: a sound card output is
	// AC-coupled and the drive has no DC term.
	OffsetV float64 `toml:"offset"`
}

// DefaultConfig returns the configuration used when a rig file says
// nothing: default devices, 48 kHz, 2048-frame buffers, 500 ms of
// buffering, response on input 0, reference on input 1, the drive on
// outputs 0 and 1, a level limit of 0.5 and a 200 ms ramp.
func DefaultConfig() Config {
	return Config{
		RateHz:           48000,
		FramesPerBuffer:  2048,
		Latency:          500 * time.Millisecond,
		ResponseChannel:  0,
		ReferenceChannel: 1,
		OutputChannels:   []int{0, 1},
		MaxLevel:         0.5,
		Ramp:             200 * time.Millisecond,
	}
}

// ConfigError is a bad value in Config: which key, its value, and what is
// allowed. It wraps ErrConfig.
type ConfigError struct {
	Key     string // the TOML key, e.g. "rate_hz"
	Value   any    // the value found
	Allowed string // what would be accepted, in plain words
}

func (e *ConfigError) Error() string {
	return fmt.Sprintf("soundcard: %s = %v is not allowed: %s", e.Key, e.Value, e.Allowed)
}

// Unwrap returns ErrConfig.
func (e *ConfigError) Unwrap() error { return ErrConfig }

// Validate checks every field and returns a *ConfigError for the first bad
// one, nil when all are good.
func (c Config) Validate() error {
	bad := func(key string, v any, allowed string) error {
		return &ConfigError{Key: key, Value: v, Allowed: allowed}
	}
	if math.IsNaN(c.RateHz) || c.RateHz < MinRateHz || c.RateHz > MaxRateHz {
		return bad("rate_hz", c.RateHz, fmt.Sprintf("a sample rate from %d to %d Hz (48000 is usual)", MinRateHz, MaxRateHz))
	}
	if c.FramesPerBuffer < MinFramesPerBuffer || c.FramesPerBuffer > MaxFramesPerBuffer {
		return bad("frames_per_buffer", c.FramesPerBuffer, fmt.Sprintf("%d to %d frames (2048 is safe on a busy machine)", MinFramesPerBuffer, MaxFramesPerBuffer))
	}
	if c.Latency < 0 || c.Latency > MaxLatency {
		return bad("latency", c.Latency, fmt.Sprintf("0 (the device's default) up to %v; 500ms holds on a busy machine", MaxLatency))
	}
	if c.ResponseChannel < 0 || c.ResponseChannel > MaxChannel {
		return bad("response_channel", c.ResponseChannel, fmt.Sprintf("an input channel index from 0 to %d (0-based)", MaxChannel))
	}
	if c.ReferenceChannel < -1 || c.ReferenceChannel > MaxChannel {
		return bad("reference_channel", c.ReferenceChannel, fmt.Sprintf("an input channel index from 0 to %d (0-based), or -1 for no reference", MaxChannel))
	}
	if c.ReferenceChannel == c.ResponseChannel {
		return bad("reference_channel", c.ReferenceChannel, "an input channel other than response_channel, or -1 for no reference")
	}
	if len(c.OutputChannels) == 0 {
		return bad("output_channels", c.OutputChannels, "a list of one or more output channel indices, e.g. [0] or [0, 1]")
	}
	seen := map[int]bool{}
	for _, ch := range c.OutputChannels {
		if ch < 0 || ch > MaxChannel {
			return bad("output_channels", c.OutputChannels, fmt.Sprintf("output channel indices from 0 to %d (0-based)", MaxChannel))
		}
		if seen[ch] {
			return bad("output_channels", c.OutputChannels, "each output channel at most once")
		}
		seen[ch] = true
	}
	if math.IsNaN(c.MaxLevel) || c.MaxLevel <= 0 || c.MaxLevel > 1 {
		return bad("max_level", c.MaxLevel, "an amplitude above 0 and at most 1 (the card's full scale)")
	}
	if c.Ramp < MinRamp || c.Ramp > MaxRamp {
		return bad("ramp", c.Ramp, fmt.Sprintf("a ramp time from %v to %v (a shorter ramp clicks and kicks the resonator)", MinRamp, MaxRamp))
	}
	if c.OffsetV != 0 || math.IsNaN(c.OffsetV) {
		return bad("offset", c.OffsetV, "0 only: a sound card output is AC-coupled and cannot hold a DC level; bias the resonator with a DC-coupled amplifier instead")
	}
	return nil
}

// inputDevice and outputDevice resolve the per-direction overrides.
func (c Config) inputDevice() DeviceRef {
	if c.InputDevice != "" {
		return c.InputDevice
	}
	return c.Device
}

func (c Config) outputDevice() DeviceRef {
	if c.OutputDevice != "" {
		return c.OutputDevice
	}
	return c.Device
}

// inputChannels is the number of input channels the stream must open.
func (c Config) inputChannels() int {
	return max(c.ResponseChannel, c.ReferenceChannel) + 1
}

// outputChannels is the number of output channels the stream must open.
func (c Config) outputChannels() int {
	n := 0
	for _, ch := range c.OutputChannels {
		n = max(n, ch+1)
	}
	return n
}

// Options are run-time choices that do not belong in a rig file.
type Options struct {
	// QueueBlocks is how many blocks may wait for the consumer before the
	// callback drops one; 0 means 16 (at 48 kHz and 2048 frames, 0.7 s).
	QueueBlocks int
	// Stall is how long the callbacks may stop before the card counts as
	// disconnected; 0 means 10 buffers or 1 s, whichever is longer.
	Stall time.Duration
	// StartGrace is how long the first callback may take after the stream
	// starts (a sound server can take a second or two); 0 means 10 s.
	StartGrace time.Duration
}

func (o Options) withDefaults(cfg Config) Options {
	if o.QueueBlocks <= 0 {
		o.QueueBlocks = 16
	}
	if o.Stall <= 0 {
		buf := time.Duration(float64(time.Second) * float64(cfg.FramesPerBuffer) / cfg.RateHz)
		o.Stall = max(time.Second, 10*buf)
	}
	if o.StartGrace <= 0 {
		o.StartGrace = 10 * time.Second
	}
	return o
}
