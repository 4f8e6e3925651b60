// Package rig reads a rig file (TOML) and builds from it the source, the
// drive and the bench configuration it describes. A rig file names the
// source of samples and its channels, the calibration from volts to the
// display unit, the drive and its limits, the sweep plan, and, for the
// simulated rig, the resonator's parameters.
//
// Unknown keys and bad values are errors that name the key, its line and
// what is allowed. The built-in demo rig is the file demo.toml embedded
// here; `sweeplock example-rig` prints it as a starting point.
package rig

import (
	_ "embed"
	"errors"
	"fmt"
	"math"
	"os"
	"sort"
	"strings"
	"time"

	"github.com/BurntSushi/toml"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/serialadc"
	"github.com/sweeplock/sweeplock/acquire/sim"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
	"github.com/sweeplock/sweeplock/dsp/lockin"
)

//go:embed demo.toml
var demoText string

// DemoText returns the built-in demo rig file.
func DemoText() string { return demoText }

// File is a rig file as written.
type File struct {
	Name     string   `toml:"name"`
	Source   string   `toml:"source"` // sim | serial | soundcard
	Drive    string   `toml:"drive"`  // sim | soundcard | manual
	Response Response `toml:"response"`
	DriveCfg Drive    `toml:"drive_output"`
	Limits   Limits   `toml:"limits"`
	Plan     Plan     `toml:"plan"`
	Measure  Measure  `toml:"measure"`
	Sim      *sim.Config
	Serial   *serialadc.Config // the [serial] table; see serial.go
	// Soundcard is the [soundcard] table and SoundcardCal its calibration
	// key; see soundcard.go.
	Soundcard    *soundcard.Config `toml:"-"`
	SoundcardCal string            `toml:"-"`
}

// Response says which channel carries the response and how volts become
// the display unit.
type Response struct {
	Channel          int     `toml:"channel"`
	ReferenceChannel *int    `toml:"reference_channel"`
	RefVoltsPerDrive float64 `toml:"ref_volts_per_drive"`
	Unit             string  `toml:"unit"`
	Sensor           string  `toml:"sensor"`
	VoltsPerUnit     float64 `toml:"volts_per_unit"`
	OffsetV          float64 `toml:"offset_v"`
}

// Drive is the drive's amplitude and limit.
type Drive struct {
	Amplitude    float64  `toml:"amplitude"`
	MaxAmplitude float64  `toml:"max_amplitude"`
	Unit         string   `toml:"unit"`
	Ramp         duration `toml:"ramp"`
}

// Limits stop a sweep.
type Limits struct {
	MaxDisplacement float64 `toml:"max_displacement"`
}

// Plan is the sweep plan as written.
type Plan struct {
	StartHz        float64  `toml:"start_hz"`
	StopHz         float64  `toml:"stop_hz"`
	StepHz         float64  `toml:"step_hz"`
	Points         int      `toml:"points"`
	Spacing        string   `toml:"spacing"`
	Direction      string   `toml:"direction"`
	MinDwellCycles int      `toml:"min_dwell_cycles"`
	MaxDwell       duration `toml:"max_dwell"`
	MeasureCycles  int      `toml:"measure_cycles"`
	SettleTol      float64  `toml:"settle_tol"`
	Refine         bool     `toml:"refine"`
	RefineSteps    int      `toml:"refine_steps"`
	RefineFactor   float64  `toml:"refine_factor"`
}

// Measure sets the harmonics and the readout.
type Measure struct {
	Harmonics    []string `toml:"harmonics"`
	SettleCycles int      `toml:"settle_cycles"`
	ThirdFlagPct float64  `toml:"third_flag_pct"`
	ExpectedTau  duration `toml:"expected_tau"`
	SettleFloor  float64  `toml:"settle_floor"`
}

// duration decodes "750ms", "30s".
type duration struct{ time.Duration }

func (d *duration) UnmarshalText(b []byte) error {
	v, err := time.ParseDuration(string(b))
	if err != nil {
		return fmt.Errorf("%q is not a duration such as \"500ms\" or \"30s\"", string(b))
	}
	d.Duration = v
	return nil
}

// ErrRig wraps every rig file error.
var ErrRig = errors.New("rig")

// KeyError is a problem with one key of a rig file.
type KeyError struct {
	File string
	Key  string // dotted, e.g. "plan.step_hz"
	Line int    // 0 when unknown
	Msg  string
}

func (e *KeyError) Error() string {
	where := e.File
	if e.Line > 0 {
		where = fmt.Sprintf("%s line %d", e.File, e.Line)
	}
	return fmt.Sprintf("rig file %s: %s: %s", where, e.Key, e.Msg)
}

// Unwrap lets errors.Is(err, ErrRig) hold.
func (e *KeyError) Unwrap() error { return ErrRig }

// Load reads a rig file by path, or the built-in demo when path is "demo".
func Load(path string) (*File, string, error) {
	if path == "" || path == "demo" {
		f, err := Parse("demo", demoText)
		return f, demoText, err
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, "", fmt.Errorf("%w: %v", ErrRig, err)
	}
	f, err := Parse(path, string(data))
	return f, string(data), err
}

// Parse decodes and checks rig file text.
func Parse(name, text string) (*File, error) {
	lines := keyLines(text)
	f := defaults()
	var raw struct {
		File
		Sim       toml.Primitive `toml:"sim"`
		Serial    toml.Primitive `toml:"serial"`
		Soundcard toml.Primitive `toml:"soundcard"`
	}
	raw.File = *f
	md, err := toml.Decode(text, &raw)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &KeyError{File: name, Key: pe.LastKey, Line: pe.Position.Line, Msg: pe.Message}
		}
		return nil, &KeyError{File: name, Key: "?", Msg: err.Error()}
	}
	*f = raw.File
	if md.IsDefined("sim") {
		var sc sim.Config
		if err := md.PrimitiveDecode(raw.Sim, &sc); err != nil {
			return nil, &KeyError{File: name, Key: "sim", Line: lines["sim"], Msg: err.Error()}
		}
		f.Sim = &sc
	}
	if md.IsDefined("serial") {
		if f.Serial, err = decodeSerial(md, raw.Serial, name, lines); err != nil {
			return nil, err
		}
	}
	if err := f.decodeSoundcard(md, raw.Soundcard, name, lines); err != nil {
		return nil, err
	}
	if und := md.Undecoded(); len(und) > 0 {
		k := und[0].String()
		return nil, &KeyError{File: name, Key: k, Line: lines[k], Msg: "unknown key; allowed here: " + allowedNear(k)}
	}
	if err := f.check(name, lines); err != nil {
		return nil, err
	}
	return f, nil
}

func defaults() *File {
	return &File{
		Source:   "sim",
		Drive:    "sim",
		Response: Response{Unit: "mm", Sensor: "displacement", VoltsPerUnit: 1},
		DriveCfg: Drive{Unit: "A", Ramp: duration{500 * time.Millisecond}},
		Plan: Plan{Spacing: "linear", Direction: "up-down", MinDwellCycles: 10,
			MaxDwell: duration{30 * time.Second}, MeasureCycles: 20, SettleTol: 0.002,
			RefineSteps: 2, RefineFactor: 4},
		Measure: Measure{Harmonics: []string{"1", "2", "3", "5"}, SettleCycles: 2, ThirdFlagPct: 1},
	}
}

var sections = map[string][]string{
	"":             {"name", "source", "drive", "response", "drive_output", "limits", "plan", "measure", "sim", "serial", "soundcard"},
	"response":     {"channel", "reference_channel", "ref_volts_per_drive", "unit", "sensor", "volts_per_unit", "offset_v"},
	"drive_output": {"amplitude", "max_amplitude", "unit", "ramp"},
	"limits":       {"max_displacement"},
	"plan": {"start_hz", "stop_hz", "step_hz", "points", "spacing", "direction", "min_dwell_cycles",
		"max_dwell", "measure_cycles", "settle_tol", "refine", "refine_steps", "refine_factor"},
	"measure":   {"harmonics", "settle_cycles", "third_flag_pct", "expected_tau", "settle_floor"},
	"serial":    tomlKeys(serialadc.Config{}),
	"soundcard": soundcardKeys(),
}

func allowedNear(key string) string {
	sec := ""
	if i := strings.LastIndexByte(key, '.'); i >= 0 {
		sec = key[:i]
	}
	if a, ok := sections[sec]; ok {
		return strings.Join(a, ", ")
	}
	if a, ok := serialAllowed(sec); ok {
		return a
	}
	if strings.HasPrefix(sec, "sim") {
		return "see `sweeplock example-rig` for the [sim] keys"
	}
	keys := make([]string, 0, len(sections))
	for k := range sections {
		if k != "" {
			keys = append(keys, "["+k+"]")
		}
	}
	sort.Strings(keys)
	return strings.Join(keys, ", ")
}

// keyLines maps each dotted key (and each table) to the line it is on.
func keyLines(text string) map[string]int {
	out := map[string]int{}
	table := ""
	for i, ln := range strings.Split(text, "\n") {
		s := strings.TrimSpace(ln)
		if h := strings.IndexByte(s, '#'); h >= 0 {
			s = strings.TrimSpace(s[:h])
		}
		if s == "" {
			continue
		}
		if strings.HasPrefix(s, "[") {
			table = strings.Trim(s, "[] ")
			out[table] = i + 1
			continue
		}
		if eq := strings.IndexByte(s, '='); eq > 0 {
			k := strings.Trim(strings.TrimSpace(s[:eq]), `"`)
			if table != "" {
				k = table + "." + k
			}
			out[k] = i + 1
		}
	}
	return out
}

func (f *File) check(name string, lines map[string]int) error {
	bad := func(key, msg string) error {
		return &KeyError{File: name, Key: key, Line: lines[key], Msg: msg}
	}
	switch f.Source {
	case "sim", "serial", "soundcard":
	default:
		return bad("source", fmt.Sprintf("%q: allowed are sim, serial, soundcard", f.Source))
	}
	switch f.Drive {
	case "sim", "soundcard", "manual":
	default:
		return bad("drive", fmt.Sprintf("%q: allowed are sim, soundcard, manual", f.Drive))
	}
	if f.Source == "sim" && f.Sim == nil {
		return bad("sim", "source = \"sim\" needs a [sim] table with the resonator's parameters")
	}
	if f.Sim != nil {
		// The drive's limit, ramp and unit live in [drive_output]; the
		// simulated coil driver takes them from there.
		f.Sim.MaxAmp = f.DriveCfg.MaxAmplitude
		f.Sim.Ramp = f.DriveCfg.Ramp.Duration
		f.Sim.DriveUnit = f.DriveCfg.Unit
		if err := f.Sim.Validate(); err != nil {
			key := "sim"
			var ce *sim.ConfigError
			if errors.As(err, &ce) {
				key = "sim." + ce.Field
			}
			return bad(key, err.Error())
		}
	}
	if err := f.checkSerial(name, lines); err != nil {
		return err
	}
	if err := f.checkSoundcard(name, lines); err != nil {
		return err
	}
	r := f.Response
	if r.Channel < 0 {
		return bad("response.channel", fmt.Sprintf("%d: must be 0 or more", r.Channel))
	}
	if r.VoltsPerUnit == 0 || math.IsNaN(r.VoltsPerUnit) {
		return bad("response.volts_per_unit", "must be a non-zero number (volts per display unit)")
	}
	switch r.Sensor {
	case "displacement", "velocity", "acceleration":
	default:
		return bad("response.sensor", fmt.Sprintf("%q: allowed are displacement, velocity, acceleration", r.Sensor))
	}
	if r.Unit == "" || strings.ContainsAny(r.Unit, ", \"") {
		return bad("response.unit", fmt.Sprintf("%q: give a short unit name such as mm or um, without spaces or commas", r.Unit))
	}
	d := f.DriveCfg
	if d.Amplitude < 0 {
		return bad("drive_output.amplitude", fmt.Sprintf("%g: must be 0 or more", d.Amplitude))
	}
	if d.MaxAmplitude <= 0 {
		return bad("drive_output.max_amplitude", fmt.Sprintf("%g: give the rig's drive limit, a positive number", d.MaxAmplitude))
	}
	if d.Amplitude > d.MaxAmplitude {
		return bad("drive_output.amplitude", fmt.Sprintf("%g is above max_amplitude %g", d.Amplitude, d.MaxAmplitude))
	}
	if f.Limits.MaxDisplacement < 0 {
		return bad("limits.max_displacement", fmt.Sprintf("%g: must be 0 (no limit) or positive", f.Limits.MaxDisplacement))
	}
	if _, err := f.AcquirePlan(); err != nil {
		key := "plan"
		msg := err.Error()
		for _, k := range sections["plan"] {
			if strings.Contains(msg, ": "+k+" = ") {
				key = "plan." + k
			}
		}
		return bad(key, strings.TrimPrefix(msg, acquire.ErrPlan.Error()+": "))
	}
	if _, err := f.HarmonicList(); err != nil {
		return bad("measure.harmonics", err.Error())
	}
	if f.Measure.SettleCycles < 1 {
		return bad("measure.settle_cycles", fmt.Sprintf("%d: must be at least 1", f.Measure.SettleCycles))
	}
	if f.Measure.ThirdFlagPct <= 0 {
		return bad("measure.third_flag_pct", fmt.Sprintf("%g: must be a positive percentage", f.Measure.ThirdFlagPct))
	}
	return nil
}

// AcquirePlan turns the [plan] table into an acquire.Plan.
func (f *File) AcquirePlan() (acquire.Plan, error) {
	p := f.Plan
	sp, err := acquire.ParseSpacing(p.Spacing)
	if err != nil {
		return acquire.Plan{}, fmt.Errorf("%w: spacing = %q: allowed are linear, log", acquire.ErrPlan, p.Spacing)
	}
	dir, err := acquire.ParseDirection(p.Direction)
	if err != nil {
		return acquire.Plan{}, fmt.Errorf("%w: direction = %q: allowed are up, down, up-down", acquire.ErrPlan, p.Direction)
	}
	ap := acquire.Plan{StartHz: p.StartHz, StopHz: p.StopHz, StepHz: p.StepHz, Points: p.Points,
		Spacing: sp, Direction: dir, MinDwellCycles: p.MinDwellCycles, MaxDwell: p.MaxDwell.Duration,
		MeasureCycles: p.MeasureCycles, SettleTol: p.SettleTol, Refine: p.Refine,
		RefineSteps: p.RefineSteps, RefineFactor: p.RefineFactor}
	return ap, ap.Validate()
}

// HarmonicList parses [measure] harmonics; the fundamental comes first.
func (f *File) HarmonicList() ([]lockin.Harmonic, error) {
	var out []lockin.Harmonic
	seen := map[lockin.Harmonic]bool{}
	one := lockin.Harmonic{Num: 1, Den: 1}
	out = append(out, one)
	seen[one] = true
	for _, s := range f.Measure.Harmonics {
		h, err := lockin.ParseHarmonic(s)
		if err != nil {
			return nil, fmt.Errorf("%q: give whole multiples such as \"3\" or fractions such as \"1/2\"", s)
		}
		if !seen[h] {
			seen[h] = true
			out = append(out, h)
		}
	}
	return out, nil
}
