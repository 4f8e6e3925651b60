package rig

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/cmplx"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
	"github.com/sweeplock/sweeplock/dsp/lockin"
)

// soundcardExample is the demo rig file for a real card.
func soundcardExample(t testing.TB) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "soundcard-example.toml"))
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestSoundcardExampleParses(t *testing.T) {
	f, err := Parse("soundcard-example.toml", soundcardExample(t))
	if err != nil {
		t.Fatal(err)
	}
	c := f.Soundcard
	if c == nil {
		t.Fatal("no [soundcard] table")
	}
	// The file's values, and the rig's drive limit and ramp carried into
	// the card (max_level 0.5 in [soundcard], max_amplitude 0.3: the
	// smaller holds; [soundcard] has no ramp: [drive_output]'s 500ms).
	if c.RateHz != 48000 || c.FramesPerBuffer != 2048 || c.Latency != 500*time.Millisecond || c.ResponseChannel != 0 ||
		c.ReferenceChannel != 1 || len(c.OutputChannels) != 2 || c.MaxLevel != 0.3 || c.Ramp != 500*time.Millisecond {
		t.Errorf("[soundcard] = %+v", *c)
	}
	if f.Drive != "soundcard" || f.DriveCfg.Unit != "V" || f.Response.RefVoltsPerDrive != 1 {
		t.Errorf("drive %q unit %q ref_volts_per_drive %g", f.Drive, f.DriveCfg.Unit, f.Response.RefVoltsPerDrive)
	}
}

// minimalCard is the smallest sound card rig: everything else defaults.
const minimalCard = `source = "soundcard"
[drive_output]
amplitude = 0.1
max_amplitude = 0.4
[plan]
start_hz = 100.0
stop_hz = 200.0
step_hz = 10.0
`

func TestSoundcardDefaults(t *testing.T) {
	f, err := Parse("min.toml", minimalCard)
	if err != nil {
		t.Fatal(err)
	}
	want := soundcard.DefaultConfig()
	want.MaxLevel = 0.4                // from max_amplitude (smaller than the default 0.5)
	want.Ramp = 500 * time.Millisecond // [drive_output] ramp's default
	c := f.Soundcard
	if c == nil || c.RateHz != want.RateHz || c.FramesPerBuffer != want.FramesPerBuffer || c.Latency != want.Latency ||
		c.ResponseChannel != 0 || c.ReferenceChannel != 1 || c.MaxLevel != want.MaxLevel || c.Ramp != want.Ramp {
		t.Errorf("defaults: %+v, want %+v", c, want)
	}
	if f.Drive != "soundcard" {
		t.Errorf("drive %q, want soundcard when the file names none", f.Drive)
	}
}

// Mistakes in the [soundcard] table and around it name the key, its line
// and what is allowed.
func TestSoundcardErrors(t *testing.T) {
	base := minimalCard + "[soundcard]\nrate_hz = 48000.0\n"
	cases := []struct {
		name, add, key string
		line           int
		want           []string
	}{
		{"unknown key", "rate = 44100\n", "soundcard.rate", 11, []string{"unknown key", "rate_hz", "calibration", "reference_channel"}},
		{"bad rate", "", "soundcard.rate_hz", 10, []string{"1000 is not allowed", "44100"}},
		{"DC offset", "offset = 0.2\n", "soundcard.offset", 11, []string{"AC-coupled"}},
		{"same channels", "reference_channel = 0\n", "soundcard.reference_channel", 11, []string{"other than response_channel"}},
		{"bad latency", "latency = \"forever\"\n", "soundcard", 9, []string{"soundcard.latency", "duration"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			text := base + tc.add
			if tc.name == "bad rate" {
				text = strings.Replace(text, "rate_hz = 48000.0", "rate_hz = 1000.0", 1)
			}
			_, err := Parse("card.toml", text)
			var ke *KeyError
			if !errors.As(err, &ke) || !errors.Is(err, ErrRig) {
				t.Fatalf("error %v is not a KeyError", err)
			}
			if ke.Key != tc.key || ke.Line != tc.line {
				t.Errorf("key %q line %d, want %q line %d (%v)", ke.Key, ke.Line, tc.key, tc.line, err)
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("%q lacks %q", err, w)
				}
			}
		})
	}
	// A [soundcard] table on the simulated rig.
	_, err := Parse("demo.toml", DemoText()+"\n[soundcard]\nrate_hz = 48000.0\n")
	var ke *KeyError
	if !errors.As(err, &ke) || ke.Key != "soundcard" || ke.Line == 0 || !strings.Contains(err.Error(), `source = "soundcard"`) {
		t.Errorf("[soundcard] with the sim: %v", err)
	}
	// Keys outside [soundcard] that go with a sound card.
	around := []struct {
		name, old, new, key string
		want                string
	}{
		{"drive limit above full scale", "max_amplitude = 0.4", "max_amplitude = 1.5", "drive_output.max_amplitude", "full scale"},
		{"drive unit", "amplitude = 0.1\n", "amplitude = 0.1\nunit = \"A\"\n", "drive_output.unit", "full scale"},
		{"sim drive", `source = "soundcard"`, "source = \"soundcard\"\ndrive = \"sim\"", "drive", "simulated rig only"},
		{"response channel disagrees", "[plan]", "[response]\nchannel = 2\n[plan]", "response.channel", "response_channel = 0"},
		{"manual drive without reference", `source = "soundcard"`, "source = \"soundcard\"\ndrive = \"manual\"", "soundcard.reference_channel", "reference input"},
	}
	for _, tc := range around {
		t.Run(tc.name, func(t *testing.T) {
			text := strings.Replace(base, tc.old, tc.new, 1)
			if tc.name == "manual drive without reference" {
				text += "reference_channel = -1\n"
			}
			if text == base {
				t.Fatalf("nothing to change: %q", tc.old)
			}
			_, err := Parse("card.toml", text)
			var ke *KeyError
			if !errors.As(err, &ke) {
				t.Fatalf("error %v is not a KeyError", err)
			}
			if ke.Key != tc.key || ke.Line == 0 || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("key %q line %d, want %q with %q (%v)", ke.Key, ke.Line, tc.key, tc.want, err)
			}
		})
	}
}

// fakeSource delivers the blocks it is given.
type fakeSource struct {
	blocks   chan *acquire.Block
	released []*acquire.Block
}

func (f *fakeSource) Info() acquire.SourceInfo {
	return acquire.SourceInfo{Kind: "soundcard", RateHz: 1000, Channels: []string{"r", "ref"}}
}
func (f *fakeSource) Start(context.Context) error   { return nil }
func (f *fakeSource) Blocks() <-chan *acquire.Block { return f.blocks }
func (f *fakeSource) Release(b *acquire.Block)      { f.released = append(f.released, b) }
func (f *fakeSource) Stats() acquire.SourceStats    { return acquire.SourceStats{} }
func (f *fakeSource) Err() error                    { return nil }
func (f *fakeSource) Close() error                  { return nil }
func (f *fakeSource) send(bs ...*acquire.Block) {
	go func() {
		defer close(f.blocks)
		for _, b := range bs {
			f.blocks <- b
		}
	}()
}
func blk(seq uint64, hz, amp float64, fl acquire.Flags) *acquire.Block {
	return &acquire.Block{Seq: seq, Frames: 100, RateHz: 1000, Channels: 2, DriveHz: hz, DriveAmp: amp, Flags: fl, PhaseCyc: make([]float64, 100)}
}

// The card's source as the bench gets it: the drive settings delayed by the
// card's reported latency, flagged blocks held back with the one after
// them, and a manual drive's phase cleared. (Rules of this package; the
// cases are worked by hand.)
func TestCardSourceAdjust(t *testing.T) {
	// 100-frame blocks, a lag of 250 frames: block k (ending at frame
	// 100(k+1)) reports the setting of the newest block ending at or
	// before frame 100(k+1) − 250.
	fs := &fakeSource{blocks: make(chan *acquire.Block)}
	src := newCardSource(fs, 250*time.Millisecond, 1000, false)
	in := []*acquire.Block{
		blk(0, 0, 0, 0),                  // before the first setting
		blk(1, 0, 0, 0),                  //
		blk(2, 50, 0.1, 0),               // the drive set to 50 Hz, ramping
		blk(3, 50, 0.2, 0),               // at 0.2
		blk(4, 50, 0.2, 0),               //
		blk(5, 60, 0.2, acquire.FlagGap), // a break: held back
		blk(6, 60, 0.2, 0),               // held back too
		blk(7, 60, 0.2, 0),               // passed on with FlagGap
		blk(8, 60, 0.2, 0),               //
	}
	type out struct {
		seq     uint64
		hz, amp float64
		gap     bool
	}
	want := []out{
		{0, 0, 0, false},    // frame 100 − 250 < 0: nothing set yet, and no frequency known
		{1, 0, 0, false},    // frame −50: the same
		{2, 50, 0, false},   // frame 50: before the setting: its frequency at amplitude 0
		{3, 50, 0, false},   // frame 150: block 0 (0 Hz): not yet
		{4, 50, 0, false},   // frame 250: block 1 (end 200): not yet
		{7, 50, 0.2, true},  // frame 550: block 4 (end 500): 50 Hz at 0.2
		{8, 60, 0.2, false}, // frame 650: block 5 (end 600): 60 Hz
	}
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	fs.send(in...)
	var got []out
	for b := range src.Blocks() {
		got = append(got, out{b.Seq, b.DriveHz, b.DriveAmp, b.Flags&acquire.FlagGap != 0})
	}
	if len(got) != len(want) {
		t.Fatalf("got %d blocks %v, want %d %v", len(got), got, len(want), want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("block %d: got %+v, want %+v", i, got[i], want[i])
		}
	}
	if len(fs.released) != 2 || fs.released[0].Seq != 5 || fs.released[1].Seq != 6 {
		t.Errorf("held back and released: %d blocks", len(fs.released))
	}
	src.Close()

	// Manual drive: phase and settings cleared, gaps handled the same.
	fm := &fakeSource{blocks: make(chan *acquire.Block)}
	man := newCardSource(fm, 0, 1000, true)
	man.Start(context.Background())
	fm.send(blk(0, 50, 0.2, 0), blk(1, 50, 0.2, acquire.FlagGap), blk(2, 50, 0.2, 0), blk(3, 50, 0.2, 0))
	var seqs []uint64
	for b := range man.Blocks() {
		if b.PhaseCyc != nil || b.DriveHz != 0 || b.DriveAmp != 0 {
			t.Errorf("manual drive, block %d: phase %v, %g Hz, %g", b.Seq, b.PhaseCyc != nil, b.DriveHz, b.DriveAmp)
		}
		if (b.Seq == 3) != (b.Flags&acquire.FlagGap != 0) {
			t.Errorf("manual drive, block %d: flags %v", b.Seq, b.Flags)
		}
		seqs = append(seqs, b.Seq)
	}
	if len(seqs) != 2 || seqs[0] != 0 || seqs[1] != 3 {
		t.Errorf("manual drive: blocks %v passed on, want [0 3]", seqs)
	}
	man.Close()
}

// Close drains a forwarder that waits to hand on a block nobody reads.
func TestCardSourceCloseDrains(t *testing.T) {
	fs := &fakeSource{blocks: make(chan *acquire.Block)}
	src := newCardSource(fs, 0, 1000, false)
	src.Start(context.Background())
	fs.send(blk(0, 10, 1, 0), blk(1, 10, 1, 0), blk(2, 10, 1, 0))
	time.Sleep(10 * time.Millisecond) // let the forwarder block on its send
	done := make(chan struct{})
	go func() { src.Close(); close(done) }()
	select {
	case <-done:
	case <-time.After(5 * time.Second):
		t.Fatal("Close hangs with a block waiting to be handed on")
	}
	if len(fs.released) == 0 {
		t.Error("the block taken back in Close was not released")
	}
}

// loopCal is a calibration of a card with a first-order high-pass input
// (corner fcHz) and a delay, sampled on a grid of perOctave points per
// octave from lo to hi: H(f) = jf/fc / (1 + jf/fc), the RC coupling of a
// sound card input (common practice).
func loopCal(fcHz, delayS, lo, hi float64, perOctave int) *CardCal {
	plan := acquire.Plan{StartHz: lo, StopHz: hi, Points: 2, Spacing: acquire.Linear, Direction: acquire.Up,
		MinDwellCycles: 1, MaxDwell: time.Second, MeasureCycles: 1, SettleTol: 0.01}
	c := &CardCal{Format: CalFormat, RateHz: 48000, DelayS: delayS}
	for _, f := range CalFreqs(plan, []lockin.Harmonic{{Num: 1, Den: 1}}, 48000, perOctave) {
		h := highPass(f, fcHz)
		c.Points = append(c.Points, CalPoint{FreqHz: f, Gain: cmplx.Abs(h), PhaseDeg: cmplx.Phase(h) * 180 / math.Pi})
	}
	return c
}

func highPass(f, fc float64) complex128 {
	s := complex(0, f/fc)
	return s / (1 + s)
}

// At interpolates gain and phase linearly in log f: exact for a response
// whose log-gain and phase are linear in log f, and within the bound of
// linear interpolation for the RC high-pass.
func TestCardCalAt(t *testing.T) {
	t.Run("exact between points", func(t *testing.T) {
		// g = (f/100)^0.5 and φ = 0.3·ln(f/100) rad are linear in ln f, so
		// interpolation is exact up to rounding.
		const tol = 1e-12
		c := &CardCal{Format: CalFormat, RateHz: 48000, DelayS: 0.01}
		for _, f := range []float64{100, 250, 1000, 4000} {
			c.Points = append(c.Points, CalPoint{FreqHz: f, Gain: math.Sqrt(f / 100), PhaseDeg: 0.3 * math.Log(f/100) * 180 / math.Pi})
		}
		for _, f := range []float64{100, 123.4, 250, 777, 3999} {
			want := cmplx.Rect(math.Sqrt(f/100), 0.3*math.Log(f/100)-2*math.Pi*f*0.01)
			if got := c.At(f); cmplx.Abs(got-want) > tol*cmplx.Abs(want) {
				t.Errorf("At(%g) = %v, want %v", f, got, want)
			}
		}
		// Beyond the grid: the end points, delay added.
		if got, want := c.At(50), cmplx.Rect(1, -2*math.Pi*50*0.01); cmplx.Abs(got-want) > tol {
			t.Errorf("At(50) = %v, want the first point %v", got, want)
		}
	})
	t.Run("RC high-pass", func(t *testing.T) {
		// Linear interpolation over a step h in u = ln f errs by at most
		// h²/8·max|y''(u)| (the interpolation remainder, common
		// numerical analysis). For the RC high-pass, ln|H| =
		// −½ln(1+e^{−2(u−u_c)}) has |y''| ≤ ½ and arg H = atan(e^{−(u−u_c)})
		// has |y''| ≤ ¼ (derived here); at 6 points per octave h ≤ ln2/6.
		const perOctave = 6
		h := math.Ln2 / perOctave
		gainBound := h * h / 8 * 0.5   // nepers
		phaseBound := h * h / 8 * 0.25 // rad
		const fc, delay = 5.0, 0.0123
		c := loopCal(fc, delay, 1, 500, perOctave)
		worstG, worstP := 0.0, 0.0
		for f := 1.0; f <= 500; f *= 1.013 {
			want := highPass(f, fc) * cmplx.Exp(complex(0, -2*math.Pi*f*delay))
			r := c.At(f) / want
			worstG = math.Max(worstG, math.Abs(math.Log(cmplx.Abs(r))))
			worstP = math.Max(worstP, math.Abs(cmplx.Phase(r)))
		}
		t.Logf("largest interpolation error %.3g Np (%.4f dB), %.3g rad; bounds %.3g Np, %.3g rad", worstG, worstG*20/math.Ln10, worstP, gainBound, phaseBound)
		if worstG > gainBound || worstP > phaseBound {
			t.Errorf("interpolation error %.3g Np, %.3g rad exceeds the bound %.3g Np, %.3g rad", worstG, worstP, gainBound, phaseBound)
		}
	})
}

func TestCalFreqs(t *testing.T) {
	plan := acquire.Plan{StartHz: 35, StopHz: 39, StepHz: 0.05, Spacing: acquire.Linear, Direction: acquire.UpDown,
		MinDwellCycles: 10, MaxDwell: 30 * time.Second, MeasureCycles: 20, SettleTol: 0.002}
	hs := []lockin.Harmonic{{Num: 1, Den: 1}, {Num: 1, Den: 2}, {Num: 5, Den: 1}}
	fr := CalFreqs(plan, hs, 48000, 6)
	// The span: the lowest step times 1/2 to the highest times 5.
	if fr[0] != 17.5 || math.Abs(fr[len(fr)-1]-195) > 1e-9 {
		t.Errorf("grid %.6g to %.6g Hz, want 17.5 to 195", fr[0], fr[len(fr)-1])
	}
	for i := 1; i < len(fr); i++ {
		if r := fr[i] / fr[i-1]; r > math.Pow(2, 1.0/6)*(1+1e-12) || r <= 1 {
			t.Errorf("step %d: ratio %g, want above 1 and at most 2^(1/6)", i, r)
		}
	}
	// The top is capped at 0.45 of the rate.
	if fr := CalFreqs(plan, []lockin.Harmonic{{Num: 1, Den: 1}, {Num: 1000, Den: 1}}, 48000, 6); fr[len(fr)-1] != 0.45*48000 {
		t.Errorf("top %g, want %g", fr[len(fr)-1], 0.45*48000)
	}
}

func TestCardCalChecks(t *testing.T) {
	cfg := soundcard.DefaultConfig()
	good := func() *CardCal {
		return &CardCal{Format: CalFormat, Device: "pulse", RateHz: cfg.RateHz, FramesPerBuffer: cfg.FramesPerBuffer,
			LatencyS: cfg.Latency.Seconds(), ResponseChannel: cfg.ResponseChannel, ReportedLatencyS: 1.0, DelayS: 0.7,
			Points: []CalPoint{{FreqHz: 20, Gain: 0.9, PhaseDeg: 10}, {FreqHz: 2000, Gain: 1, PhaseDeg: 0}}}
	}
	if err := good().Fits(cfg, "pulse", time.Second); err != nil {
		t.Fatalf("a matching calibration is refused: %v", err)
	}
	for _, tc := range []struct {
		name   string
		change func(c *CardCal)
		device string
		rep    time.Duration
		want   string
	}{
		{"device", nil, "hw:1", time.Second, "the rig opens"},
		{"rate", func(c *CardCal) { c.RateHz = 44100 }, "pulse", time.Second, "44100 Hz"},
		{"buffer", func(c *CardCal) { c.FramesPerBuffer = 1024 }, "pulse", time.Second, "frames_per_buffer"},
		{"input", func(c *CardCal) { c.ResponseChannel = 1 }, "pulse", time.Second, "input 1"},
		{"reported delay", nil, "pulse", time.Second + time.Millisecond, "reports a delay"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := good()
			if tc.change != nil {
				tc.change(c)
			}
			err := c.Fits(cfg, tc.device, tc.rep)
			if !errors.Is(err, ErrCal) || !strings.Contains(err.Error(), tc.want) || !strings.Contains(err.Error(), "calibrate again") {
				t.Errorf("Fits: %v, want one naming %q", err, tc.want)
			}
		})
	}
	if err := good().Covers(20, 2000); err != nil {
		t.Errorf("Covers its own span: %v", err)
	}
	if err := good().Covers(10, 2000); !errors.Is(err, ErrCal) || !strings.Contains(err.Error(), "10 to 2000") {
		t.Errorf("Covers beyond the grid: %v", err)
	}
	bad := good()
	bad.Points[1].FreqHz = 10
	if err := bad.Check(); !errors.Is(err, ErrCal) || !strings.Contains(err.Error(), "increase") {
		t.Errorf("Check of decreasing frequencies: %v", err)
	}
}

func TestCardCalFileRoundTrip(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "cal.json")
	c := loopCal(5, 0.68, 20, 2000, 3)
	c.Measured = time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)
	if err := WriteCardCal(p, c); err != nil {
		t.Fatal(err)
	}
	// Written again over the old one (a calibration is measured again often).
	if err := WriteCardCal(p, c); err != nil {
		t.Fatal(err)
	}
	back, err := ReadCardCal(p)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []float64{20, 77, 2000} {
		if a, b := c.At(f), back.At(f); a != b {
			t.Errorf("At(%g): %v written, %v read", f, a, b)
		}
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("the folder holds %d files, want the calibration only", len(ents))
	}
	if _, err := ReadCardCal(filepath.Join(dir, "none.json")); !errors.Is(err, ErrCal) || !strings.Contains(err.Error(), "sweeplock calibrate") {
		t.Errorf("missing file: %v", err)
	}
	if got := CalPath("rigs/bench.toml", "cal.json"); got != filepath.Join("rigs", "cal.json") {
		t.Errorf("CalPath = %q", got)
	}
	if got := DefaultCalPath("rigs/bench.toml"); got != filepath.Join("rigs", "bench-card-cal.json") {
		t.Errorf("DefaultCalPath = %q", got)
	}
}

// FuzzCardCal: any bytes give a checked calibration or an error, never a
// panic; a calibration that passes Check has a finite response everywhere.
func FuzzCardCal(f *testing.F) {
	b, _ := json.Marshal(loopCal(5, 0.68, 20, 2000, 3))
	f.Add(b)
	f.Add([]byte(`{"format":"sweeplock-card-response/1","rate_hz":48000,"points":[{"freq_hz":1,"gain":1},{"freq_hz":2,"gain":1e308}]}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		var c CardCal
		if json.Unmarshal(data, &c) != nil || c.Check() != nil {
			return
		}
		for _, fr := range []float64{1e-3, c.Points[0].FreqHz, 1, 1000, 1e6} {
			if z := c.At(fr); cmplx.IsNaN(z) || cmplx.IsInf(z) {
				t.Fatalf("At(%g) = %v for a checked calibration", fr, z)
			}
		}
	})
}

func BenchmarkCardSourceAdjust(b *testing.B) {
	s := newCardSource(&fakeSource{}, time.Second, 48000, false)
	blocks := make([]*acquire.Block, 64)
	for i := range blocks {
		blocks[i] = &acquire.Block{Seq: uint64(i), Frames: 2048, DriveHz: 1000, DriveAmp: 0.2}
	}
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		blk := blocks[i%len(blocks)]
		blk.Flags = 0
		s.adjust(blk)
	}
}

// A rig without a reference that names a calibration has it read and
// checked against the plan before the card is opened: a missing file or a
// grid that does not span the plan's harmonics is a mistake in the rig
// (exit 2), whether or not this binary has sound card support.
func TestSoundcardCalibrationChecked(t *testing.T) {
	dir := t.TempDir()
	text := minimalCard + "[soundcard]\nreference_channel = -1\ncalibration = \"cal.json\"\n"
	rigPath := filepath.Join(dir, "card.toml")
	if err := os.WriteFile(rigPath, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Open(rigPath, Options{})
	if !errors.Is(err, ErrCal) || !IsUsage(err) || !strings.Contains(err.Error(), filepath.Join(dir, "cal.json")) {
		t.Errorf("missing calibration: %v (usage %v)", err, IsUsage(err))
	}
	// The plan runs 100 to 200 Hz with harmonics 1, 2, 3, 5: 100 to 1000 Hz.
	if err := WriteCardCal(filepath.Join(dir, "cal.json"), loopCal(5, 0.5, 100, 900, 3)); err != nil {
		t.Fatal(err)
	}
	_, err = Open(rigPath, Options{})
	if !errors.Is(err, ErrCal) || !IsUsage(err) || !strings.Contains(err.Error(), "100 to 1000 Hz") {
		t.Errorf("calibration short of the plan: %v", err)
	}
}
