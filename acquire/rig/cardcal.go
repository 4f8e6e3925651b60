package rig

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"math/cmplx"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
	"github.com/sweeplock/sweeplock/dsp"
	"github.com/sweeplock/sweeplock/dsp/lockin"
)

// A sound card's own response, measured by `sweeplock calibrate` with the
// card's output wired straight to its response input: the complex gain
// G(f) = input/generator at each frequency of a logarithmic grid spanning
// every harmonic a rig's plan measures. It holds the input's AC coupling
// (a high-pass of a few hertz), the converters' filters and the card's
// delay τ. The delay is stored apart,
//
//	G(f) = g(f)·exp(j(φ(f) − 2πfτ)),
//
// with g and φ (the phase less the delay) smooth enough to interpolate
// linearly against log f between grid points; τ comes from the phase
// slope between close frequencies (the group delay, −dφ/dω, common
// practice), widened step by step so the phase never wraps ambiguously.
//
// A rig without a reference channel that names its calibration has each
// harmonic divided by G at that harmonic's frequency. The magnitude holds
// as long as the card's gains are not touched; the phase holds only while
// the card's delay is the one measured, which is why a calibration is
// refused for a rig whose device, rate, buffer, latency or input differ,
// or whose stream reports another latency. Even so a new stream may delay
// by a different number of frames (through a sound server one stream in
// several was seen 2400 frames, 50 ms, off the calibration's, with the
// same reported latency), and nothing without a reference can tell: a
// reference channel is the way to phase.

// CalFormat names the calibration file's format.
const CalFormat = "sweeplock-card-response/1"

// Errors of the calibration.
var (
	// ErrCal: a calibration file cannot be used for this rig.
	ErrCal = errors.New("rig: sound card calibration")
)

// CardCal is a sound card's measured response (the calibration file).
type CardCal struct {
	Format   string    `json:"format"`
	Measured time.Time `json:"measured"`
	Rig      string    `json:"rig,omitempty"` // the rig file it was measured for
	// The stream it was measured on; a rig must match them.
	Device          string  `json:"device"`
	RateHz          float64 `json:"rate_hz"`
	FramesPerBuffer int     `json:"frames_per_buffer"`
	LatencyS        float64 `json:"latency_s"` // the configured latency
	ResponseChannel int     `json:"response_channel"`
	OutputChannels  []int   `json:"output_channels"`
	// ReportedLatencyS is PortAudio's estimate of the stream's input plus
	// output delay when it was measured.
	ReportedLatencyS float64 `json:"reported_latency_s"`
	// LevelFS is the drive level used, in full-scale units.
	LevelFS float64 `json:"level"`
	// DelayS is the card's delay τ, taken out of PhaseDeg.
	DelayS float64 `json:"delay_s"`
	// Points are the grid, in increasing frequency.
	Points []CalPoint `json:"points"`
}

// CalPoint is the card's response at one frequency.
type CalPoint struct {
	FreqHz float64 `json:"freq_hz"`
	// Gain is |G|: input over generator amplitude, both in full-scale units.
	Gain float64 `json:"gain"`
	// PhaseDeg is arg G + 360°·f·τ: the phase of the input against the
	// generator with the delay taken out, unwrapped along the grid.
	PhaseDeg float64 `json:"phase_deg"`
	// Retries counts measurements discarded (a gap, or two halves that
	// disagreed) before this one was kept.
	Retries int `json:"retries,omitempty"`
}

// At returns G(f), interpolated: gain and phase linear in log f between
// the grid points around f, the delay added back; beyond the grid the end
// point's gain and phase.
func (c *CardCal) At(freqHz float64) complex128 {
	p := c.Points
	if len(p) == 0 || !(freqHz > 0) {
		return cmplx.NaN()
	}
	var g, ph float64
	i, _ := slices.BinarySearchFunc(p, freqHz, func(q CalPoint, f float64) int {
		switch {
		case q.FreqHz < f:
			return -1
		case q.FreqHz > f:
			return 1
		}
		return 0
	})
	switch {
	case i == 0:
		g, ph = p[0].Gain, p[0].PhaseDeg
	case i == len(p):
		g, ph = p[len(p)-1].Gain, p[len(p)-1].PhaseDeg
	default:
		a, b := p[i-1], p[i]
		u := math.Log(freqHz/a.FreqHz) / math.Log(b.FreqHz/a.FreqHz)
		g = math.Exp(math.Log(a.Gain) + u*(math.Log(b.Gain)-math.Log(a.Gain)))
		ph = a.PhaseDeg + u*(b.PhaseDeg-a.PhaseDeg)
	}
	return cmplx.Rect(g, ph*math.Pi/180-2*math.Pi*freqHz*c.DelayS)
}

// Correction returns At as the function a bench divides each harmonic by.
func (c *CardCal) Correction() func(freqHz float64) complex128 { return c.At }

// Fits reports whether the calibration was measured on the stream a rig
// opens: the same device, rate, buffer, latency and response input, and a
// reported latency within one frame of the one measured with.
func (c *CardCal) Fits(cfg soundcard.Config, device string, reported time.Duration) error {
	again := "; calibrate again with this rig (sweeplock calibrate --rig FILE)"
	switch {
	case c.Device != device:
		return fmt.Errorf("%w: measured on %q, the rig opens %q%s", ErrCal, c.Device, device, again)
	case c.RateHz != cfg.RateHz:
		return fmt.Errorf("%w: measured at %g Hz, the rig runs at %g Hz%s", ErrCal, c.RateHz, cfg.RateHz, again)
	case c.FramesPerBuffer != cfg.FramesPerBuffer:
		return fmt.Errorf("%w: measured with frames_per_buffer = %d, the rig has %d%s", ErrCal, c.FramesPerBuffer, cfg.FramesPerBuffer, again)
	case math.Abs(c.LatencyS-cfg.Latency.Seconds()) > 1e-9:
		return fmt.Errorf("%w: measured with latency = %gs, the rig has %v%s", ErrCal, c.LatencyS, cfg.Latency, again)
	case c.ResponseChannel != cfg.ResponseChannel:
		return fmt.Errorf("%w: measured on input %d, the rig reads input %d%s", ErrCal, c.ResponseChannel, cfg.ResponseChannel, again)
	case math.Abs(c.ReportedLatencyS-reported.Seconds()) > 1/cfg.RateHz:
		return fmt.Errorf("%w: the stream reports a delay of %v, %v when it was measured: its phase would be wrong%s", ErrCal,
			reported, time.Duration(c.ReportedLatencyS*float64(time.Second)), again)
	}
	return nil
}

// Covers reports whether the grid spans lo to hi hertz.
func (c *CardCal) Covers(lo, hi float64) error {
	if len(c.Points) < 2 {
		return fmt.Errorf("%w: it holds %d points, at least 2 are needed", ErrCal, len(c.Points))
	}
	a, b := c.Points[0].FreqHz, c.Points[len(c.Points)-1].FreqHz
	const slack = 1e-6 // relative: coherent frequencies move by less
	if lo < a*(1-slack) || hi > b*(1+slack) {
		return fmt.Errorf("%w: it covers %.4g to %.4g Hz, the plan's harmonics reach from %.4g to %.4g Hz; calibrate again with this plan", ErrCal, a, b, lo, hi)
	}
	return nil
}

// Check checks a calibration read from a file.
func (c *CardCal) Check() error {
	if c.Format != CalFormat {
		return fmt.Errorf("%w: format %q, want %q", ErrCal, c.Format, CalFormat)
	}
	if !(c.RateHz > 0) || math.IsNaN(c.DelayS) || math.IsInf(c.DelayS, 0) {
		return fmt.Errorf("%w: rate_hz %g, delay_s %g: not a measured calibration", ErrCal, c.RateHz, c.DelayS)
	}
	if len(c.Points) < 2 {
		return fmt.Errorf("%w: it holds %d points, at least 2 are needed", ErrCal, len(c.Points))
	}
	for i, p := range c.Points {
		if !(p.FreqHz > 0) || !(p.Gain > 0) || math.IsInf(p.Gain, 0) || math.IsNaN(p.PhaseDeg) || math.IsInf(p.PhaseDeg, 0) {
			return fmt.Errorf("%w: point %d (%g Hz, gain %g, phase %g°) is not a measurement", ErrCal, i, p.FreqHz, p.Gain, p.PhaseDeg)
		}
		if i > 0 && p.FreqHz <= c.Points[i-1].FreqHz {
			return fmt.Errorf("%w: the frequencies must increase (point %d: %g Hz after %g Hz)", ErrCal, i, p.FreqHz, c.Points[i-1].FreqHz)
		}
	}
	return nil
}

// ReadCardCal reads and checks a calibration file.
func ReadCardCal(path string) (*CardCal, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("%w: %v (measure one with sweeplock calibrate --rig FILE)", ErrCal, err)
	}
	var c CardCal
	if err := json.Unmarshal(b, &c); err != nil {
		return nil, fmt.Errorf("%w: %s: %v", ErrCal, path, err)
	}
	if err := c.Check(); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &c, nil
}

// WriteCardCal writes a calibration file, replacing an older one only once
// the new one is complete on disk.
func WriteCardCal(path string, c *CardCal) error {
	b, err := json.MarshalIndent(c, "", "  ")
	if err != nil {
		return fmt.Errorf("rig: calibration: %w", err)
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), ".sweeplock-cal-*")
	if err != nil {
		return fmt.Errorf("rig: writing the calibration %s: %w", path, err)
	}
	_, werr := tmp.Write(append(b, '\n'))
	if werr == nil {
		werr = tmp.Sync()
	}
	if cerr := tmp.Close(); werr == nil {
		werr = cerr
	}
	if werr == nil {
		werr = os.Rename(tmp.Name(), path)
	}
	if werr != nil {
		os.Remove(tmp.Name())
		return fmt.Errorf("rig: writing the calibration %s: %w", path, werr)
	}
	return nil
}

// DefaultCalPath is where a rig's calibration goes when neither the rig
// file nor the command line names one: beside the rig file, named after it.
func DefaultCalPath(rigPath string) string {
	base := strings.TrimSuffix(filepath.Base(rigPath), filepath.Ext(rigPath))
	return filepath.Join(filepath.Dir(rigPath), base+"-card-cal.json")
}

// harmonicSpan is the lowest and highest frequency a plan measures at:
// every step's frequency times every harmonic's ratio.
func harmonicSpan(p acquire.Plan, hs []lockin.Harmonic) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	rlo, rhi := 1.0, 1.0
	for _, h := range hs {
		rlo, rhi = math.Min(rlo, h.Ratio()), math.Max(rhi, h.Ratio())
	}
	for _, s := range p.Steps() {
		lo, hi = math.Min(lo, s.FreqHz*rlo), math.Max(hi, s.FreqHz*rhi)
	}
	return lo, hi
}

// CalFreqs returns the calibration grid for a plan: perOctave points per
// octave, logarithmically spaced from the lowest to the highest harmonic
// frequency the plan measures (both included), at most 0.45 of the sample
// rate. A span narrower than 2 % is widened to ±1 % around it.
func CalFreqs(p acquire.Plan, hs []lockin.Harmonic, rateHz float64, perOctave int) []float64 {
	lo, hi := harmonicSpan(p, hs)
	hi = math.Min(hi, 0.45*rateHz)
	if hi < lo*1.02 {
		m := math.Sqrt(lo * hi)
		lo, hi = m/1.01, m*1.01
	}
	n := max(2, int(math.Ceil(math.Log2(hi/lo)*float64(max(perOctave, 1))))+1)
	out := make([]float64, n)
	for i := range out {
		out[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	out[n-1] = hi
	return out
}

// CalOptions are the choices of a calibration run.
type CalOptions struct {
	// LevelFS is the drive level in full-scale units (at most the card's
	// max_level).
	LevelFS float64
	// Progress, when not nil, gets a line per frequency measured.
	Progress io.Writer
	// Rig is the rig file's path, kept in the calibration.
	Rig string
}

// Limits of one calibration measurement.
const (
	// calMinCycles and calMinSeconds set each half of a measurement: at
	// least this many drive cycles and this long.
	calMinCycles  = 20
	calMinSeconds = 0.1
	// calAgree: the two halves of a measurement must agree to this
	// fraction of the gain (complex difference). Noise of −90 dB full
	// scale moves a 0.1 s fit of a 0.25 tone by about 3e−6; a lost or
	// repeated frame inside the measurement moves the phase by 2πf/fs,
	// 0.1 rad at 1 kHz; the input coupling's transient after the change
	// (e^{−t/τ}, τ = 1/(2πfc)) changes between the halves until it is
	// below about this, which bounds what it leaves in the result.
	calAgree = 2e-4
	// calResidual: the fit's rms residual must stay below this fraction of
	// the amplitude (a break inside a half leaves a large residual;
	// distortion and noise of a working card stay far below it).
	calResidual = 1e-2
	// calTries is how many measurements of one frequency may be discarded.
	calTries = 12
	// calMargin is added to the reported delay before a measurement
	// starts, for the sound server.
	calMargin = 300 * time.Millisecond
)

// calProbeSteps are the offsets, in units of the first, of the frequencies
// measured next to the middle of the grid to find the delay: the first is
// small enough that the phase cannot wrap over any possible delay; each
// next one is unwrapped with the delay from the one before.
var calProbeSteps = [...]float64{1, 30, 1000}

// calDriftRad: the phase at the probe frequencies measured again at the end
// of a pass must agree with the start to this (radians, about 0.3°). One
// frame lost or repeated in the sound path moves the phase at f by
// 2πf/fs, 7.5° at 1 kHz and 48 kHz; noise moves it by about 1e−5 rad.
const calDriftRad = 5e-3

// calPasses is how many passes a calibration may take before it gives up
// on a delay that keeps changing.
const calPasses = 3

// MeasureCard measures the card's response at freqs (increasing), with the
// output wired to the response input: for each frequency it sets the
// drive, waits for the delay to pass, and fits the response against the
// generator's phase over two halves of at least 20 cycles and 0.1 s
// (IEEE Std 1241 three-parameter sine fit, dsp.Fit3), measuring again when
// a gap falls in them or they disagree. The delay is measured first; at
// the end of the pass the probes are measured again, and when their phase
// moved (the sound path lost or repeated audio, so the delay changed) the
// whole pass is repeated, up to three times. It starts the card's source;
// the caller closes the card. The drive is ramped down before it returns.
func MeasureCard(ctx context.Context, card *soundcard.Card, freqs []float64, opt CalOptions) (*CardCal, error) {
	in, out := card.Latency()
	return measureCal(ctx, card.Source(), card.Drive(), card.Config(), in, out, freqs, opt)
}

// measureCal is MeasureCard on a source and drive that share the clock of
// a stream with configuration cfg and reported latencies in and out.
func measureCal(ctx context.Context, src acquire.Source, drv acquire.Drive, cfg soundcard.Config, in, out time.Duration, freqs []float64, opt CalOptions) (*CardCal, error) {
	if len(freqs) < 2 {
		return nil, fmt.Errorf("rig: calibration needs at least 2 frequencies, got %d", len(freqs))
	}
	if !(opt.LevelFS > 0) || opt.LevelFS > cfg.MaxLevel {
		return nil, fmt.Errorf("rig: calibration level %g: must be above 0 and at most the card's max_level %g: %w", opt.LevelFS, cfg.MaxLevel, acquire.ErrDriveLimit)
	}
	if err := src.Start(ctx); err != nil {
		return nil, fmt.Errorf("rig: calibration: %w", err)
	}
	m := &cardMeter{ctx: ctx, src: src, drv: drv, rate: cfg.RateHz, level: opt.LevelFS,
		delay: in + out + calMargin, input: cfg.ResponseChannel, last: math.MaxUint64}
	defer func() {
		octx, cancel := context.WithTimeout(context.Background(), cfg.Ramp+out+5*time.Second)
		drv.Off(octx)
		cancel()
	}()
	say := func(format string, a ...any) {
		if opt.Progress != nil {
			fmt.Fprintf(opt.Progress, format+"\n", a...)
		}
	}
	base := CardCal{Format: CalFormat, Rig: opt.Rig, Device: src.Info().Name,
		RateHz: cfg.RateHz, FramesPerBuffer: cfg.FramesPerBuffer, LatencyS: cfg.Latency.Seconds(),
		ResponseChannel: cfg.ResponseChannel, OutputChannels: cfg.OutputChannels,
		ReportedLatencyS: (in + out).Seconds(), LevelFS: opt.LevelFS}
	fm := math.Sqrt(freqs[0] * freqs[len(freqs)-1])
	maxDelay := 2*(in+out).Seconds() + 1 // s; more than any stream holds
	first := 0.25 / maxDelay             // Hz: a quarter turn of phase over maxDelay
	for pass := 1; ; pass++ {
		cal := base
		cal.Measured = time.Now().UTC()
		probes, tau, err := m.findDelay(fm, first, cfg.RateHz, say)
		if err != nil {
			return nil, err
		}
		cal.DelayS = tau
		prev := 0.0
		for i, f := range freqs {
			z, tries, err := m.measure(f)
			if err != nil {
				return nil, err
			}
			ph := cmplx.Phase(z) + 2*math.Pi*f*tau
			if i == 0 {
				ph = math.Remainder(ph, 2*math.Pi)
			} else {
				ph = prev + math.Remainder(ph-prev, 2*math.Pi)
			}
			prev = ph
			p := CalPoint{FreqHz: f, Gain: cmplx.Abs(z), PhaseDeg: ph * 180 / math.Pi, Retries: tries}
			cal.Points = append(cal.Points, p)
			say("%10.4f Hz  gain %+8.4f dB  phase %+8.3f° (delay taken out)%s", f, 20*math.Log10(p.Gain), p.PhaseDeg, retryNote(tries))
		}
		// The delay must not have moved during the pass: the first and the
		// last probe measured again.
		drift := 0.0
		for _, pr := range []probe{probes[0], probes[len(probes)-1]} {
			z, _, err := m.measure(pr.f)
			if err != nil {
				return nil, err
			}
			drift = math.Max(drift, math.Abs(cmplx.Phase(z/pr.z)))
		}
		if drift <= calDriftRad {
			if err := cal.Check(); err != nil {
				return nil, err
			}
			return &cal, nil
		}
		if pass == calPasses {
			return nil, fmt.Errorf("%w: the card's delay changed during each of %d passes (the phase at %.6g Hz moved by %.3g° in the last): the sound path loses or repeats audio; try a larger latency or an idle machine", ErrCal, calPasses, fm, drift*180/math.Pi)
		}
		say("the card's delay changed during the pass (the phase at %.6g Hz moved by %.3g°: audio was lost or repeated in the sound path): measuring again", fm, drift*180/math.Pi)
	}
}

func retryNote(n int) string {
	if n == 0 {
		return ""
	}
	return fmt.Sprintf("  (%d measurements discarded: gaps in the audio)", n)
}

// probe is a measurement kept to check the delay at the end of a pass.
type probe struct {
	f float64
	z complex128
}

// findDelay measures the card's delay from the phase slope near fm, starting
// with a step of first hertz, and returns the probes measured.
func (m *cardMeter) findDelay(fm, first, rateHz float64, say func(string, ...any)) ([]probe, float64, error) {
	z0, _, err := m.measure(fm)
	if err != nil {
		return nil, 0, err
	}
	probes := []probe{{fm, z0}}
	tau := 0.0
	for _, k := range calProbeSteps {
		df := first * k
		if fm+df >= 0.45*rateHz {
			break
		}
		z1, _, err := m.measure(fm + df)
		if err != nil {
			return nil, 0, err
		}
		// The measured phase change, taken to the whole turn nearest the
		// one the delay so far predicts.
		pred := -2 * math.Pi * df * tau
		meas := cmplx.Phase(z1 / z0)
		d := meas + 2*math.Pi*math.Round((pred-meas)/(2*math.Pi))
		tau = -d / (2 * math.Pi * df)
		probes = append(probes, probe{fm + df, z1})
		say("delay %.9f s, from the phase %.4g Hz apart at %.6g Hz", tau, df, fm)
	}
	return probes, tau, nil
}

// cardMeter measures the card's response one frequency at a time.
type cardMeter struct {
	ctx   context.Context
	src   acquire.Source
	drv   acquire.Drive
	rate  float64
	level float64
	delay time.Duration // to let pass after a change
	input int           // the response input, for messages
	last  uint64        // Seq of the last block read

	y, ph []float64
}

// next appends the next block's response and phase to y and ph and reports
// whether it follows a gap, and the drive it was made with.
func (m *cardMeter) next() (gap bool, hz, amp float64, err error) {
	select {
	case <-m.ctx.Done():
		return false, 0, 0, fmt.Errorf("rig: calibration: %w", m.ctx.Err())
	case b, ok := <-m.src.Blocks():
		if !ok {
			err := m.src.Err()
			if err == nil {
				err = errors.New("the card's source ended")
			}
			return false, 0, 0, fmt.Errorf("rig: calibration: %w", err)
		}
		defer m.src.Release(b)
		gap = b.Flags&acquire.FlagGap != 0 || (m.last != math.MaxUint64 && b.Seq != m.last+1)
		m.last = b.Seq
		for i := range b.Frames {
			m.y = append(m.y, b.Data[i*b.Channels])
			m.ph = append(m.ph, b.PhaseCyc[i])
		}
		return gap, b.DriveHz, b.DriveAmp, nil
	}
}

// measure sets f and returns G(f) and the number of measurements discarded.
func (m *cardMeter) measure(f float64) (complex128, int, error) {
	if err := m.drv.Set(f, m.level); err != nil {
		return 0, 0, fmt.Errorf("rig: calibration at %g Hz: %w", f, err)
	}
	// Wait for the generator to make the setting, then for the delay.
	for {
		m.y, m.ph = m.y[:0], m.ph[:0]
		_, hz, amp, err := m.next()
		if err != nil {
			return 0, 0, err
		}
		if hz == f && amp == m.level {
			break
		}
	}
	for skipped := 0; skipped < int(m.delay.Seconds()*m.rate); {
		m.y, m.ph = m.y[:0], m.ph[:0]
		if _, _, _, err := m.next(); err != nil {
			return 0, 0, err
		}
		skipped += len(m.y)
	}
	half := int(math.Ceil(math.Max(calMinCycles/f, calMinSeconds) * m.rate))
	for tries := 0; tries < calTries; tries++ {
		// Two halves with no gap in them: a gap starts the collection
		// again, and the block after a flagged one is left out too (the
		// card flags the block its reference broke in).
		m.y, m.ph = m.y[:0], m.ph[:0]
		drop := false
		for len(m.y) < 2*half {
			gap, _, _, err := m.next()
			if err != nil {
				return 0, tries, err
			}
			if gap || drop {
				m.y, m.ph = m.y[:0], m.ph[:0]
				drop = gap
			}
		}
		z1, r1 := fitAgainst(m.y[:half], m.ph[:half], f)
		z2, r2 := fitAgainst(m.y[half:2*half], m.ph[half:2*half], f)
		a := cmplx.Abs(z1)
		if a > 0 && cmplx.Abs(z1-z2) <= calAgree*a && r1 <= calResidual*a && r2 <= calResidual*a {
			return (z1 + z2) / complex(2*m.level, 0), tries, nil
		}
	}
	return 0, calTries, fmt.Errorf("%w: at %g Hz %d measurements in a row had gaps or two halves that disagreed; is the output wired to input %d? (a larger latency helps a busy machine)", ErrCal, f, calTries, m.input)
}

// fitAgainst fits y against the generator's phase (cycles) at f: the
// complex amplitude (|z| peak, arg z the phase against the generator's
// cosine) and the fit's rms residual.
func fitAgainst(y, phaseCyc []float64, f float64) (complex128, float64) {
	t := make([]float64, len(y))
	base := math.Floor(phaseCyc[0])
	for i, p := range phaseCyc {
		t[i] = (p - base) / f
	}
	s := dsp.Fit3(t, y, f)
	return cmplx.Rect(s.Amp, s.PhaseRad), s.RMSResidual
}
