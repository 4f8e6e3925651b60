package rig

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/sim"
)

// Override holds command-line values that replace the rig file's plan.
// Zero values leave the file's value.
type Override struct {
	StartHz, StopHz, StepHz float64
	Points                  int
	Direction               string
	DriveAmp                float64
	MaxDwell                time.Duration
	Refine                  bool
}

// Options are the run-time choices that are not part of a rig.
type Options struct {
	Virtual      bool   // simulated rig on virtual time
	RecordPath   string // CSV to log to
	RecordEager  bool   // create the record at start (headless runs)
	RawPath      string // raw WAV capture
	DriveLogPath string // simulated drive trace, for tests
	Seed         int64  // simulated noise seed; 0 keeps the file's
	Override     Override
	Version      string
	// Notices, when not nil, gets plain lines a person should see during
	// a run: a serial port missing or silent, a manual drive's requests.
	Notices io.Writer
}

// Setup is a rig ready to run: its source, drive and bench configuration.
type Setup struct {
	File    *File
	Text    string
	Path    string
	Source  acquire.Source
	Drive   acquire.Drive
	Bench   acquire.BenchConfig
	closers []io.Closer
}

// usage marks errors that come from what the user asked for.
type usage struct{ error }

func (u usage) Unwrap() error { return u.error }

// IsUsage reports whether err is a mistake in the rig file, the plan or
// the options (the command line's exit 2) rather than a failure of the
// bench.
func IsUsage(err error) bool {
	var u usage
	return errors.As(err, &u) || errors.Is(err, ErrRig) || errors.Is(err, acquire.ErrPlan) ||
		errors.Is(err, acquire.ErrDriveLimit) || errors.Is(err, acquire.ErrExists)
}

// NewRecordName returns a fresh record name in the current folder.
func NewRecordName(t time.Time) string {
	base := "run-" + t.Format("20060102-150405")
	name := base + ".csv"
	for i := 2; ; i++ {
		_, e1 := os.Stat(name)
		_, e2 := os.Stat(acquire.SidecarPath(name))
		if os.IsNotExist(e1) && os.IsNotExist(e2) {
			return name
		}
		name = fmt.Sprintf("%s-%d.csv", base, i)
	}
}

// Open loads a rig file (or "demo") and builds what it describes.
func Open(path string, opt Options) (*Setup, error) {
	f, text, err := Load(path)
	if err != nil {
		return nil, err
	}
	return Build(f, text, path, opt)
}

// Build makes the source, the drive and the bench configuration.
func Build(f *File, text, path string, opt Options) (*Setup, error) {
	o := opt.Override
	if o.StartHz != 0 {
		f.Plan.StartHz = o.StartHz
	}
	if o.StopHz != 0 {
		f.Plan.StopHz = o.StopHz
	}
	if o.StepHz != 0 {
		f.Plan.StepHz = o.StepHz
	}
	if o.Points != 0 {
		f.Plan.Points = o.Points
		if o.StepHz == 0 {
			f.Plan.StepHz = 0
		}
	}
	if o.Direction != "" {
		f.Plan.Direction = o.Direction
	}
	if o.MaxDwell != 0 {
		f.Plan.MaxDwell.Duration = o.MaxDwell
	}
	if o.Refine {
		f.Plan.Refine = true
	}
	if o.DriveAmp != 0 {
		if o.DriveAmp < 0 || o.DriveAmp > f.DriveCfg.MaxAmplitude {
			return nil, usage{fmt.Errorf("%w: --drive %g %s: the rig's limit is %g %s",
				acquire.ErrDriveLimit, o.DriveAmp, f.DriveCfg.Unit, f.DriveCfg.MaxAmplitude, f.DriveCfg.Unit)}
		}
		f.DriveCfg.Amplitude = o.DriveAmp
	}
	if o.StepHz < 0 {
		return nil, usage{fmt.Errorf("%w: --step %g: must be positive", acquire.ErrPlan, o.StepHz)}
	}
	plan, err := f.AcquirePlan()
	if err != nil {
		return nil, usage{err}
	}
	hs, err := f.HarmonicList()
	if err != nil {
		return nil, usage{err}
	}
	if opt.RecordPath != "" {
		if err := checkWritable(opt.RecordPath); err != nil {
			return nil, err
		}
	}
	s := &Setup{File: f, Text: text, Path: path}
	ref := -1
	if f.Response.ReferenceChannel != nil {
		ref = *f.Response.ReferenceChannel
	}
	s.Bench = acquire.BenchConfig{
		Harmonics: hs, Response: f.Response.Channel, Reference: ref,
		RefVoltsPerDrive: f.Response.RefVoltsPerDrive,
		VoltsPerUnit:     f.Response.VoltsPerUnit, OffsetV: f.Response.OffsetV,
		Unit: f.Response.Unit, SensorKind: f.Response.Sensor,
		Plan: plan, DriveAmp: f.DriveCfg.Amplitude, MaxDisp: f.Limits.MaxDisplacement,
		SettleCycles: f.Measure.SettleCycles, ExpectedTauS: f.Measure.ExpectedTau.Seconds(),
		SettleFloor: f.Measure.SettleFloor, ThirdLimitPct: f.Measure.ThirdFlagPct,
		RecordPath: opt.RecordPath, RecordEager: opt.RecordEager, RawPath: opt.RawPath,
	}
	side := &acquire.Sidecar{Software: "sweeplock " + opt.Version, Rig: acquire.RigSummary{Name: f.Name}, RigText: text,
		Plan: &acquire.PlanJSON{StartHz: plan.StartHz, StopHz: plan.StopHz, StepHz: plan.StepHz, Points: plan.Points,
			Spacing: plan.Spacing.String(), Direction: plan.Direction.String(), MinDwellCycles: plan.MinDwellCycles,
			MaxDwellS: plan.MaxDwell.Seconds(), MeasureCycles: plan.MeasureCycles, SettleTol: plan.SettleTol,
			Refine: plan.Refine, DriveAmp: f.DriveCfg.Amplitude}}
	if path != "demo" && path != "" {
		side.Rig.File = path
	}
	switch f.Source {
	case "sim":
		if err := s.buildSim(opt, side); err != nil {
			s.Close()
			return nil, err
		}
	case "serial":
		if err := s.buildSerial(opt, side); err != nil {
			s.Close()
			return nil, err
		}
	case "soundcard":
		if err := s.buildSoundcard(opt, side); err != nil {
			s.Close()
			return nil, err
		}
	default:
		return nil, usage{fmt.Errorf("%w: source = %q is not available in this build yet", ErrRig, f.Source)}
	}
	s.Bench.Sidecar = side
	return s, nil
}

func (s *Setup) buildSim(opt Options, side *acquire.Sidecar) error {
	f := s.File
	cfg := *f.Sim
	cfg.MaxAmp = f.DriveCfg.MaxAmplitude
	cfg.Ramp = f.DriveCfg.Ramp.Duration
	cfg.DriveUnit = f.DriveCfg.Unit
	if cfg.Name == "" {
		cfg.Name = f.Name
	}
	if opt.Seed != 0 {
		cfg.Seed = uint64(opt.Seed)
	}
	if err := cfg.Validate(); err != nil {
		return usage{err}
	}
	so := sim.Options{Virtual: opt.Virtual}
	if opt.DriveLogPath != "" {
		fh, err := os.Create(opt.DriveLogPath)
		if err != nil {
			return fmt.Errorf("rig: drive log: %w", err)
		}
		s.closers = append(s.closers, fh)
		so.DriveLog = fh
	}
	r, err := sim.New(cfg, so)
	if err != nil {
		return usage{err}
	}
	s.closers = append(s.closers, r)
	s.Source, s.Drive = r.Source(), r.Drive()
	zeta := 1 / (2 * cfg.Q)
	if s.Bench.ExpectedTauS == 0 {
		// linear transient envelope e^{−ζω0t}: τ = 1/(ζω0) (REFERENCES §6)
		s.Bench.ExpectedTauS = 1 / (zeta * 2 * math.Pi * cfg.NaturalHz)
	}
	side.Rig.Params = map[string]any{"natural_hz": cfg.NaturalHz, "q": cfg.Q, "zeta": zeta, "beta_per_m2s2": cfg.Beta,
		"gain_m_s2_per_unit": cfg.Gain, "rate_hz": cfg.RateHz, "seed": cfg.Seed,
		"sens_v_per_m": cfg.SensVPerM, "offset_v": cfg.OffsetV}
	return nil
}

// Describe says in a few words what runs.
func (s *Setup) Describe() string {
	info := s.Source.Info()
	return fmt.Sprintf("%s source %q at %.0f Hz", info.Kind, info.Name, info.RateHz)
}

// Close releases the source, the drive and any files; safe twice.
func (s *Setup) Close() error {
	var first error
	for i := len(s.closers) - 1; i >= 0; i-- {
		if err := s.closers[i].Close(); err != nil && first == nil {
			first = err
		}
	}
	s.closers = nil
	return first
}

// checkWritable fails early, before anything runs, when the record cannot
// be created: its folder is missing or not writable, or it exists.
func checkWritable(p string) error {
	if _, err := os.Stat(p); err == nil {
		return usage{fmt.Errorf("%w: %s (records are never overwritten; choose another --out)", acquire.ErrExists, p)}
	}
	if _, err := os.Stat(acquire.SidecarPath(p)); err == nil {
		return usage{fmt.Errorf("%w: %s (records are never overwritten; choose another --out)", acquire.ErrExists, acquire.SidecarPath(p))}
	}
	dir := filepath.Dir(p)
	st, err := os.Stat(dir)
	if err != nil || !st.IsDir() {
		return fmt.Errorf("rig: cannot write the record %s: folder %s does not exist", p, dir)
	}
	tmp, err := os.CreateTemp(dir, ".sweeplock-check-*")
	if err != nil {
		return fmt.Errorf("rig: cannot write the record %s: %v", p, err)
	}
	tmp.Close()
	os.Remove(tmp.Name())
	return nil
}
