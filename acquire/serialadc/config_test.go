package serialadc

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"github.com/BurntSushi/toml"
	"go.bug.st/serial/enumerator"
	"gonum.org/v1/gonum/interp"
)

// goodConfig is a valid binary config; tests change one key at a time.
func goodConfig() Config {
	return Config{
		Port:      "/dev/ttyACM0",
		Format:    FormatBinary,
		Channels:  []string{"resp", "ref"},
		Reference: "ref",
		RateHz:    2000,
		CountsMin: 0,
		CountsMax: 1023,
		Calibration: map[string]Calibration{
			"resp": {Gain: 5.0 / 1024},
			"ref":  {Table: []CalPoint{{0, 0}, {1023, 5}}},
		},
	}
}

func TestConfigValidate(t *testing.T) {
	cases := []struct {
		name string
		edit func(c *Config)
		key  string // "" means valid
	}{
		{"good", func(c *Config) {}, ""},
		{"text with timestamps needs no rate", func(c *Config) { c.Format = FormatText; c.Timestamps = true; c.RateHz = 0 }, ""},
		{"volts without calibration", func(c *Config) {
			c.Format = FormatText
			c.Values = ValuesVolts
			c.VoltsMin, c.VoltsMax = 0, 5
			c.Calibration = nil
		}, ""},
		{"no port", func(c *Config) { c.Port = " " }, "port"},
		{"negative baud", func(c *Config) { c.Baud = -9600 }, "baud"},
		{"unknown format", func(c *Config) { c.Format = "csv" }, "format"},
		{"no channels", func(c *Config) { c.Channels = nil }, "channels"},
		{"17 channels", func(c *Config) { c.Channels = strings.Split("abcdefghijklmnopq", "") }, "channels"},
		{"channel name starting with a digit", func(c *Config) { c.Channels = []string{"1st", "ref"} }, "channels"},
		{"channel named twice", func(c *Config) { c.Channels = []string{"ref", "ref"}; c.Response = "ref"; c.Reference = "" }, "channels"},
		{"response not a channel", func(c *Config) { c.Response = "force" }, "response"},
		{"reference equals response", func(c *Config) { c.Reference = "resp" }, "reference"},
		{"reference not a channel", func(c *Config) { c.Reference = "drive" }, "reference"},
		{"timestamps with binary", func(c *Config) { c.Timestamps = true }, "timestamps"},
		{"no rate for binary", func(c *Config) { c.RateHz = 0 }, "rate_hz"},
		{"no rate for text without timestamps", func(c *Config) { c.Format = FormatText; c.RateHz = 0 }, "rate_hz"},
		{"rate NaN", func(c *Config) { c.RateHz = math.NaN() }, "rate_hz"},
		{"empty count range", func(c *Config) { c.CountsMax = 0 }, "counts_max"},
		{"count range beyond 32 bits", func(c *Config) { c.CountsMax = 1 << 40 }, "counts_min"},
		{"volts with binary", func(c *Config) { c.Values = ValuesVolts; c.VoltsMax = 5 }, "values"},
		{"volts rails empty", func(c *Config) { c.Format = FormatText; c.Values = ValuesVolts }, "volts_max"},
		{"unknown values", func(c *Config) { c.Values = "millivolts" }, "values"},
		{"calibration for an unknown channel", func(c *Config) { c.Calibration["force"] = Calibration{Gain: 1} }, "calibration.force"},
		{"missing calibration", func(c *Config) { delete(c.Calibration, "ref") }, "calibration.ref"},
		{"zero gain", func(c *Config) { c.Calibration["resp"] = Calibration{Offset: 1} }, "calibration.resp.gain"},
		{"table and gain", func(c *Config) { c.Calibration["ref"] = Calibration{Gain: 1, Table: []CalPoint{{0, 0}, {1, 1}}} }, "calibration.ref.table"},
		{"one-point table", func(c *Config) { c.Calibration["ref"] = Calibration{Table: []CalPoint{{0, 0}}} }, "calibration.ref.table"},
		{"table not increasing", func(c *Config) {
			c.Calibration["ref"] = Calibration{Table: []CalPoint{{0, 0}, {500, 2}, {500, 3}}}
		}, "calibration.ref.table[2].counts"},
		{"block too big", func(c *Config) { c.BlockFrames = 1<<16 + 1 }, "block_frames"},
		{"unknown sensor", func(c *Config) { c.Sensor = "strain" }, "sensor"},
		{"stall too short", func(c *Config) { c.StallTimeout = time.Millisecond }, "stall_timeout"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cfg := goodConfig()
			c.edit(&cfg)
			err := cfg.Validate()
			if c.key == "" {
				if err != nil {
					t.Fatalf("Validate: %v", err)
				}
				return
			}
			var ce *ConfigError
			if !errors.As(err, &ce) || !errors.Is(err, ErrConfig) {
				t.Fatalf("Validate = %v, want a *ConfigError wrapping ErrConfig", err)
			}
			if ce.Key != c.key || ce.Allowed == "" || ce.Value == "" {
				t.Fatalf("error %q names key %q, want %q with a value and what is allowed", err, ce.Key, c.key)
			}
			if !strings.HasPrefix(err.Error(), "serialadc: ") || !strings.Contains(err.Error(), c.key) {
				t.Fatalf("error text %q lacks the package prefix or the key", err)
			}
		})
	}
}

// TestConfigTOML decodes a [serial] table the way the rig-file loader
// does and checks that every key lands in a field (no undecoded keys) and
// the defaults fill the rest.
func TestConfigTOML(t *testing.T) {
	const rig = `
[serial]
port = "/dev/ttyACM0"
baud = 1000000
format = "binary"
channels = ["resp", "ref"]
response = "resp"
reference = "ref"
rate_hz = 10000
values = "counts"
counts_min = 0
counts_max = 1023
block_frames = 512
sensor = "velocity"
stall_timeout = "750ms"
timestamps = false
volts_min = 0.0
volts_max = 0.0

[serial.calibration.resp]
gain = 0.0048828125
offset = -2.5

[serial.calibration.ref]
table = [{counts = 0, volts = 0.0}, {counts = 1023, volts = 4.995}]
`
	var file struct {
		Serial Config `toml:"serial"`
	}
	md, err := toml.Decode(rig, &file)
	if err != nil {
		t.Fatal(err)
	}
	if u := md.Undecoded(); len(u) != 0 {
		t.Fatalf("undecoded keys %v", u)
	}
	c := file.Serial
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	if c.StallTimeout != 750*time.Millisecond || c.Baud != 1000000 || c.BlockFrames != 512 ||
		c.Calibration["resp"].Offset != -2.5 || len(c.Calibration["ref"].Table) != 2 ||
		c.Calibration["ref"].Table[1] != (CalPoint{1023, 4.995}) {
		t.Fatalf("decoded %+v", c)
	}
	var minimal struct {
		Serial Config `toml:"serial"`
	}
	if _, err := toml.Decode("[serial]\nport = \"/dev/ttyUSB0\"\nformat = \"text\"\nchannels = [\"x\"]\ntimestamps = true\nvalues = \"volts\"\nvolts_max = 3.3\n", &minimal); err != nil {
		t.Fatal(err)
	}
	d := minimal.Serial.WithDefaults()
	if d.Baud != DefaultBaud || d.BlockFrames != DefaultBlockFrames || d.StallTimeout != DefaultStallTimeout ||
		d.Response != "x" || d.Sensor != SensorDisplacement {
		t.Fatalf("defaults %+v", d)
	}
	if err := d.Validate(); err != nil {
		t.Fatal(err)
	}
}

func TestCalibrationVolts(t *testing.T) {
	// Exact cases. Linear interpolation between (c0,v0) and (c1,v1) is
	// v0 + (x−c0)(v1−v0)/(c1−c0) (point-slope form; common practice); the
	// numbers are binary fractions so every result is exact.
	table := Calibration{Table: []CalPoint{{0, 0}, {100, 1}, {300, 2}}}
	cases := []struct {
		name string
		cal  Calibration
		in   float64
		want float64
	}{
		{"gain and offset, mid-scale", Calibration{Gain: 5.0 / 1024, Offset: -2.5}, 512, 0},
		{"gain and offset, bottom", Calibration{Gain: 5.0 / 1024, Offset: -2.5}, 0, -2.5},
		{"gain and offset, top", Calibration{Gain: 5.0 / 1024, Offset: -2.5}, 1023, 5.0*1023/1024 - 2.5},
		{"identity when empty", Calibration{}, 1.75, 1.75},
		{"table, first segment", table, 50, 0.5},
		{"table, on a point", table, 100, 1},
		{"table, second segment", table, 200, 1.5},
		{"table, last point", table, 300, 2},
		{"table, extrapolated above along the last segment", table, 400, 2.5},
		{"table, extrapolated below along the first segment", table, -100, -1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.cal.Volts(c.in); got != c.want {
				t.Errorf("Volts(%v) = %v, want %v", c.in, got, c.want)
			}
		})
	}
}

// TestCalibrationTableAgainstGonum compares the table inside its range with
// gonum's interp.PiecewiseLinear on random tables.
func TestCalibrationTableAgainstGonum(t *testing.T) {
	// tol: both compute the same straight line, but gonum precomputes the
	// slopes, so results may differ by a few ulps of values near 1..5 V.
	const tol = 1e-12
	rng := rand.New(rand.NewPCG(11, 12))
	for trial := range 50 {
		n := 2 + rng.IntN(10)
		xs := make([]float64, n)
		ys := make([]float64, n)
		cal := Calibration{Table: make([]CalPoint, n)}
		x := -100 * rng.Float64()
		for i := range n {
			x += 1 + 200*rng.Float64()
			xs[i], ys[i] = x, 5*rng.Float64()
			cal.Table[i] = CalPoint{xs[i], ys[i]}
		}
		var pl interp.PiecewiseLinear
		if err := pl.Fit(xs, ys); err != nil {
			t.Fatal(err)
		}
		for range 100 {
			q := xs[0] + (xs[n-1]-xs[0])*rng.Float64()
			if got, want := cal.Volts(q), pl.Predict(q); math.Abs(got-want) > tol {
				t.Fatalf("trial %d: Volts(%v) = %v, gonum %v", trial, q, got, want)
			}
		}
	}
}

func TestPortInfo(t *testing.T) {
	cases := []struct {
		name string
		in   enumerator.PortDetails
		want string
	}{
		{"usb with details", enumerator.PortDetails{Name: "/dev/ttyACM0", IsUSB: true, VID: "2341", PID: "0043", SerialNumber: "8503631", Manufacturer: "Arduino", Product: "Uno"},
			"/dev/ttyACM0  USB 2341:0043  Uno (Arduino)  serial 8503631"},
		{"usb without strings", enumerator.PortDetails{Name: "/dev/ttyUSB0", IsUSB: true, VID: "1A86", PID: "7523"}, "/dev/ttyUSB0  USB 1A86:7523"},
		{"not usb", enumerator.PortDetails{Name: "/dev/ttyS0"}, "/dev/ttyS0"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := portInfo(&c.in)
			if p.Path != c.in.Name || p.USB != c.in.IsUSB || p.VID != c.in.VID || p.Serial != c.in.SerialNumber || p.String() != c.want {
				t.Fatalf("portInfo = %+v, String %q, want %q", p, p.String(), c.want)
			}
		})
	}
	// On Linux the list comes from /dev and sysfs; it may be empty (no
	// board plugged in) but must not fail, and each entry has a path.
	ports, err := ListPorts()
	if err != nil {
		t.Fatalf("ListPorts: %v", err)
	}
	for _, p := range ports {
		if !strings.HasPrefix(p.Path, "/dev/") {
			t.Errorf("port %+v has no device path", p)
		}
	}
	if !strings.Contains(PortHint, "/dev/") {
		t.Errorf("PortHint %q names no example path", PortHint)
	}
}
