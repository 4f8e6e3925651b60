package serialadc

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"
	"time"
)

// ErrConfig is wrapped by every ConfigError.
var ErrConfig = errors.New("serialadc: bad serial config")

// ConfigError names a bad key of the [serial] table, its value and what is
// allowed.
type ConfigError struct {
	Key     string // the TOML key, e.g. "format" or "calibration.resp.gain"
	Value   string // the value found, as written
	Allowed string // what would be accepted
}

// Error says which key is wrong, with which value, and what to write.
func (e *ConfigError) Error() string {
	return fmt.Sprintf("serialadc: serial %s = %s is not allowed: %s", e.Key, e.Value, e.Allowed)
}

// Unwrap returns ErrConfig.
func (e *ConfigError) Unwrap() error { return ErrConfig }

// Defaults applied to zero values of Config.
const (
	DefaultBaud         = 115200
	DefaultBlockFrames  = 256
	DefaultStallTimeout = 2 * time.Second
)

// Formats, value kinds and sensor kinds accepted by Config.
const (
	FormatText   = "text"
	FormatBinary = "binary"

	ValuesCounts = "counts"
	ValuesVolts  = "volts"

	SensorDisplacement = "displacement"
	SensorVelocity     = "velocity"
	SensorAcceleration = "acceleration"
)

// Config describes a serial ADC. It is the [serial] table of a rig file.
// Zero values take the defaults named on each field.
type Config struct {
	// Port is the device path, e.g. "/dev/ttyACM0", "/dev/ttyUSB0", a
	// pseudo-terminal such as "/dev/pts/3", or a symlink to one.
	Port string `toml:"port"`
	// Baud is the line speed in bits per second (default 115200).
	Baud int `toml:"baud"`
	// Format is "text" or "binary"; see the package documentation.
	Format string `toml:"format"`
	// Channels names the channels in the order the device sends them
	// (1 to 16 names; letters, digits, '_', '-' or '.', starting with a
	// letter or '_'). Blocks carry them in this order.
	Channels []string `toml:"channels"`
	// Response names the channel carrying the resonator's response (default:
	// the first channel).
	Response string `toml:"response"`
	// Reference names the channel carrying the drive, if one is wired ("" for none).
	Reference string `toml:"reference"`
	// RateHz is the frame rate in hertz. Needed unless the format is text
	// with timestamps, where it is estimated when left 0.
	RateHz float64 `toml:"rate_hz"`
	// Timestamps says text lines start with a microsecond timestamp (text only).
	Timestamps bool `toml:"timestamps"`
	// Values is "counts" (default: integer ADC readings) or "volts" (decimal
	// volts, text only).
	Values string `toml:"values"`
	// CountsMin and CountsMax are the ADC's rails in counts (e.g. 0 and 1023
	// for a 10-bit ADC); a sample at or beyond them is an overload. Needed
	// with values = "counts".
	CountsMin int64 `toml:"counts_min"`
	CountsMax int64 `toml:"counts_max"`
	// VoltsMin and VoltsMax are the rails in volts with values = "volts".
	VoltsMin float64 `toml:"volts_min"`
	VoltsMax float64 `toml:"volts_max"`
	// Calibration maps a channel name to its counts → volts calibration.
	// With values = "counts" every channel needs one.
	Calibration map[string]Calibration `toml:"calibration"`
	// BlockFrames is the number of frames per block (default 256, at most 65536).
	BlockFrames int `toml:"block_frames"`
	// Sensor is what the response channel measures: "displacement"
	// (default), "velocity" or "acceleration". Carried for the rig's
	// calibration; this package does not use it.
	Sensor string `toml:"sensor"`
	// StallTimeout is how long without a byte counts as a lost connection
	// (default 2 s, at least 10 ms).
	StallTimeout time.Duration `toml:"stall_timeout"`
}

// Calibration turns a channel's raw value (counts, or volts read as text)
// into volts: either volts = Gain·value + Offset, or a Table of points
// interpolated linearly, extrapolated along the end segments.
type Calibration struct {
	Gain   float64    `toml:"gain"`   // volts per count
	Offset float64    `toml:"offset"` // volts at a raw value of 0
	Table  []CalPoint `toml:"table"`  // at least 2 points, counts strictly increasing
}

// CalPoint is one point of a calibration table.
type CalPoint struct {
	Counts float64 `toml:"counts"`
	Volts  float64 `toml:"volts"`
}

// Volts returns the calibrated value of raw: Gain·raw + Offset, or with a
// table the straight line through the two neighbouring points
// (v = v_k + (raw − c_k)·(v_{k+1} − v_k)/(c_{k+1} − c_k)), using the first
// or last segment beyond the ends. A zero Calibration returns raw.
func (c *Calibration) Volts(raw float64) float64 {
	t := c.Table
	if len(t) < 2 {
		if c.Gain == 0 && c.Offset == 0 {
			return raw
		}
		return c.Gain*raw + c.Offset
	}
	// k: the segment [t[k], t[k+1]] holding raw, clamped to the end segments
	lo, hi := 0, len(t)-1
	for hi-lo > 1 {
		mid := (lo + hi) / 2
		if raw < t[mid].Counts {
			hi = mid
		} else {
			lo = mid
		}
	}
	a, b := t[lo], t[lo+1]
	return a.Volts + (raw-a.Counts)*(b.Volts-a.Volts)/(b.Counts-a.Counts)
}

// isZero reports an empty calibration.
func (c *Calibration) isZero() bool {
	return c.Gain == 0 && c.Offset == 0 && len(c.Table) == 0
}

// WithDefaults returns c with zero values replaced by the defaults.
func (c Config) WithDefaults() Config {
	if c.Baud == 0 {
		c.Baud = DefaultBaud
	}
	if c.Values == "" {
		c.Values = ValuesCounts
	}
	if c.Response == "" && len(c.Channels) > 0 {
		c.Response = c.Channels[0]
	}
	if c.BlockFrames == 0 {
		c.BlockFrames = DefaultBlockFrames
	}
	if c.Sensor == "" {
		c.Sensor = SensorDisplacement
	}
	if c.StallTimeout == 0 {
		c.StallTimeout = DefaultStallTimeout
	}
	return c
}

func bad(key string, value any, allowed string) error {
	return &ConfigError{Key: key, Value: fmt.Sprintf("%#v", value), Allowed: allowed}
}

func validName(s string) bool {
	if s == "" || !isNameStart(s[0]) {
		return false
	}
	for i := 0; i < len(s); i++ {
		c := s[i]
		if !(isNameStart(c) || (c >= '0' && c <= '9') || c == '-' || c == '.') {
			return false
		}
	}
	return true
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// Validate checks the config after applying the defaults and returns a
// *ConfigError (wrapping ErrConfig) for the first bad key.
func (c Config) Validate() error {
	c = c.WithDefaults()
	if strings.TrimSpace(c.Port) == "" {
		return bad("port", c.Port, `a device path such as "/dev/ttyACM0" (see the list of ports), a pseudo-terminal or a symlink`)
	}
	if c.Baud < 0 || c.Baud > 4_000_000 {
		return bad("baud", c.Baud, "a line speed in bits per second from 1 to 4000000, e.g. 115200 (0 means 115200)")
	}
	if c.Format != FormatText && c.Format != FormatBinary {
		return bad("format", c.Format, `"text" or "binary"`)
	}
	if len(c.Channels) < 1 || len(c.Channels) > MaxChannels {
		return bad("channels", c.Channels, fmt.Sprintf("1 to %d channel names, e.g. [\"resp\", \"ref\"]", MaxChannels))
	}
	seen := make(map[string]bool, len(c.Channels))
	for _, name := range c.Channels {
		if !validName(name) {
			return bad("channels", name, "a name of letters, digits, '_', '-' or '.', starting with a letter or '_'")
		}
		if seen[name] {
			return bad("channels", name, "each channel name once")
		}
		seen[name] = true
	}
	if !seen[c.Response] {
		return bad("response", c.Response, fmt.Sprintf("one of the channel names %q", c.Channels))
	}
	if c.Reference != "" && (!seen[c.Reference] || c.Reference == c.Response) {
		return bad("reference", c.Reference, fmt.Sprintf("\"\" (none) or one of the channel names %q other than the response", c.Channels))
	}
	if c.Timestamps && c.Format != FormatText {
		return bad("timestamps", c.Timestamps, "false with format = \"binary\" (binary packets carry a sequence counter instead)")
	}
	if !finite(c.RateHz) || c.RateHz < 0 || c.RateHz > 1e6 {
		return bad("rate_hz", c.RateHz, "a frame rate in hertz from 0 to 1e6")
	}
	if c.RateHz == 0 && !(c.Format == FormatText && c.Timestamps) {
		return bad("rate_hz", c.RateHz, "the frame rate in hertz (it may be left out only for text with timestamps = true)")
	}
	switch c.Values {
	case ValuesCounts:
		if c.CountsMin >= c.CountsMax {
			return bad("counts_max", c.CountsMax, fmt.Sprintf("the ADC's top count, above counts_min = %d (e.g. counts_min = 0, counts_max = 1023 for a 10-bit ADC)", c.CountsMin))
		}
		if c.CountsMin < math.MinInt32 || c.CountsMax > math.MaxInt32 {
			return bad("counts_min", c.CountsMin, "a count range within 32-bit signed integers")
		}
	case ValuesVolts:
		if c.Format != FormatText {
			return bad("values", c.Values, `"counts" with format = "binary"`)
		}
		if !finite(c.VoltsMin) || !finite(c.VoltsMax) || c.VoltsMin >= c.VoltsMax {
			return bad("volts_max", c.VoltsMax, fmt.Sprintf("the ADC's top in volts, above volts_min = %g (e.g. 0 and 5)", c.VoltsMin))
		}
	default:
		return bad("values", c.Values, `"counts" (integer ADC readings) or "volts" (decimal volts, text only)`)
	}
	names := make([]string, 0, len(c.Calibration))
	for name := range c.Calibration {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		if !seen[name] {
			return bad("calibration."+name, name, fmt.Sprintf("a calibration for one of the channel names %q", c.Channels))
		}
		cal := c.Calibration[name]
		if err := cal.validate("calibration." + name); err != nil {
			return err
		}
	}
	if c.Values == ValuesCounts {
		for _, name := range c.Channels {
			cal, ok := c.Calibration[name]
			if !ok || cal.isZero() {
				return bad("calibration."+name, "(missing)", "a gain in volts per count (and an offset), or a table of {counts, volts} points, for every channel when values = \"counts\"")
			}
		}
	}
	if c.BlockFrames < 1 || c.BlockFrames > 1<<16 {
		return bad("block_frames", c.BlockFrames, "1 to 65536 frames per block (0 means 256)")
	}
	switch c.Sensor {
	case SensorDisplacement, SensorVelocity, SensorAcceleration:
	default:
		return bad("sensor", c.Sensor, `"displacement", "velocity" or "acceleration"`)
	}
	if c.StallTimeout < 10*time.Millisecond {
		return bad("stall_timeout", c.StallTimeout.String(), `a duration of at least 10ms, e.g. "2s" (0 means 2s)`)
	}
	return nil
}

func (cal *Calibration) validate(key string) error {
	if len(cal.Table) > 0 {
		if cal.Gain != 0 || cal.Offset != 0 {
			return bad(key+".table", len(cal.Table), "either a table or gain and offset, not both")
		}
		if len(cal.Table) < 2 {
			return bad(key+".table", len(cal.Table), "at least 2 points {counts = …, volts = …}")
		}
		for i, p := range cal.Table {
			if !finite(p.Counts) || !finite(p.Volts) {
				return bad(fmt.Sprintf("%s.table[%d]", key, i), p, "finite counts and volts")
			}
			if i > 0 && p.Counts <= cal.Table[i-1].Counts {
				return bad(fmt.Sprintf("%s.table[%d].counts", key, i), p.Counts, fmt.Sprintf("counts strictly above the previous point's %g", cal.Table[i-1].Counts))
			}
		}
		return nil
	}
	if !finite(cal.Gain) || cal.Gain == 0 {
		return bad(key+".gain", cal.Gain, "a finite, non-zero gain in volts per count")
	}
	if !finite(cal.Offset) {
		return bad(key+".offset", cal.Offset, "a finite offset in volts")
	}
	return nil
}

// index returns the position of name in Channels, -1 if absent.
func (c *Config) index(name string) int {
	for i, n := range c.Channels {
		if n == name {
			return i
		}
	}
	return -1
}
