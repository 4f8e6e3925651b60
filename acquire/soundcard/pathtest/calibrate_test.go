//go:build portaudio

package pathtest

import (
	"context"
	"math"
	"math/cmplx"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/sweep"
)

// calRig has no reference channel, so a sweep on it uses the calibration
// it names.
const calRig = `
name = "null-sink loopback, no reference"
source = "soundcard"
drive = "soundcard"

[soundcard]
response_channel = 0
reference_channel = -1
output_channels = [0, 1]
calibration = "loop-cal.json"

[response]
unit = "FS"
sensor = "displacement"
volts_per_unit = 1.0

[drive_output]
amplitude = 0.3
max_amplitude = 0.5
ramp = "200ms"

[plan]
start_hz = 800.0
stop_hz = 1250.0
points = 4
spacing = "log"
direction = "up"
min_dwell_cycles = 10
max_dwell = "20s"
measure_cycles = 20
settle_tol = 0.002

[measure]
harmonics = ["1", "2"]
settle_cycles = 2
`

// TestCalibrateLoopback runs `sweeplock calibrate` through the plain
// null-sink loopback (output 0 comes back on input 0) and then a sweep of
// the same rig without a reference.
//
// The loopback is digital end to end at one rate (PortAudio, ALSA's pulse
// plugin and a null sink, all at 48 kHz, 16 bits in the sink), so its
// response is exactly a delay of whole frames at unity gain (a property
// of the setup, not a published value): the calibration must find gain
// 1, phase 0 once the delay is out, and a delay of a whole number of
// frames. The sweep then measures the raw response against the generator
// (no reference), which the calibration must predict: that checks the
// interpolation and that the card's delay is the same in a new stream.
func TestCalibrateLoopback(t *testing.T) {
	d := startDaemon(t, oneSink, true)
	dir := t.TempDir()
	rigPath := filepath.Join(dir, "loop.toml")
	if err := os.WriteFile(rigPath, []byte(calRig), 0o644); err != nil {
		t.Fatal(err)
	}
	start := time.Now()
	code, out, errOut := runBinary(t, d, dir, "calibrate", "--rig", rigPath, "--per-octave", "3")
	t.Logf("calibrate: exit %d in %.1f s\n%s%s", code, time.Since(start).Seconds(), out, quiet(errOut))
	if code != 0 {
		t.Fatalf("calibrate exit %d", code)
	}
	calPath := filepath.Join(dir, "loop-cal.json")
	if !strings.Contains(out, "wrote "+calPath) {
		t.Errorf("calibrate does not say it wrote %s", calPath)
	}
	cal, err := rig.ReadCardCal(calPath)
	if err != nil {
		t.Fatal(err)
	}
	// gainTol: 16-bit samples; a 0.25 tone fitted over 0.2 s is off by
	// about 1e−6, the rounding of the level itself by 3e−5 at most.
	const gainTol = 1e-4
	// phaseTolDeg: noise moves each phase by about 1e−5 rad; the delay,
	// from the probes 80 Hz apart, is then off by about
	// √2·1e−5/(2π·80 Hz) = 3e−8 s, which turns the phase at the top of the
	// grid (2.5 kHz) by 0.025°. 0.2° is eight times that; a frame of delay
	// would be 19° there.
	const phaseTolDeg = 0.2
	// frameTol: the delay in frames must be whole to this.
	const frameTol = 0.01
	lo, hi := 800.0, 2500.0 // the plan's span times the harmonics 1 and 2
	if n := len(cal.Points); n < 2 || cal.Points[0].FreqHz > lo*(1+1e-9) || cal.Points[n-1].FreqHz < hi*(1-1e-9) {
		t.Fatalf("the grid %v does not span %g to %g Hz", cal.Points, lo, hi)
	}
	for _, p := range cal.Points {
		if math.Abs(p.Gain-1) > gainTol || math.Abs(p.PhaseDeg) > phaseTolDeg {
			t.Errorf("%.3f Hz: gain %.6f, phase %.4f° (delay out); want 1 ± %g and 0 ± %g°", p.FreqHz, p.Gain, p.PhaseDeg, gainTol, phaseTolDeg)
		}
	}
	frames := cal.DelayS * cal.RateHz
	t.Logf("delay %.9f s = %.4f frames; PortAudio reports %.6f s", cal.DelayS, frames, cal.ReportedLatencyS)
	if math.Abs(frames-math.Round(frames)) > frameTol || frames <= 0 {
		t.Errorf("delay %.4f frames: a digital loopback delays by whole frames", frames)
	}

	// A sweep of the same rig, no reference: the raw response against the
	// generator must be what the calibration says.
	setup, err := rig.Open(rigPath, rig.Options{Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer setup.Close()
	if setup.Correct == nil || setup.Bench.Reference != -1 {
		t.Fatalf("the rig's setup has no correction (reference %d)", setup.Bench.Reference)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	res, err := sweep.Run(ctx, setup.Source, setup.Drive, setup.Bench, sweep.Options{})
	if err != nil {
		t.Fatal(err)
	}
	// predictDB, predictDeg: the same loopback measured twice, 16-bit
	// noise aside; one frame more or less of delay in the new stream
	// would turn the phase by 360°·f/fs, 6° at 800 Hz.
	const predictDB, predictDeg = 0.01, 0.5
	for _, p := range res.Points {
		got := cmplx.Rect(p.Amp[0]/p.DriveAmp, p.PhaseDeg[0]*math.Pi/180)
		want := setup.Correct(p.FreqSetHz)
		r := got / want
		errDB, errDeg := 20*math.Log10(cmplx.Abs(r)), cmplx.Phase(r)*180/math.Pi
		t.Logf("point %d %.3f Hz: raw %.5f ∠%+8.3f°, calibration %.5f ∠%+8.3f° (%+.4f dB, %+.3f°) %s %s", p.Index, p.FreqSetHz,
			cmplx.Abs(got), p.PhaseDeg[0], cmplx.Abs(want), cmplx.Phase(want)*180/math.Pi, errDB, errDeg, p.SettleState, p.Flags)
		if math.Abs(errDB) > predictDB || math.Abs(errDeg) > predictDeg {
			t.Errorf("point %d at %.3f Hz: the raw response is %.4f dB, %.3f° off the calibration", p.Index, p.FreqSetHz, errDB, errDeg)
		}
	}
	if !res.Completed || len(res.Points) != 4 {
		t.Errorf("sweep completed %v with %d points, want 4", res.Completed, len(res.Points))
	}
}
