package soundcard

import (
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/BurntSushi/toml"
)

// TestValidate checks that each bad value is refused with its key, its
// value and what is allowed, and that the defaults pass.
func TestValidate(t *testing.T) {
	if err := DefaultConfig().Validate(); err != nil {
		t.Fatalf("defaults refused: %v", err)
	}
	for _, tc := range []struct {
		name   string
		change func(*Config)
		key    string
		value  string
	}{
		{"rate low", func(c *Config) { c.RateHz = 22050 }, "rate_hz", "22050"},
		{"rate high", func(c *Config) { c.RateHz = 384000 }, "rate_hz", "384000"},
		{"frames", func(c *Config) { c.FramesPerBuffer = 16 }, "frames_per_buffer", "16"},
		{"response", func(c *Config) { c.ResponseChannel = -1 }, "response_channel", "-1"},
		{"reference", func(c *Config) { c.ReferenceChannel = -2 }, "reference_channel", "-2"},
		{"reference same", func(c *Config) { c.ReferenceChannel = c.ResponseChannel }, "reference_channel", "0"},
		{"no outputs", func(c *Config) { c.OutputChannels = nil }, "output_channels", "[]"},
		{"output twice", func(c *Config) { c.OutputChannels = []int{1, 1} }, "output_channels", "[1 1]"},
		{"output high", func(c *Config) { c.OutputChannels = []int{64} }, "output_channels", "[64]"},
		{"level zero", func(c *Config) { c.MaxLevel = 0 }, "max_level", "0"},
		{"level above full scale", func(c *Config) { c.MaxLevel = 1.5 }, "max_level", "1.5"},
		{"ramp short", func(c *Config) { c.Ramp = time.Millisecond }, "ramp", "1ms"},
		{"ramp long", func(c *Config) { c.Ramp = time.Hour }, "ramp", "1h0m0s"},
		{"offset", func(c *Config) { c.OffsetV = 0.2 }, "offset", "0.2"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := DefaultConfig()
			tc.change(&c)
			err := c.Validate()
			var ce *ConfigError
			if !errors.As(err, &ce) || !errors.Is(err, ErrConfig) {
				t.Fatalf("Validate = %v, want a *ConfigError wrapping ErrConfig", err)
			}
			if ce.Key != tc.key || fmt.Sprint(ce.Value) != tc.value || ce.Allowed == "" {
				t.Fatalf("ConfigError %+v, want key %s value %s", ce, tc.key, tc.value)
			}
			if msg := err.Error(); !strings.Contains(msg, tc.key+" = "+tc.value) || !strings.HasPrefix(msg, "soundcard: ") {
				t.Fatalf("message %q does not name %s = %s", msg, tc.key, tc.value)
			}
		})
	}
}

// TestConfigTOML decodes a [soundcard] table with the rig file's decoder
// (BurntSushi/toml): snake_case keys, a device given by index as an
// integer, a ramp as a duration string, nothing left undecoded.
func TestConfigTOML(t *testing.T) {
	const rig = `
[soundcard]
input_device = 3
output_device = "USB Audio"
rate_hz = 96000
frames_per_buffer = 4096
response_channel = 1
reference_channel = 0
output_channels = [0]
max_level = 0.25
ramp = "750ms"
`
	var file struct {
		Soundcard Config `toml:"soundcard"`
	}
	file.Soundcard = DefaultConfig()
	md, err := toml.Decode(rig, &file)
	if err != nil {
		t.Fatal(err)
	}
	if u := md.Undecoded(); len(u) != 0 {
		t.Fatalf("undecoded keys %v", u)
	}
	c := file.Soundcard
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	if i, ok := c.inputDevice().Index(); !ok || i != 3 {
		t.Fatalf("input device %q, want index 3", c.InputDevice)
	}
	if c.outputDevice() != "USB Audio" || c.RateHz != 96000 || c.FramesPerBuffer != 4096 ||
		c.ResponseChannel != 1 || c.ReferenceChannel != 0 || len(c.OutputChannels) != 1 ||
		c.MaxLevel != 0.25 || c.Ramp != 750*time.Millisecond {
		t.Fatalf("decoded %+v", c)
	}
	if c.inputChannels() != 2 || c.outputChannels() != 1 {
		t.Fatalf("stream channels %d in %d out, want 2 and 1", c.inputChannels(), c.outputChannels())
	}
}

// TestPickDevice checks device choice by default, index, exact name and
// unique part of a name, and the errors for a missing device, an
// ambiguous name and too few channels, each listing what there is.
func TestPickDevice(t *testing.T) {
	devs := []Device{
		{Index: 0, Name: "pulse", HostAPI: "ALSA", MaxInputs: 32, MaxOutputs: 32, DefaultRateHz: 44100},
		{Index: 1, Name: "default", HostAPI: "ALSA", MaxInputs: 32, MaxOutputs: 32, DefaultRateHz: 44100, DefaultInput: true, DefaultOutput: true},
		{Index: 2, Name: "USB Audio CODEC: Audio (hw:1,0)", HostAPI: "ALSA", MaxInputs: 2, MaxOutputs: 2, DefaultRateHz: 48000},
		{Index: 3, Name: "USB Audio CODEC: Monitor (hw:1,1)", HostAPI: "ALSA", MaxInputs: 1, MaxOutputs: 0, DefaultRateHz: 48000},
	}
	for _, tc := range []struct {
		name    string
		ref     DeviceRef
		dir     string
		need    int
		want    int    // index, or -1 for an error
		problem string // part of the error
	}{
		{"default in", "", "input", 2, 1, ""},
		{"default out", "", "output", 2, 1, ""},
		{"index", "2", "input", 2, 2, ""},
		{"exact", "pulse", "output", 2, 0, ""},
		{"part", "audio (hw", "input", 1, 2, ""},
		{"missing index", "9", "input", 1, -1, "no device has index 9"},
		{"missing name", "Focusrite", "input", 1, -1, "no device has that name"},
		{"ambiguous", "usb", "input", 1, -1, "give the full name or the index"},
		{"too few", "3", "input", 2, -1, "has 1 input channels, the configuration needs 2"},
		{"no output", "3", "output", 1, -1, "has 0 output channels"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			d, err := pickDevice(devs, tc.ref, tc.dir, tc.need)
			if tc.want >= 0 {
				if err != nil || d.Index != tc.want {
					t.Fatalf("got %d, %v; want %d", d.Index, err, tc.want)
				}
				return
			}
			var de *DeviceError
			if !errors.As(err, &de) || !errors.Is(err, ErrDevice) {
				t.Fatalf("err %v, want a *DeviceError", err)
			}
			msg := err.Error()
			if !strings.Contains(msg, tc.problem) || !strings.Contains(msg, "USB Audio CODEC: Monitor (hw:1,1)") || !strings.Contains(msg, "default in+out") {
				t.Fatalf("message %q lacks %q or the device list", msg, tc.problem)
			}
		})
	}
	if _, err := pickDevice(nil, "", "input", 1); err == nil || !strings.Contains(err.Error(), "no devices at all") {
		t.Fatalf("no devices: %v", err)
	}
}

func ExampleConfig_Validate() {
	c := DefaultConfig()
	c.RateHz = 22050
	fmt.Println(c.Validate())
	c = DefaultConfig()
	c.OffsetV = 0.1
	fmt.Println(c.Validate())
	// Output:
	// soundcard: rate_hz = 22050 is not allowed: a sample rate from 44100 to 192000 Hz (48000 is usual)
	// soundcard: offset = 0.1 is not allowed: 0 only: a sound card output is AC-coupled and cannot hold a DC level; bias the resonator with a DC-coupled amplifier instead
}

func ExampleFormatDevices() {
	fmt.Println(FormatDevices([]Device{
		{Index: 0, Name: "pulse", HostAPI: "ALSA", MaxInputs: 32, MaxOutputs: 32, DefaultRateHz: 44100, RatesHz: []float64{44100, 48000}},
		{Index: 1, Name: "default", HostAPI: "ALSA", MaxInputs: 32, MaxOutputs: 32, DefaultRateHz: 44100, DefaultInput: true, DefaultOutput: true},
	}))
	// Output:
	// index  name                      host  inputs  outputs  default rate  rates accepted
	//   0      pulse                     ALSA  32      32       44100 Hz      44.1k 48k
	//   1      default (default in+out)  ALSA  32      32       44100 Hz      -
}
