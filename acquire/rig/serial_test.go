package rig

import (
	"context"
	"errors"
	"os"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/creack/pty"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/serialadc"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
)

const serialExample = "../../testdata/serial-example.toml"

func readText(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// The example rig files parse, their [serial] tables land in
// serialadc.Config, and a serial rig without a drive line gets the manual
// drive.
func TestSerialRigFiles(t *testing.T) {
	for _, path := range []string{serialExample, "../../testdata/serial-demo.toml"} {
		f, err := Parse(path, readText(t, path))
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		if f.Source != "serial" || f.Drive != "manual" || f.Serial == nil || f.Serial.Format != serialadc.FormatBinary {
			t.Errorf("%s: source %q drive %q serial %+v", path, f.Source, f.Drive, f.Serial)
		}
	}
	f, err := Parse("example", readText(t, serialExample))
	if err != nil {
		t.Fatal(err)
	}
	c := f.Serial
	// 5 V over 1024 codes, the firmware's AVcc reference (firmware/binary/main.c).
	if c.Port != "/dev/ttyACM0" || c.Baud != 1000000 || c.RateHz != 4000 || len(c.Channels) != 2 ||
		c.Calibration["tip"].Gain != 5.0/1024 || c.StallTimeout != 2*time.Second || c.Reference != "drive" {
		t.Errorf("example [serial]: %+v", c)
	}
	noDrive := strings.Replace(readText(t, serialExample), "drive = \"manual\"", "", 1)
	f, err = Parse("example", noDrive)
	if err != nil || f.Drive != "manual" {
		t.Errorf("without a drive line: drive %q, err %v", f.Drive, err)
	}
}

// Mistakes in a [serial] rig file name the key, its line and what is
// allowed, as for the rest of the file.
func TestSerialRigErrors(t *testing.T) {
	base := readText(t, serialExample)
	cases := []struct {
		name      string
		from, to  string // replace the first from with to
		key       string // the KeyError's key
		lineStart string // the line the error must point at starts so
		msg       string // the message must contain this
	}{
		{"unknown key", `baud = 1000000`, "prot = 3", "serial.prot", "prot", "port, baud, format, channels"},
		{"unknown calibration key", "[serial.calibration.tip]\ngain", "[serial.calibration.tip]\ngian", "serial.calibration.tip.gian", "gian", "gain, offset, table"},
		{"bad format", `format = "binary"`, `format = "csv"`, "serial.format", "format =", `"text" or "binary"`},
		{"rails", "counts_max = 1023", "counts_max = 0", "serial.counts_max", "counts_max", "above counts_min"},
		{"table order", "[serial.calibration.tip]\ngain = 0.0048828125     # 5 V / 1024 counts (AVcc reference)\noffset = 0.0",
			"[serial.calibration.tip]\ntable = [{counts = 0, volts = 0.0}, {counts = 0, volts = 5.0}]",
			"serial.calibration.tip.table[1].counts", "table =", "strictly above"},
		{"channel index", "unit = \"mm\"", "channel = 1\nunit = \"mm\"", "response.channel", "channel = 1", `[serial] response = "tip" is channel 0`},
		{"reference index", "unit = \"mm\"", "reference_channel = 0\nunit = \"mm\"", "response.reference_channel", "reference_channel", `reference = "drive"`},
		{"sim drive", `drive = "manual"`, `drive = "sim"`, "drive", "drive =", `use drive = "manual"`},
		{"sensor", "stall_timeout", "sensor = \"velocity\"\nstall_timeout", "serial.sensor", "sensor = \"velocity\"", `[response] sensor = "displacement"`},
		{"no table", "[serial]", "[serial_not]", "serial_not", "[serial_not]", "unknown key"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if !strings.Contains(base, tc.from) {
				t.Fatalf("the example has no %q", tc.from)
			}
			text := strings.Replace(base, tc.from, tc.to, 1)
			_, err := Parse("x.toml", text)
			var ke *KeyError
			if !errors.As(err, &ke) || !errors.Is(err, ErrRig) {
				t.Fatalf("got %v, want a KeyError", err)
			}
			want := 0
			for i, l := range strings.Split(text, "\n") {
				if strings.HasPrefix(strings.TrimSpace(l), tc.lineStart) {
					want = i + 1
					break
				}
			}
			if ke.Key != tc.key && !strings.HasPrefix(ke.Key, tc.key) {
				t.Errorf("key %q, want %q (%v)", ke.Key, tc.key, err)
			}
			if ke.Line != want {
				t.Errorf("line %d, want %d (%v)", ke.Line, want, err)
			}
			if !strings.Contains(err.Error(), tc.msg) {
				t.Errorf("%v\nshould say %q", err, tc.msg)
			}
		})
	}
}

// A rig whose port is not there fails at Build, before anything runs,
// naming the port and where to look; a port that is there builds a serial
// source with the channels named in [serial] and a manual drive.
func TestSerialBuild(t *testing.T) {
	text := readText(t, serialExample)
	f, err := Parse(serialExample, text)
	if err != nil {
		t.Fatal(err)
	}
	f.Serial.Port = "/nonexistent/ttyADC9"
	_, err = Build(f, text, serialExample, Options{})
	if !errors.Is(err, ErrPortMissing) || IsUsage(err) || !strings.Contains(err.Error(), "/nonexistent/ttyADC9") ||
		!strings.Contains(err.Error(), "sweeplock devices") || !strings.Contains(err.Error(), serialExample) {
		t.Fatalf("missing port: %v (usage %v)", err, IsUsage(err))
	}

	leader, follower, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminals here: %v", err)
	}
	defer leader.Close()
	defer follower.Close()
	f, err = Parse(serialExample, text)
	if err != nil {
		t.Fatal(err)
	}
	f.Serial.Port = follower.Name()
	s, err := Build(f, text, serialExample, Options{})
	if err != nil {
		t.Fatal(err)
	}
	info, drv := s.Source.Info(), s.Drive.Info()
	if info.Kind != "serial" || info.Name != follower.Name() || info.RateHz != 4000 || len(info.Channels) != 2 ||
		s.Bench.Response != 0 || s.Bench.Reference != 1 || s.Bench.RefVoltsPerDrive != 0.25 ||
		s.Bench.VoltsPerUnit != 2 || s.Bench.OffsetV != 2.5 || s.Bench.ExpectedTauS != 0.5 {
		t.Errorf("source %+v bench %+v", info, s.Bench)
	}
	if drv.Kind != "manual" || drv.Coherent || drv.MaxAmp != 2 || drv.Unit != "V" {
		t.Errorf("drive %+v", drv)
	}
	if s.Bench.Sidecar == nil || s.Bench.Sidecar.Rig.Params["port"] != follower.Name() {
		t.Errorf("sidecar %+v", s.Bench.Sidecar)
	}
	if !strings.Contains(s.Describe(), follower.Name()) {
		t.Errorf("describe: %s", s.Describe())
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
}

// lockedBuf is a writer safe for the watcher's goroutine.
type lockedBuf struct {
	mu sync.Mutex
	b  strings.Builder
}

func (l *lockedBuf) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuf) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// With Notices, a silent port is reported, and so is data flowing again;
// the manual drive's requests are written there too.
func TestSerialNotices(t *testing.T) {
	leader, follower, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminals here: %v", err)
	}
	defer leader.Close()
	defer follower.Close()
	text := readText(t, serialExample)
	f, err := Parse(serialExample, text)
	if err != nil {
		t.Fatal(err)
	}
	f.Serial.Port = follower.Name()
	var out lockedBuf
	s, err := Build(f, text, serialExample, Options{Notices: &out})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ws := s.Source.(*watchedSource)
	ws.after, ws.every, ws.poll = 50*time.Millisecond, time.Hour, 5*time.Millisecond
	if err := s.Source.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go func() {
		for range s.Source.Blocks() {
		}
	}()
	waitFor := func(what string) {
		t.Helper()
		deadline := time.Now().Add(20 * time.Second) // a hang guard, not a speed requirement
		for !strings.Contains(out.String(), what) {
			if time.Now().After(deadline) {
				t.Fatalf("no notice %q; got:\n%s", what, out.String())
			}
			time.Sleep(5 * time.Millisecond)
		}
	}
	waitFor("serial port " + follower.Name() + ": no data for")
	if _, err := leader.Write([]byte{serialadc.Sync0, serialadc.Sync1, 0, 0}); err != nil {
		t.Fatal(err)
	}
	waitFor(": data again after")
	if err := s.Drive.Set(36.5, 1.5); err != nil {
		t.Fatal(err)
	}
	waitFor("generator: set 36.5000 Hz at 1.5 V (limit 2 V)")
	if err := s.Drive.Set(36.5, 2.5); !errors.Is(err, acquire.ErrDriveLimit) {
		t.Errorf("above the limit: %v", err)
	}
	if err := s.Drive.Off(context.Background()); err != nil || s.Drive.Amp() != 0 {
		t.Errorf("off: %v, amp %g", err, s.Drive.Amp())
	}
	waitFor("generator: turn the amplitude down to 0 V, gradually")
	if n := strings.Count(out.String(), ": no data for"); n != 1 {
		t.Errorf("%d waiting notices with a one-hour repeat:\n%s", n, out.String())
	}
}

// A serial source with the sound card's output as the drive parses, and
// a build without sound card support says so plainly when it is built.
func TestSerialWithSoundcardDrive(t *testing.T) {
	text := strings.Replace(readText(t, serialExample), `drive = "manual"`, `drive = "soundcard"`, 1)
	f, err := Parse(serialExample, text)
	if err != nil {
		t.Fatalf("serial source with a sound card drive: %v", err)
	}
	if f.Drive != "soundcard" {
		t.Fatalf("drive = %q", f.Drive)
	}
	leader, follower, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminals here: %v", err)
	}
	defer leader.Close()
	defer follower.Close()
	f.Serial.Port = follower.Name()
	s, err := Build(f, text, serialExample, Options{})
	if err == nil {
		// Built with -tags portaudio and a sound device: the drive is the card's.
		defer s.Close()
		if s.Drive.Info().Kind != "soundcard" {
			t.Errorf("drive kind %q", s.Drive.Info().Kind)
		}
		return
	}
	if !errors.Is(err, soundcard.ErrNotBuilt) && !errors.Is(err, soundcard.ErrDevice) {
		t.Errorf("building a serial rig with a sound card drive: %v", err)
	}
}
