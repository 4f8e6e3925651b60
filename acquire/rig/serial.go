package rig

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"reflect"
	"strings"
	"sync"
	"time"

	"github.com/BurntSushi/toml"
	"github.com/charmbracelet/x/term"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/serialadc"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
)

// A rig with source = "serial" reads a microcontroller ADC over a serial
// port. Its [serial] table is serialadc.Config (port, baud, format,
// channels, rate, ADC rails, counts → volts calibration per channel; see
// testdata/serial-example.toml). The rest of the file keeps its meaning:
// [response] turns the response channel's volts into the display unit
// (volts_per_unit, offset_v) and says what the sensor measures; the
// channels themselves are named in [serial] (response, reference), so
// [response] channel and reference_channel may be left out and, when
// written, must agree with them.
//
// The drive with a serial source is "manual" (an external generator the
// person sets by hand; the default when the file names no drive) or, once
// it is available, "soundcard". "sim" is refused: the simulated coil driver
// belongs to the simulated rig (tests pair it with a serial source by hand).
//
// When the port is missing at Build the rig fails at once with
// ErrPortMissing, naming the port and the ports there are. When the port is
// there but silent, or the cable is pulled during a run, the source keeps
// trying to reopen it and the bench waits (no point is measured across the
// break); with Options.Notices set, the wait is reported there every
// noticeEvery, and Ctrl-C ends the run the usual way, ramping the drive down.

// ErrPortMissing: the rig's serial port does not exist when the rig is built.
var ErrPortMissing = errors.New("rig: serial port not found")

// noticeEvery is how often a wait for a silent or missing port is reported.
const noticeEvery = 15 * time.Second

// noticeAfter is how long the port may be without data before the first
// report: opening a USB serial port resets many boards, which then take a
// second or so to start sending.
const noticeAfter = 2 * time.Second

// tomlKeys lists the toml keys of a struct's fields, in field order.
func tomlKeys(v any) []string {
	t := reflect.TypeOf(v)
	var out []string
	for i := 0; i < t.NumField(); i++ {
		name, _, _ := strings.Cut(t.Field(i).Tag.Get("toml"), ",")
		if name != "" && name != "-" {
			out = append(out, name)
		}
	}
	return out
}

// serialAllowed says which keys are allowed in a sub-table of [serial]
// (a channel's calibration, or a point of its table).
func serialAllowed(sec string) (string, bool) {
	rest, ok := strings.CutPrefix(sec, "serial.calibration.")
	if !ok {
		return "", false
	}
	if strings.Contains(rest, ".") {
		return strings.Join(tomlKeys(serialadc.CalPoint{}), ", "), true
	}
	return strings.Join(tomlKeys(serialadc.Calibration{}), ", ") + " (a channel's calibration: gain and offset, or a table of {counts, volts} points)", true
}

// decodeSerial decodes the [serial] table.
func decodeSerial(md toml.MetaData, p toml.Primitive, name string, lines map[string]int) (*serialadc.Config, error) {
	var sc serialadc.Config
	if err := md.PrimitiveDecode(p, &sc); err != nil {
		return nil, &KeyError{File: name, Key: "serial", Line: lines["serial"], Msg: err.Error()}
	}
	return &sc, nil
}

// serialIndex returns the position of a channel name in the config.
func serialIndex(c serialadc.Config, ch string) int {
	for i, n := range c.Channels {
		if n == ch {
			return i
		}
	}
	return -1
}

// checkSerial checks the [serial] table and how the rest of the file goes
// with a serial source.
func (f *File) checkSerial(name string, lines map[string]int) error {
	bad := func(key, msg string) error {
		return &KeyError{File: name, Key: key, Line: lines[key], Msg: msg}
	}
	if f.Source == "serial" && f.Serial == nil {
		return bad("serial", `source = "serial" needs a [serial] table: port, format, channels, rate_hz, the ADC's counts_min and counts_max, and a calibration for each channel (see testdata/serial-example.toml)`)
	}
	if f.Serial == nil {
		return nil
	}
	if err := f.Serial.Validate(); err != nil {
		var ce *serialadc.ConfigError
		if !errors.As(err, &ce) {
			return bad("serial", err.Error())
		}
		key := "serial." + ce.Key
		if i := strings.IndexByte(key, '['); i >= 0 {
			key = key[:i] // calibration.x.table[2].counts: the table's line
		}
		return &KeyError{File: name, Key: "serial." + ce.Key, Line: lineOf(lines, key),
			Msg: fmt.Sprintf("%s is not allowed: %s", ce.Value, ce.Allowed)}
	}
	if f.Source != "serial" {
		return nil
	}
	c := f.Serial.WithDefaults()
	if _, written := lines["drive"]; !written {
		f.Drive = "manual"
	}
	switch f.Drive {
	case "sim":
		return bad("drive", `"sim" drives the simulated rig only; with source = "serial" use drive = "manual" (an external generator you set by hand)`)
	case "soundcard":
		// The sound card's output drives; its inputs are not read. The
		// bench tracks the drive's frequency from the response (or the
		// reference channel) by a sine fit, since the two clocks differ.
	}
	resp := serialIndex(c, c.Response)
	if _, written := lines["response.channel"]; written && f.Response.Channel != resp {
		return bad("response.channel", fmt.Sprintf("%d, but [serial] response = %q is channel %d of %q: with a serial source name the channels in [serial] and leave response.channel out",
			f.Response.Channel, c.Response, resp, c.Channels))
	}
	ref := -1
	if c.Reference != "" {
		ref = serialIndex(c, c.Reference)
	}
	if rc := f.Response.ReferenceChannel; rc != nil && *rc != ref {
		return bad("response.reference_channel", fmt.Sprintf("%d, but [serial] reference = %q (channel %d, -1 for none): with a serial source name the reference in [serial] and leave response.reference_channel out",
			*rc, c.Reference, ref))
	}
	if _, written := lines["serial.sensor"]; written && c.Sensor != f.Response.Sensor {
		return bad("serial.sensor", fmt.Sprintf("%q, but [response] sensor = %q: the bench takes the sensor from [response]; leave serial.sensor out or make them agree",
			c.Sensor, f.Response.Sensor))
	}
	return nil
}

// lineOf finds the line of a dotted key, or of the nearest table above it.
func lineOf(lines map[string]int, key string) int {
	for key != "" {
		if l, ok := lines[key]; ok {
			return l
		}
		i := strings.LastIndexByte(key, '.')
		if i < 0 {
			break
		}
		key = key[:i]
	}
	return 0
}

// buildSerial makes the serial source and its drive.
func (s *Setup) buildSerial(opt Options, side *acquire.Sidecar) error {
	f := s.File
	c := f.Serial.WithDefaults()
	if err := portPresent(c.Port, s.Path); err != nil {
		return err
	}
	src, err := serialadc.New(c)
	if err != nil {
		return usage{fmt.Errorf("%w: %v", ErrRig, err)}
	}
	ws := &watchedSource{Source: src, w: opt.Notices, port: c.Port, after: noticeAfter, every: noticeEvery, poll: 250 * time.Millisecond}
	s.closers = append(s.closers, ws)
	s.Source = ws
	s.Bench.Response = serialIndex(c, c.Response)
	s.Bench.Reference = -1
	if c.Reference != "" {
		s.Bench.Reference = serialIndex(c, c.Reference)
	}
	if f.Drive == "soundcard" {
		cfg := soundcard.DefaultConfig()
		if f.Soundcard != nil {
			cfg = *f.Soundcard
		}
		card, err := soundcard.Open(cfg, soundcard.Options{})
		if err != nil {
			if errors.Is(err, soundcard.ErrConfig) {
				return usage{fmt.Errorf("%w: %v", ErrRig, err)}
			}
			return err
		}
		s.closers = append(s.closers, card)
		s.Drive = card.Drive()
	} else {
		drv, err := s.manualDrive(opt.Notices)
		if err != nil {
			return err
		}
		s.Drive = drv
	}
	side.Rig.Params = map[string]any{"port": c.Port, "baud": c.Baud, "format": c.Format, "channels": c.Channels,
		"response": c.Response, "reference": c.Reference, "rate_hz": c.RateHz, "block_frames": c.BlockFrames,
		"values": c.Values, "counts_min": c.CountsMin, "counts_max": c.CountsMax, "timestamps": c.Timestamps}
	return nil
}

// manualDrive makes the drive = "manual" generator; its requests go to w.
func (s *Setup) manualDrive(w io.Writer) (acquire.Drive, error) {
	d := s.File.DriveCfg
	var notify func(acquire.ManualSetting)
	if w != nil {
		notify = func(m acquire.ManualSetting) {
			if m.Amp == 0 {
				notice(w, fmt.Sprintf("generator: turn the amplitude down to 0 %s, gradually (at %.4f Hz)", d.Unit, m.FreqHz))
				return
			}
			notice(w, fmt.Sprintf("generator: set %.4f Hz at %.4g %s (limit %.4g %s)", m.FreqHz, m.Amp, d.Unit, d.MaxAmplitude, d.Unit))
		}
	}
	drv, err := acquire.NewManualDrive(d.Unit, d.MaxAmplitude, notify)
	if err != nil {
		return nil, usage{err}
	}
	return drv, nil
}

// portPresent fails with ErrPortMissing when the port's path does not
// exist, naming the ports the system lists.
func portPresent(port, rigPath string) error {
	if _, err := os.Stat(port); err == nil {
		return nil
	}
	where := rigPath
	if where == "" {
		where = "the rig file"
	}
	list := "the system lists no serial ports"
	if ports, err := serialadc.ListPorts(); err == nil && len(ports) > 0 {
		names := make([]string, len(ports))
		for i, p := range ports {
			names[i] = p.Path
		}
		list = "ports here: " + strings.Join(names, ", ")
	}
	return fmt.Errorf("%w: %s, named in %s [serial] port: plug the board in, or give the port it has (%s; `sweeplock devices` shows them with their USB details)",
		ErrPortMissing, port, where, list)
}

// notice writes one line to w; on a terminal it first clears the line, so
// it does not run into a progress line being redrawn there.
func notice(w io.Writer, msg string) {
	if f, ok := w.(*os.File); ok && term.IsTerminal(f.Fd()) {
		fmt.Fprint(w, "\r\x1b[K")
	}
	fmt.Fprintln(w, msg)
}

// watchedSource is a serial source that reports on w when its port is
// missing or silent, and when data flows again.
type watchedSource struct {
	*serialadc.Source
	w     io.Writer
	port  string
	after time.Duration // first report once the port has been without data this long
	every time.Duration // then report again this often
	poll  time.Duration // how often the source's state is read

	mu      sync.Mutex
	stop    chan struct{}
	done    chan struct{}
	stopped bool
}

// Start starts the source and, with a notice writer, its watcher.
func (s *watchedSource) Start(ctx context.Context) error {
	if err := s.Source.Start(ctx); err != nil {
		return err
	}
	if s.w == nil {
		return nil
	}
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.stopped || s.stop != nil {
		return nil
	}
	s.stop, s.done = make(chan struct{}), make(chan struct{})
	go s.watch(ctx, s.stop, s.done)
	return nil
}

// Close stops the watcher, then the source; safe twice.
func (s *watchedSource) Close() error {
	s.mu.Lock()
	stop, done := s.stop, s.done
	first := !s.stopped
	s.stopped = true
	s.mu.Unlock()
	if first && stop != nil {
		close(stop)
		<-done
	}
	return s.Source.Close()
}

// watch polls the source's state and reports waits for data.
func (s *watchedSource) watch(ctx context.Context, stop <-chan struct{}, done chan<- struct{}) {
	defer close(done)
	tick := time.NewTicker(s.poll)
	defer tick.Stop()
	lastData := time.Now()
	var told time.Time // when the current wait was last reported; zero: not reported
	for {
		select {
		case <-ctx.Done():
			return
		case <-stop:
			return
		case now := <-tick.C:
			st := s.Source.Stats()
			if st.Connected {
				if !told.IsZero() {
					notice(s.w, fmt.Sprintf("serial port %s: data again after %.1f s; no point is measured across the break", s.port, now.Sub(lastData).Seconds()))
					told = time.Time{}
				}
				lastData = now
				continue
			}
			wait := now.Sub(lastData)
			if wait < s.after || (!told.IsZero() && now.Sub(told) < s.every) {
				continue
			}
			told = now
			notice(s.w, fmt.Sprintf("serial port %s: no data for %.0f s (%s); still waiting, Ctrl-C stops and ramps the drive down", s.port, wait.Seconds(), st.Detail))
		}
	}
}
