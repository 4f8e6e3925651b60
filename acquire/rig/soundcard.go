package rig

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"sync"
	"time"

	"github.com/BurntSushi/toml"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
)

// A rig with source = "soundcard" drives the resonator from a sound card
// output and reads its sensor from the same card's inputs, through one
// full-duplex PortAudio stream (package soundcard; the binary must be built
// with -tags portaudio). Its [soundcard] table is soundcard.Config (device,
// rate_hz, frames_per_buffer, latency, response_channel,
// reference_channel, output_channels, max_level, ramp, offset), with the
// package's defaults for every key left out, plus one key of the rig's
// own: calibration, the JSON file `sweeplock calibrate` wrote (a path
// relative to the rig file).
//
// The card's blocks hold the response first and, when reference_channel is
// not -1, the reference second, so the bench reads channel 0 and 1; the
// input channels themselves are named in [soundcard], and [response]
// channel and reference_channel may be left out (when written they must
// agree with [soundcard]). With a reference the response is taken as a
// ratio to it (ref_volts_per_drive defaults to 1: the reference is the
// drive itself wired back to the second input), which removes the card's
// delay and its input coupling. Without one, a calibration (when named)
// divides each harmonic by the card's own response at its frequency.
//
// The drive is "soundcard" (the default with this source: the same card's
// output, opened once with its input) or "manual" (an external generator;
// the card's output stays silent). A sound card drive is in full-scale
// units (1 is the card's full scale, shown as V): [drive_output]
// max_amplitude must be at most 1, and the card's level limit is the
// smaller of it and [soundcard] max_level; [soundcard] ramp, when not
// written, is [drive_output] ramp.

// Keys of [soundcard] that are the rig's own, not soundcard.Config's.
const cardCalKey = "calibration"

// cardTable is the [soundcard] table as written.
type cardTable struct {
	soundcard.Config
	Calibration string `toml:"calibration"`
}

// soundcardKeys lists the keys allowed in [soundcard].
func soundcardKeys() []string {
	return append(tomlKeys(soundcard.Config{}), cardCalKey)
}

// decodeSoundcard decodes the [soundcard] table, when there is one, on top
// of soundcard.DefaultConfig.
func (f *File) decodeSoundcard(md toml.MetaData, p toml.Primitive, name string, lines map[string]int) error {
	if !md.IsDefined("soundcard") {
		return nil
	}
	t := cardTable{Config: soundcard.DefaultConfig()}
	if err := md.PrimitiveDecode(p, &t); err != nil {
		return &KeyError{File: name, Key: "soundcard", Line: lines["soundcard"], Msg: err.Error()}
	}
	f.Soundcard = &t.Config
	f.SoundcardCal = t.Calibration
	return nil
}

// checkSoundcard checks the [soundcard] table and how the rest of the file
// goes with a sound card source or drive.
func (f *File) checkSoundcard(name string, lines map[string]int) error {
	bad := func(key, msg string) error {
		return &KeyError{File: name, Key: key, Line: lineOf(lines, key), Msg: msg}
	}
	_, driveWritten := lines["drive"]
	if f.Source == "soundcard" && !driveWritten {
		f.Drive = "soundcard"
	}
	if f.Drive == "soundcard" && f.Source != "soundcard" {
		// A serial source refuses this drive itself (serial.go).
		if f.Source != "serial" {
			return bad("drive", fmt.Sprintf(`"soundcard" drives from the sound card that source = "soundcard" reads; with source = %q use drive = %q`, f.Source, f.Source))
		}
		return nil
	}
	if f.Source != "soundcard" {
		if f.Soundcard != nil && !(f.Source == "serial" && f.Drive == "soundcard") {
			return bad("soundcard", fmt.Sprintf(`a [soundcard] table goes with source = "soundcard" (or drive = "soundcard" with source = "serial"); this rig has source = %q`, f.Source))
		}
		return nil
	}
	if f.Soundcard == nil {
		c := soundcard.DefaultConfig()
		f.Soundcard = &c
	}
	switch f.Drive {
	case "soundcard", "manual":
	default:
		return bad("drive", fmt.Sprintf(`%q drives the simulated rig only; with source = "soundcard" use drive = "soundcard" (the card's output) or "manual" (an external generator you set by hand)`, f.Drive))
	}
	c := *f.Soundcard
	if f.Drive == "soundcard" {
		d := f.DriveCfg
		if _, ok := lines["drive_output.unit"]; ok && d.Unit != "V" {
			return bad("drive_output.unit", fmt.Sprintf(`%q: a sound card drive is in units of the card's full scale (1 is full scale), shown as "V"; leave unit out or write "V"`, d.Unit))
		}
		f.DriveCfg.Unit = "V"
		if d.MaxAmplitude > 1 {
			return bad("drive_output.max_amplitude", fmt.Sprintf("%g is above the sound card's full scale 1: give the largest drive in full-scale units (e.g. 0.5)", d.MaxAmplitude))
		}
		if _, ok := lines["soundcard.max_level"]; !ok || d.MaxAmplitude < c.MaxLevel {
			c.MaxLevel = d.MaxAmplitude
		}
		if _, ok := lines["soundcard.ramp"]; !ok {
			c.Ramp = d.Ramp.Duration
		}
	}
	if err := c.Validate(); err != nil {
		var ce *soundcard.ConfigError
		if !errors.As(err, &ce) {
			return bad("soundcard", err.Error())
		}
		key := "soundcard." + ce.Key
		if _, ok := lines[key]; !ok {
			// A value taken from [drive_output].
			switch ce.Key {
			case "ramp":
				key = "drive_output.ramp"
			case "max_level":
				key = "drive_output.max_amplitude"
			}
		}
		return bad(key, fmt.Sprintf("%v is not allowed: %s", ce.Value, ce.Allowed))
	}
	*f.Soundcard = c
	if _, written := lines["response.channel"]; written && f.Response.Channel != c.ResponseChannel {
		return bad("response.channel", fmt.Sprintf("%d, but [soundcard] response_channel = %d: with a sound card source name the input channels in [soundcard] and leave response.channel out",
			f.Response.Channel, c.ResponseChannel))
	}
	if rc := f.Response.ReferenceChannel; rc != nil && *rc != c.ReferenceChannel {
		return bad("response.reference_channel", fmt.Sprintf("%d, but [soundcard] reference_channel = %d (-1 for none): with a sound card source name the reference in [soundcard] and leave response.reference_channel out",
			*rc, c.ReferenceChannel))
	}
	if _, written := lines["response.ref_volts_per_drive"]; !written && c.ReferenceChannel >= 0 {
		// The reference is the drive itself, wired back to the second input.
		f.Response.RefVoltsPerDrive = 1
	}
	if f.Drive == "manual" && c.ReferenceChannel < 0 {
		return bad("soundcard.reference_channel", `-1: with drive = "manual" the bench reads the generator's frequency and phase from the reference input; wire the generator's output to a second input and name it here`)
	}
	return nil
}

// buildSoundcard opens the card once for the source and the drive.
func (s *Setup) buildSoundcard(opt Options, side *acquire.Sidecar) error {
	f := s.File
	cfg := *f.Soundcard
	// A calibration is read and checked against the plan before the card
	// opens, and against the stream once it is open.
	var cal *CardCal
	calPath := ""
	if f.SoundcardCal != "" && cfg.ReferenceChannel < 0 {
		calPath = CalPath(s.Path, f.SoundcardCal)
		var err error
		if cal, err = ReadCardCal(calPath); err != nil {
			return usage{err}
		}
		lo, hi := harmonicSpan(s.Bench.Plan, s.Bench.Harmonics)
		if err := cal.Covers(lo, hi); err != nil {
			return usage{fmt.Errorf("%s: %w", calPath, err)}
		}
	}
	card, err := soundcard.Open(cfg, soundcard.Options{})
	if err != nil {
		if errors.Is(err, soundcard.ErrConfig) {
			return usage{fmt.Errorf("%w: %v", ErrRig, err)}
		}
		return err
	}
	in, out := card.Latency()
	src := newCardSource(card.Source(), in+out, cfg.RateHz, f.Drive == "manual")
	s.closers = append(s.closers, src)
	s.Source = src
	s.Bench.Response = 0
	s.Bench.Reference = -1
	if cfg.ReferenceChannel >= 0 {
		s.Bench.Reference = 1
	}
	s.Bench.RefVoltsPerDrive = f.Response.RefVoltsPerDrive
	switch f.Drive {
	case "manual":
		if s.Drive, err = s.manualDrive(opt.Notices); err != nil {
			return err
		}
	default:
		s.Drive = card.Drive()
	}
	params := map[string]any{"device": src.Info().Name, "rate_hz": cfg.RateHz, "frames_per_buffer": cfg.FramesPerBuffer,
		"latency_s": cfg.Latency.Seconds(), "response_channel": cfg.ResponseChannel, "reference_channel": cfg.ReferenceChannel,
		"output_channels": cfg.OutputChannels, "max_level": cfg.MaxLevel, "ramp_s": cfg.Ramp.Seconds(),
		"reported_latency_in_s": in.Seconds(), "reported_latency_out_s": out.Seconds()}
	switch {
	case cal != nil:
		if err := cal.Fits(cfg, src.Info().Name, in+out); err != nil {
			return usage{fmt.Errorf("%s: %w", calPath, err)}
		}
		s.Bench.Correct = cal.Correction()
		params["calibration"] = calPath
		params["calibration_delay_s"] = cal.DelayS
	case f.SoundcardCal != "" && opt.Notices != nil:
		notice(opt.Notices, fmt.Sprintf("sound card: the calibration %s is not applied: with a reference channel the response is taken as a ratio to it",
			CalPath(s.Path, f.SoundcardCal)))
	}
	side.Rig.Params = params
	return nil
}

// CalPath resolves a calibration file named in a rig file: relative to the
// rig file's folder (the current folder for the demo).
func CalPath(rigPath, name string) string {
	if filepath.IsAbs(name) || rigPath == "" || rigPath == "demo" {
		return name
	}
	return filepath.Join(filepath.Dir(rigPath), name)
}

// cardSource is the card's source as the bench gets it. It changes three
// things in each block on the way:
//
//   - DriveHz and DriveAmp say what the drive was when the block's input
//     was played, not when its output was made: the values of lag frames
//     earlier (the card's output plus input delay as PortAudio reports it).
//     The bench starts settling a point when they show the new setting, so
//     it waits for the change to come back through the card instead of
//     settling on the response to the setting before. Before the first
//     setting has come back they report the setting's frequency at
//     amplitude 0.
//   - A block with FlagGap is not passed on, nor the block after it; the
//     next block passed on gets FlagGap. The card flags the block in which
//     its reference broke, so the break lies inside the flagged block,
//     while the bench takes a flagged block as clean data after a gap and
//     may measure on it. Holding back one block more makes a measurement
//     that starts again after a gap start at least a block (43 ms at 2048
//     frames and 48 kHz) after the break, when a short ring-down in the
//     path (a filter) is over. A resonator disturbed by a break in its
//     drive rings far longer; only settling again covers that.
//   - With a manual drive (an external generator) PhaseCyc, DriveHz and
//     DriveAmp are cleared: the card's own generator is silent and the
//     bench must track the generator on the reference input.
//
// PhaseCyc is left as it is (the generator's phase at the frame the card
// made with the input), so phases against it include the card's delay,
// which the ratio to the reference removes.
type cardSource struct {
	acquire.Source
	lag    uint64
	manual bool

	out     chan *acquire.Block
	started bool
	mu      sync.Mutex
	done    chan struct{}

	// owned by the forwarding goroutine
	hist    []driveAt // drive settings at the end of recent blocks, oldest first
	frame   uint64    // input frames seen
	hold    int       // blocks still to hold back after a gap
	gapNext bool      // the next block passed on gets FlagGap
	firstHz float64   // the first frequency the drive was set to
}

type driveAt struct {
	end     uint64 // frame count at the block's end
	hz, amp float64
}

func newCardSource(src acquire.Source, lag time.Duration, rateHz float64, manual bool) *cardSource {
	return &cardSource{Source: src, lag: uint64(math.Round(lag.Seconds() * rateHz)), manual: manual,
		out: make(chan *acquire.Block, 1), done: make(chan struct{})}
}

// Start starts the card's source and the forwarding.
func (s *cardSource) Start(ctx context.Context) error {
	if err := s.Source.Start(ctx); err != nil {
		return err
	}
	s.mu.Lock()
	defer s.mu.Unlock()
	if !s.started {
		s.started = true
		go s.forward()
	}
	return nil
}

// Blocks returns the blocks with the changes above; the channel closes when
// the card's does.
func (s *cardSource) Blocks() <-chan *acquire.Block { return s.out }

// Close closes the card (the drive ramps down first) and waits for the
// forwarding to end; safe twice.
func (s *cardSource) Close() error {
	err := s.Source.Close()
	s.mu.Lock()
	started := s.started
	s.mu.Unlock()
	if started {
		// The card's channel is closed now; the forwarder may be waiting to
		// hand a block on: take it back.
		for {
			select {
			case <-s.done:
				return err
			case b, ok := <-s.out:
				if ok {
					s.Source.Release(b)
				}
			}
		}
	}
	return err
}

func (s *cardSource) forward() {
	defer close(s.done)
	defer close(s.out)
	for b := range s.Source.Blocks() {
		if !s.adjust(b) {
			s.Source.Release(b)
			continue
		}
		s.out <- b
	}
}

// cardGapHold is how many blocks after a flagged one are held back.
const cardGapHold = 1

// adjust applies the changes described at cardSource to b and reports
// whether b is to be passed on.
func (s *cardSource) adjust(b *acquire.Block) bool {
	s.frame += uint64(b.Frames)
	pass := true
	switch {
	case b.Flags&acquire.FlagGap != 0:
		s.hold, s.gapNext, pass = cardGapHold, true, false
	case s.hold > 0:
		s.hold--
		pass = false
	case s.gapNext:
		b.Flags |= acquire.FlagGap
		s.gapNext = false
	}
	if s.manual {
		b.PhaseCyc, b.DriveHz, b.DriveAmp = nil, 0, 0
		return pass
	}
	if s.firstHz == 0 && b.DriveHz > 0 {
		s.firstHz = b.DriveHz
	}
	s.hist = append(s.hist, driveAt{end: s.frame, hz: b.DriveHz, amp: b.DriveAmp})
	if s.frame <= s.lag {
		b.DriveHz, b.DriveAmp = s.firstHz, 0
		return pass
	}
	at := s.frame - s.lag
	// The newest setting made at or before frame at.
	k := -1
	for i := len(s.hist) - 1; i >= 0; i-- {
		if s.hist[i].end <= at {
			k = i
			break
		}
	}
	if k < 0 {
		b.DriveHz, b.DriveAmp = s.firstHz, 0
		return pass
	}
	d := s.hist[k]
	s.hist = s.hist[k:] // older entries are no longer needed
	if d.hz == 0 {
		b.DriveHz, b.DriveAmp = s.firstHz, 0
		return pass
	}
	b.DriveHz, b.DriveAmp = d.hz, d.amp
	return pass
}

var _ acquire.Source = (*cardSource)(nil)
