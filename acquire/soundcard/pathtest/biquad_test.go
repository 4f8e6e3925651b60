//go:build portaudio

package pathtest

import (
	"context"
	"fmt"
	"math"
	"math/cmplx"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/sweep"
	"github.com/sweeplock/sweeplock/dsp"
)

// The band-pass filter of the sound path: sox's bandpass effect at centre
// f0 with quality factor Q. sox(1) documents it as "a two-pole Butterworth
// band-pass ... described in detail in [1]", [1] being R. Bristow-Johnson,
// "Cookbook formulae for audio EQ biquad filter coefficients" (the Audio EQ
// Cookbook); without -c it is the cookbook's "constant 0 dB peak gain"
// band-pass, with -c the "constant skirt gain, peak gain = Q" one. Width
// "5q" gives Q directly.
const (
	biquadF0 = 1000.0 // Hz
	biquadQ  = 5.0
)

// bpf is the cookbook's band-pass biquad with constant 0 dB peak gain
// (Bristow-Johnson, Audio EQ Cookbook, "BPF: H(s) = (s/Q)/(s² + s/Q + 1)
// (constant 0 dB peak gain)", by the bilinear transform):
//
//	w0 = 2π·f0/Fs, α = sin(w0)/(2Q),
//	b0 = α, b1 = 0, b2 = −α, a0 = 1 + α, a1 = −2cos w0, a2 = 1 − α,
//
// normalised by a0, and its response H(e^{jω}) = (b0 + b1 z⁻¹ + b2 z⁻²) /
// (1 + a1 z⁻¹ + a2 z⁻²) at z = e^{jω}, ω = 2πf/Fs.
type bpf struct{ b0, b1, b2, a1, a2 float64 }

func cookbookBPF(f0, q, fs float64) bpf {
	w0 := 2 * math.Pi * f0 / fs
	alpha := math.Sin(w0) / (2 * q)
	a0 := 1 + alpha
	return bpf{b0: alpha / a0, b1: 0, b2: -alpha / a0, a1: -2 * math.Cos(w0) / a0, a2: (1 - alpha) / a0}
}

func (h bpf) at(f, fs float64) complex128 {
	z1 := cmplx.Exp(complex(0, -2*math.Pi*f/fs)) // z⁻¹
	num := complex(h.b0, 0) + complex(h.b1, 0)*z1 + complex(h.b2, 0)*z1*z1
	den := 1 + complex(h.a1, 0)*z1 + complex(h.a2, 0)*z1*z1
	return num / den
}

// soxCoefficients asks sox for the coefficients of an effect (its --plot
// octave output names them in a freqz call) and returns b and a.
func soxCoefficients(t *testing.T, effect ...string) (b, a []float64) {
	t.Helper()
	args := append([]string{"--plot", "octave", "-n", "-r", strconv.Itoa(pathRateHz), "-n"}, effect...)
	// sox exits with status 2 after printing the plot (it processes no
	// audio): the output is what counts.
	out, err := execOutput("sox", args...)
	m := regexp.MustCompile(`freqz\(\[([^\]]*)\],\[([^\]]*)\]`).FindStringSubmatch(out)
	if m == nil {
		t.Fatalf("sox --plot printed no freqz line (%v):\n%s", err, out)
	}
	parse := func(s string) []float64 {
		var v []float64
		for _, f := range strings.Fields(s) {
			x, err := strconv.ParseFloat(f, 64)
			if err != nil {
				t.Fatalf("sox coefficient %q: %v", f, err)
			}
			v = append(v, x)
		}
		return v
	}
	return parse(m[1]), parse(m[2])
}

// TestSoxBandpassIsCookbook checks which cookbook band-pass sox's bandpass
// effect is, from the coefficients sox itself prints: the default must be
// the constant 0 dB peak gain form, -c the constant skirt gain form
// (b0 = sin(w0)/2 = Q·α, the same poles).
func TestSoxBandpassIsCookbook(t *testing.T) {
	needPrograms(t, "sox")
	// coefTol: sox prints 16 significant digits; its coefficients are
	// computed from the same formulas in double precision.
	const coefTol = 1e-12
	want := cookbookBPF(biquadF0, biquadQ, pathRateHz)
	for _, tc := range []struct {
		name   string
		effect []string
		b0     float64
	}{
		{"0 dB peak gain (default)", []string{"bandpass", fmt.Sprint(biquadF0), fmt.Sprintf("%gq", biquadQ)}, want.b0},
		{"constant skirt gain (-c)", []string{"bandpass", "-c", fmt.Sprint(biquadF0), fmt.Sprintf("%gq", biquadQ)}, want.b0 * biquadQ},
	} {
		t.Run(tc.name, func(t *testing.T) {
			b, a := soxCoefficients(t, tc.effect...)
			if len(b) != 3 || len(a) != 3 {
				t.Fatalf("b %v a %v: want three of each", b, a)
			}
			got := []float64{b[0] / a[0], b[1] / a[0], b[2] / a[0], a[1] / a[0], a[2] / a[0]}
			exp := []float64{tc.b0, 0, -tc.b0, want.a1, want.a2}
			for i := range got {
				if math.Abs(got[i]-exp[i]) > coefTol {
					t.Errorf("coefficient %d: sox %.16g, cookbook %.16g", i, got[i], exp[i])
				}
			}
		})
	}
	// At the centre the default form has gain 1 exactly (0 dB peak).
	if g := cmplx.Abs(want.at(biquadF0, pathRateHz)); math.Abs(g-1) > 1e-12 {
		t.Errorf("cookbook BPF at f0: |H| = %.15g, want 1", g)
	}
}

// biquadRig is the rig of the sweep: the card's output 0 and 1 carry the
// drive into the first sink, its inputs 0 (filtered) and 1 (unfiltered,
// the reference) come from the second sink's monitor.
const biquadRig = `
name = "cookbook band-pass through PulseAudio and sox"
source = "soundcard"
drive = "soundcard"

[soundcard]
response_channel = 0
reference_channel = 1
output_channels = [0, 1]

[response]
unit = "FS"
sensor = "displacement"
volts_per_unit = 1.0

[drive_output]
amplitude = 0.4
max_amplitude = 0.5
ramp = "200ms"

[plan]
start_hz = 500.0
stop_hz = 2000.0
points = 11
spacing = "log"
direction = "up-down"
min_dwell_cycles = 10
max_dwell = "20s"
measure_cycles = 20
settle_tol = 0.002

[measure]
harmonics = ["1"]
settle_cycles = 2
`

// twoSinks: the drive goes to sl_drive (the default sink); the filter path
// writes to sl_resp, whose monitor is the default source.
const twoSinks = "load-module module-null-sink sink_name=sl_drive rate=48000 channels=2 norewinds=1\n" +
	"load-module module-null-sink sink_name=sl_resp rate=48000 channels=2 norewinds=1\n" +
	"set-default-sink sl_drive\nset-default-source sl_resp.monitor\nload-module module-native-protocol-unix\n"

// TestBiquadSweep runs a stepped sweep through a real sound path with a
// resonance in it: PortAudio → ALSA → PulseAudio null sink sl_drive → its
// monitor → parec → sox bandpass (f0 1 kHz, Q 5) → pacat → null sink
// sl_resp → its monitor → PortAudio, and compares every settled point with
// the cookbook's response.
//
// The reference (input 1) is the first sink's monitor carried beside the
// filtered audio through the same pipe, sample for sample (filterPath), so
// the ratio of response to reference is the filter alone: the pipe's delay
// and the card's act alike on both channels and cancel, and the phase of
// the ratio is the biquad's own phase. (With the reference taken on a
// different path, the ratio would hold the difference of the two paths'
// delays as a phase slope −2πfΔτ, and only the magnitude would compare.)
//
// Audio lost or repeated anywhere in the path shows on the reference, and
// the card flags it; the test checks independently, on the raw capture,
// that no logged point was measured across a break.
func TestBiquadSweep(t *testing.T) {
	d := startDaemon(t, twoSinks, true)
	// Breaks on purpose, on top of those the sound server makes: every
	// 0.6 to 1.6 s, 6 to 20 frames dropped or repeated. At 500 Hz to 2 kHz
	// such a break turns the tone by 0.39 to 5.2 rad, never near a whole
	// turn, so a break the card could not see (|sin(ωk/2)| below its 0.1)
	// is never made on purpose.
	brk := newBreaker(20261, 29000, 77000, 6, 20)
	fp := startFilterPath(t, d, "sl_drive.monitor", "sl_resp", 300*time.Millisecond, brk,
		"bandpass", fmt.Sprint(biquadF0), fmt.Sprintf("%gq", biquadQ))
	dir := t.TempDir()
	rigPath := filepath.Join(dir, "biquad.toml")
	if err := os.WriteFile(rigPath, []byte(biquadRig), 0o644); err != nil {
		t.Fatal(err)
	}
	record, raw := filepath.Join(dir, "run.csv"), filepath.Join(dir, "run.wav")
	setup, err := rig.Open(rigPath, rig.Options{RecordPath: record, RecordEager: true, RawPath: raw, Version: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer setup.Close()
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()
	start := time.Now()
	res, err := sweep.Run(ctx, setup.Source, setup.Drive, setup.Bench, sweep.Options{})
	if err != nil {
		t.Fatal(err)
	}
	frames, breaks, perr := fp.status()
	t.Logf("sweep: %d points in %.1f s, completed %v; source %+v; the filter path carried %d frames with %d breaks made on purpose (err %v)",
		len(res.Points), time.Since(start).Seconds(), res.Completed, res.Stats, frames, breaks, perr)
	if !res.Completed || perr != nil {
		t.Fatalf("sweep completed %v (%s), filter path error %v", res.Completed, res.StopReason, perr)
	}

	// dBTol: the brief's 0.3 dB. The path carries 16-bit samples and the
	// ratio cancels everything but the filter, so the expected error is
	// about 1e−4 dB; a point measured across a break or before the filter
	// settled is off by far more.
	const dBTol = 0.3
	// phaseTolRad: the two channels stay aligned to the sample, so the
	// ratio's phase is the biquad's; 16-bit noise over 20 cycles moves it
	// by about 1e−5 rad, a sample of misalignment by 2πf/Fs ≥ 0.065 rad.
	const phaseTolRad = 1e-3
	h := cookbookBPF(biquadF0, biquadQ, pathRateHz)
	settled, worstDB, worstPh := 0, 0.0, 0.0
	for _, p := range res.Points {
		want := h.at(p.FreqSetHz, pathRateHz)
		got := p.Amp[0] / p.DriveAmp
		errDB := 20 * math.Log10(got/cmplx.Abs(want))
		errPh := math.Remainder(p.PhaseDeg[0]*math.Pi/180-cmplx.Phase(want), 2*math.Pi)
		t.Logf("point %2d %-4s %8.3f Hz: |H| %.5f, cookbook %.5f (%+.4f dB); phase %+8.3f°, cookbook %+8.3f° (%+.2g rad); %s %s",
			p.Index, p.Direction, p.FreqSetHz, got, cmplx.Abs(want), errDB, p.PhaseDeg[0], cmplx.Phase(want)*180/math.Pi, errPh, p.SettleState, p.Flags)
		if !p.Settled {
			t.Errorf("point %d at %.3f Hz did not settle (%s)", p.Index, p.FreqSetHz, p.SettleState)
			continue
		}
		settled++
		worstDB = math.Max(worstDB, math.Abs(errDB))
		if math.Abs(errDB) > dBTol {
			t.Errorf("point %d at %.3f Hz: %.4f dB off the cookbook response", p.Index, p.FreqSetHz, errDB)
		}
		// A point whose measurement began again after a gap (Flags has
		// the gap) is compared in magnitude only: the bench restarts the
		// response samples of such a measurement but keeps the reference
		// and phase samples from before the gap (see the report), which
		// leaves the magnitude right and the phase wrong.
		if p.Flags&acquire.FlagGap != 0 {
			continue
		}
		worstPh = math.Max(worstPh, math.Abs(errPh))
		if math.Abs(errPh) > phaseTolRad {
			t.Errorf("point %d at %.3f Hz: phase %.4g rad off the cookbook response", p.Index, p.FreqSetHz, errPh)
		}
	}
	t.Logf("%d settled points: largest error %.4f dB, %.2g rad", settled, worstDB, worstPh)
	if len(res.Points) != 21 {
		t.Errorf("%d points logged, the plan has 21", len(res.Points))
	}

	checkNoPointAcrossBreak(t, record, raw)
}

// checkNoPointAcrossBreak reads the raw capture and, for every logged
// point, fits the reference and the response over the frames the point
// was measured on against the drive phase recorded with them (IEEE 1241
// three-parameter fit, dsp.Fit3). A steady tone fits to the 16-bit noise;
// audio lost or repeated inside the frames, or the filter still ringing
// after a break, leaves a residual far above it.
func checkNoPointAcrossBreak(t *testing.T, record, raw string) {
	t.Helper()
	// residualTol: the rms residual as a fraction of the amplitude. 16-bit
	// rounding leaves 9e−6 rms, 2e−4 of the smallest response here
	// (0.4·|H(500 Hz)| = 0.05); one frame lost at 500 Hz leaves about
	// 0.065/2 of the amplitude over the frames after it.
	const residualTol = 2e-3
	sc, err := acquire.ReadSidecar(acquire.SidecarPath(record))
	if err != nil {
		t.Fatal(err)
	}
	if sc.Raw == nil || len(sc.Raw.Points) == 0 {
		t.Fatal("the sidecar names no raw frames for the points")
	}
	fh, err := os.Open(raw)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	w, err := acquire.ReadWAV(fh)
	if err != nil {
		t.Fatal(err)
	}
	nc := w.Channels // response, reference, phase fraction, drive Hz, drive amp
	worst := 0.0
	for _, rp := range sc.Raw.Points {
		n := int(rp.Frames)
		first := int(rp.FirstFrame)
		if first+n > w.Frames {
			t.Fatalf("point %d: frames %d+%d beyond the capture's %d", rp.Point, first, n, w.Frames)
		}
		resp, ref, tt := make([]float64, n), make([]float64, n), make([]float64, n)
		f := float64(w.Data[(first+n-1)*nc+3])
		cyc, prev := 0.0, 0.0
		for i := range n {
			k := (first + i) * nc
			resp[i], ref[i] = float64(w.Data[k]), float64(w.Data[k+1])
			frac := float64(w.Data[k+2])
			if i > 0 && frac < prev {
				cyc++
			}
			prev = frac
			tt[i] = (cyc + frac) / f
		}
		for _, ch := range []struct {
			name string
			y    []float64
		}{{"reference", ref}, {"response", resp}} {
			s := dsp.Fit3(tt, ch.y, f)
			rel := s.RMSResidual / s.Amp
			worst = math.Max(worst, rel)
			if rel > residualTol {
				t.Errorf("point %d (%.3f Hz): the %s over its %d frames from %d fits a steady tone to %.2g of its amplitude: measured across a break", rp.Point, f, ch.name, n, first, rel)
			}
		}
	}
	t.Logf("raw capture: %d points checked, largest fit residual %.2g of the amplitude", len(sc.Raw.Points), worst)
}
