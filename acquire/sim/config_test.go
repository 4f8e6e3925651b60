package sim

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/BurntSushi/toml"
)

// TestValidate: each out-of-range field is reported by its rig-file key,
// wrapped in ErrConfig, and the demos are valid.
func TestValidate(t *testing.T) {
	for _, c := range []Config{Demo(), DemoHardening()} {
		if err := c.Validate(); err != nil {
			t.Errorf("%s: %v", c.Name, err)
		}
	}
	for _, c := range []struct {
		field string
		edit  func(*Config)
	}{
		{"rate_hz", func(c *Config) { c.RateHz = 0 }},
		{"rate_hz", func(c *Config) { c.RateHz = math.NaN() }},
		{"natural_hz", func(c *Config) { c.NaturalHz = -38 }},
		{"natural_hz", func(c *Config) { c.NaturalHz = 1000 }}, // ≥ rate/4
		{"q", func(c *Config) { c.Q = 0.4 }},
		{"beta", func(c *Config) { c.Beta = math.Inf(-1) }},
		{"gain", func(c *Config) { c.Gain = 0 }},
		{"disp_limit_m", func(c *Config) { c.DispLimitM = 0 }},
		{"disp_limit_m", func(c *Config) { c.DispLimitM = 2e-3 }}, // beyond the 1.69 mm escape
		{"max_amp", func(c *Config) { c.MaxAmp = -1 }},
		{"ramp", func(c *Config) { c.Ramp = time.Microsecond }},
		{"ramp_shape", func(c *Config) { c.RampShape = 7 }},
		{"block_frames", func(c *Config) { c.BlockFrames = -1 }},
		{"substeps", func(c *Config) { c.Substeps = 2000 }},
		{"substeps", func(c *Config) { c.Substeps, c.RateHz, c.BlockFrames = 1, 160, 4 }}, // ω0·h = 1.5
		{"sens_v_per_m", func(c *Config) { c.SensVPerM = 0 }},
		{"offset_v", func(c *Config) { c.OffsetV = math.NaN() }},
		{"noise_v", func(c *Config) { c.NoiseV = -0.001 }},
		{"hum_v", func(c *Config) { c.HumV = -1 }},
		{"hum_hz", func(c *Config) { c.HumHz = 55 }},
		{"high_pass_hz", func(c *Config) { c.HighPassHz = -3 }},
		{"adc_bits", func(c *Config) { c.ADCBits = 32 }},
		{"adc_max_v", func(c *Config) { c.ADCMaxV = c.ADCMinV }},
		{"ref_v_per_unit", func(c *Config) { c.RefChannel, c.RefVPerUnit = true, 0 }},
	} {
		cfg := Demo()
		c.edit(&cfg)
		err := cfg.Validate()
		var ce *ConfigError
		if !errors.As(err, &ce) || !errors.Is(err, ErrConfig) {
			t.Errorf("%s: Validate() = %v, want a *ConfigError wrapping ErrConfig", c.field, err)
			continue
		}
		if ce.Field != c.field || !strings.Contains(err.Error(), c.field) || ce.Allowed == "" {
			t.Errorf("%s: error names %q: %v", c.field, ce.Field, err)
		}
		if _, err := New(cfg, Options{}); !errors.Is(err, ErrConfig) {
			t.Errorf("%s: New accepted the config (%v)", c.field, err)
		}
	}
	// Zero optional fields take their defaults.
	cfg := Demo()
	cfg.Substeps, cfg.BlockFrames, cfg.Ramp, cfg.DriveUnit = 0, 0, 0, ""
	if err := cfg.Validate(); err != nil {
		t.Fatal(err)
	}
	if e := cfg.Effective(); e.Substeps != DefaultSubsteps || e.BlockFrames != 80 || e.Ramp != DefaultRamp || e.DriveUnit != "A" {
		t.Errorf("defaults: %+v", e)
	}
}

// TestConfigTOML decodes a rig file's [sim] table the way the rig-file
// loader does (BurntSushi/toml, unknown keys reported by Undecoded).
func TestConfigTOML(t *testing.T) {
	const file = `
[sim]
name = "bench strip"
natural_hz = 41.5
q = 45
beta = -1.5e10
gain = 2.0
disp_limit_m = 1.2e-3
max_amp = 0.3
ramp = "750ms"
ramp_shape = "linear"
rate_hz = 5000
sens_v_per_m = 1500
offset_v = 1.65
noise_v = 0.001
hum_hz = 60
hum_v = 0.002
adc_bits = 12
adc_min_v = 0
adc_max_v = 3.3
ref_channel = true
ref_v_per_unit = 1.0
ref_offset_v = 1.65
seed = 42
colour = "blue"
`
	var f struct {
		Sim Config `toml:"sim"`
	}
	md, err := toml.Decode(file, &f)
	if err != nil {
		t.Fatal(err)
	}
	c := f.Sim
	if c.NaturalHz != 41.5 || c.Ramp != 750*time.Millisecond || c.RampShape != Linear || c.HumHz != 60 || !c.RefChannel || c.Seed != 42 || c.Name != "bench strip" {
		t.Errorf("decoded %+v", c)
	}
	if u := md.Undecoded(); len(u) != 1 || u[0].String() != "sim.colour" {
		t.Errorf("Undecoded() = %v, want [sim.colour]", u)
	}
	if err := c.Validate(); err != nil {
		t.Errorf("Validate: %v", err)
	}
	if _, err := toml.Decode("[sim]\nramp_shape = \"square\"\n", &f); err == nil || !strings.Contains(err.Error(), "ramp_shape") {
		t.Errorf("bad ramp_shape: %v", err)
	}
	// The demo survives a round trip through a rig file.
	var buf bytes.Buffer
	f.Sim = Demo()
	if err := toml.NewEncoder(&buf).Encode(f); err != nil {
		t.Fatal(err)
	}
	var back struct {
		Sim Config `toml:"sim"`
	}
	if _, err := toml.Decode(buf.String(), &back); err != nil {
		t.Fatalf("%v in\n%s", err, buf.String())
	}
	if back.Sim != Demo() {
		t.Errorf("round trip: %+v\nwant %+v", back.Sim, Demo())
	}
}

// FuzzConfigTOML: any [sim] table either fails to decode or validate, or
// makes a rig that produces a block; nothing panics.
func FuzzConfigTOML(f *testing.F) {
	f.Add("natural_hz = 38\nq = 60\nbeta = -2e10\ngain = 2.4\ndisp_limit_m = 1.5e-3\nmax_amp = 0.4\nrate_hz = 4000\nsens_v_per_m = 1500\nadc_bits = 12\nadc_max_v = 3.3\n")
	f.Add("natural_hz = 120\nq = 0.5\nbeta = 1e20\ngain = 1\ndisp_limit_m = 1\nmax_amp = 1\nrate_hz = 1e6\nsens_v_per_m = -1\nadc_min_v = -1\nadc_max_v = 1\nsubsteps = 1024\nblock_frames = 1\n")
	f.Add("ramp = \"1m\"\nramp_shape = \"linear\"\nhigh_pass_hz = 249.9\nnatural_hz = 1\nrate_hz = 1000\n")
	f.Fuzz(func(t *testing.T, table string) {
		var fl struct {
			Sim Config `toml:"sim"`
		}
		if _, err := toml.Decode("[sim]\n"+table, &fl); err != nil {
			return
		}
		if fl.Sim.Validate() != nil {
			return
		}
		r, err := New(fl.Sim, Options{Virtual: true})
		if err != nil {
			t.Fatalf("Validate passed, New failed: %v", err)
		}
		defer r.Close()
		if fl.Sim.Effective().BlockFrames > 1<<14 {
			return // valid, but too big a block to make in a fuzz loop
		}
		e := r.eng
		blk := e.newBlock()
		_ = e.fill(blk)
	})
}
