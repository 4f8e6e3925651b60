package acquire

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"sort"
	"time"

	"github.com/sweeplock/sweeplock/dsp"
	"github.com/sweeplock/sweeplock/dsp/jump"
	"github.com/sweeplock/sweeplock/dsp/lockin"
	"github.com/sweeplock/sweeplock/dsp/settle"
)

// BenchConfig sets up a Bench.
type BenchConfig struct {
	// Harmonics to measure; the first must be the fundamental (1).
	Harmonics []lockin.Harmonic
	// Response and Reference are channel indices in the source's blocks;
	// Reference < 0 means no reference channel.
	Response, Reference int
	// RefVoltsPerDrive is the reference channel's volts per drive unit;
	// with a reference channel the response is corrected by the ratio of
	// the expected to the measured reference (removing the input's delay
	// and AC coupling).
	RefVoltsPerDrive float64
	// Correct, when set and there is no reference channel, is the input's
	// own complex response at a frequency (a stored loopback calibration of
	// a sound card): each harmonic's amplitude is divided by it.
	Correct func(freqHz float64) complex128
	// Calibration: display value = (volts − OffsetV)/VoltsPerUnit.
	VoltsPerUnit, OffsetV float64
	// Unit is the displacement display unit ("mm").
	Unit string
	// SensorKind is "displacement", "velocity" or "acceleration"; velocity
	// and acceleration amplitudes are turned into displacement per harmonic.
	SensorKind string
	Plan       Plan
	DriveAmp   float64 // drive amplitude for the plan and for manual stepping
	// MaxDisp is the displacement limit (display units, peak, 0 = none):
	// beyond it the sweep stops and the drive ramps down.
	MaxDisp float64
	// SettleCycles is the length of the blocks the settle detector sees.
	SettleCycles int
	// ExpectedTauS is the rig's expected transient time constant (0 unknown).
	ExpectedTauS float64
	// SettleFloor is an absolute error floor in display units for the
	// settle detector (responses near zero).
	SettleFloor float64
	// ThirdLimitPct raises the third-harmonic flag when the third
	// harmonic's ratio to the fundamental exceeds it.
	ThirdLimitPct float64
	// RecordPath is the CSV to log to; it is created on the first logged
	// point, or at Run's start when RecordEager.
	RecordPath  string
	RecordEager bool
	// RawPath, when set, captures every block's samples and the drive to a
	// float32 WAV file (see WAVWriter); the sidecar gives each logged
	// point's frames in it.
	RawPath string
	// Sidecar is the template of the sidecar written beside the record.
	Sidecar *Sidecar
	// DriveOnAtStart switches the drive on at the first frequency at once.
	DriveOnAtStart bool
	// StartHz is the manual starting frequency (defaults to the plan start).
	StartHz float64
	// OnEvent, when set, is called from the bench's goroutine for each
	// event; it must return quickly.
	OnEvent func(Event)
}

// EventKind says what happened.
type EventKind int

const (
	// EventLogged: a point is on disk.
	EventLogged EventKind = iota
	// EventJump: a jump was found in a sweep direction.
	EventJump
	// EventMessage: something worth telling the user.
	EventMessage
	// EventError: something went wrong; Text says what to do.
	EventError
	// EventSweepDone: the plan ran to its end.
	EventSweepDone
	// EventStopped: the bench stopped (Run returns).
	EventStopped
)

// Event is a thing that happened on the bench.
type Event struct {
	Kind  EventKind
	Point *Point
	Jump  *JumpJSON
	Text  string
}

// Bench runs the measurement: it reads blocks from a source, demodulates,
// decides when the response is settled, moves the drive (by hand or by the
// plan), logs points and publishes snapshots for the screen.
type Bench struct {
	cfg BenchConfig
	src Source
	drv Drive

	cmds   chan func()
	latest chan Snapshot

	// loop state, touched only by the bench goroutine
	mode      Mode
	phase     PointPhase
	driveOn   bool
	freq, amp float64
	step      float64
	legDir    Direction
	steps     []Step
	planIdx   int
	autoLog   bool
	note      string
	logReq    bool
	forceReq  bool
	now       float64
	changeT   float64
	decidedT  float64    // source time of the settle decision (or of a forced log)
	heldZ     complex128 // the settled fundamental, watched while holding
	setT      float64
	blockS    float64
	dc        float64

	track phaseTrack

	fast *lockin.LockIn
	live *lockin.LockIn
	det  *settle.Detector
	st   settle.Status

	measK, measN int
	measX        []float64
	measR        []float64
	measP        []float64
	measT        []float64
	measFlags    Flags

	x, r []float64 // calibrated response and reference of one block

	ring     []float64 // last frames of the calibrated response
	ringPos  int
	ringN    int
	trend    []float64
	spec     *dsp.Spectrum
	specBuf  []float64
	noiseBuf []float64
	ringPh   []float64
	ringT    []float64
	liveX    []float64
	livePh   []float64
	liveT    []float64

	points    []Point
	legPts    map[Direction][]jump.Point
	refPts    []jump.Point // points of the refinement round in progress
	refJump   int          // index in jumps of the jump being refined
	jumps     []JumpJSON
	bandLo    float64
	bandHi    float64
	rec       *Recorder
	raw       *WAVWriter
	rawInfo   *RawInfo
	frames    int64 // frames seen since Run started
	measAt    int64 // frame index where the current measurement began
	messages  []string
	errText   string
	stopWhy   string
	lastPub   time.Time
	sidecar   *Sidecar
	finished  bool
	final     Snapshot    // the last snapshot, kept when Run ends
	sweepDone bool        // the plan ran to its end
	endStats  SourceStats // the source's counts when it did (the ramp-down after is not measured)
	runErr    error

	liveAmp   []float64
	livePhase []float64
	noise     float64
}

// specFrames is the length of the spectrum the screen shows.
const specFrames = 4096

// changeLatencyS is how long after a drive change the bench waits before
// settling when the source cannot report the drive it saw.
const changeLatencyS = 0.25

// ErrBenchBusy: the command queue is full (the bench is not keeping up).
var ErrBenchBusy = errors.New("acquire: bench busy, command dropped")

// NewBench checks the configuration and makes a Bench. Call Run to start it.
func NewBench(src Source, drv Drive, cfg BenchConfig) (*Bench, error) {
	if len(cfg.Harmonics) == 0 {
		cfg.Harmonics = lockin.Default()
	}
	if cfg.Harmonics[0] != (lockin.Harmonic{Num: 1, Den: 1}) {
		return nil, fmt.Errorf("acquire: the first harmonic must be the fundamental \"1\", got %q", cfg.Harmonics[0])
	}
	if cfg.VoltsPerUnit == 0 {
		return nil, errors.New("acquire: calibration volts_per_unit must not be zero")
	}
	if cfg.SettleCycles < 1 {
		cfg.SettleCycles = 2
	}
	if cfg.ThirdLimitPct <= 0 {
		cfg.ThirdLimitPct = 1
	}
	if cfg.SensorKind == "" {
		cfg.SensorKind = "displacement"
	}
	info := src.Info()
	if cfg.Response < 0 || cfg.Response >= len(info.Channels) {
		return nil, fmt.Errorf("acquire: response channel %d: the source has channels 0..%d", cfg.Response, len(info.Channels)-1)
	}
	if cfg.Reference >= len(info.Channels) {
		return nil, fmt.Errorf("acquire: reference channel %d: the source has channels 0..%d", cfg.Reference, len(info.Channels)-1)
	}
	if err := cfg.Plan.Validate(); err != nil {
		return nil, err
	}
	if cfg.DriveAmp < 0 || (drv.Info().MaxAmp > 0 && cfg.DriveAmp > drv.Info().MaxAmp) {
		return nil, fmt.Errorf("%w: %g %s asked, limit %g %s", ErrDriveLimit, cfg.DriveAmp, drv.Info().Unit, drv.Info().MaxAmp, drv.Info().Unit)
	}
	b := &Bench{cfg: cfg, src: src, drv: drv,
		cmds:   make(chan func(), 64),
		latest: make(chan Snapshot, 1),
		legPts: map[Direction][]jump.Point{},
	}
	var err error
	b.fast, err = lockin.New(lockin.Config{Harmonics: []lockin.Harmonic{{Num: 1, Den: 1}}, Channels: 1,
		Mode: lockin.Sync, Cycles: cfg.SettleCycles, RateHz: info.RateHz})
	if err != nil {
		return nil, fmt.Errorf("acquire: %w", err)
	}
	// The live readout: synchronous blocks of whole cycles (of every
	// subharmonic too), one value per block, no ripple.
	b.live, err = lockin.New(lockin.Config{Harmonics: cfg.Harmonics, Channels: 1, Mode: lockin.Sync,
		Cycles: cfg.SettleCycles, RateHz: info.RateHz})
	if err != nil {
		return nil, fmt.Errorf("acquire: %w", err)
	}
	b.det = settle.New(settle.Config{Tol: cfg.Plan.SettleTol, Floor: cfg.SettleFloor,
		MinBlocks:    int(math.Ceil(float64(cfg.Plan.MinDwellCycles) / float64(cfg.SettleCycles))),
		MaxDwellS:    cfg.Plan.MaxDwell.Seconds(),
		ExpectedTauS: cfg.ExpectedTauS, SlowFactor: 3})
	b.steps = cfg.Plan.Steps()
	b.freq = cfg.StartHz
	if b.freq <= 0 {
		b.freq = b.steps[0].FreqHz
	}
	b.amp = cfg.DriveAmp
	b.step = cfg.Plan.stepNear(b.freq)
	b.legDir = Manual
	const ringFrames = 1 << 16
	b.ring, b.ringPh, b.ringT = make([]float64, ringFrames), make([]float64, ringFrames), make([]float64, ringFrames)
	b.liveX, b.livePh, b.liveT = make([]float64, ringFrames), make([]float64, ringFrames), make([]float64, ringFrames)
	b.spec = dsp.NewSpectrum(specFrames, dsp.Hann, info.RateHz)
	b.specBuf = make([]float64, specFrames)
	b.liveAmp = make([]float64, len(cfg.Harmonics))
	b.livePhase = make([]float64, len(cfg.Harmonics))
	if cfg.Sidecar != nil {
		sc := *cfg.Sidecar
		b.sidecar = &sc
	}
	return b, nil
}

// Latest returns a channel that holds the newest snapshot (one slot; a
// newer one replaces an unread older one).
func (b *Bench) Latest() <-chan Snapshot { return b.latest }

// do queues a command for the bench goroutine without blocking.
func (b *Bench) do(f func()) error {
	select {
	case b.cmds <- f:
		return nil
	default:
		return ErrBenchBusy
	}
}

// DriveOn switches the drive on at the current frequency and amplitude.
func (b *Bench) DriveOn() error { return b.do(func() { b.setDrive(b.freq, b.amp, true) }) }

// DriveOff ramps the drive to zero.
func (b *Bench) DriveOff() error { return b.do(func() { b.driveOff("drive switched off") }) }

// StepUp moves the drive up by the step (manual mode).
func (b *Bench) StepUp() error { return b.do(func() { b.manualMove(b.freq + b.step) }) }

// StepDown moves the drive down by the step (manual mode).
func (b *Bench) StepDown() error { return b.do(func() { b.manualMove(b.freq - b.step) }) }

// SetFreq moves the drive to f (manual mode).
func (b *Bench) SetFreq(f float64) error { return b.do(func() { b.manualMove(f) }) }

// SetStep changes the manual step.
func (b *Bench) SetStep(s float64) error {
	return b.do(func() {
		if s > 0 && !math.IsInf(s, 0) {
			b.step = s
			b.say(fmt.Sprintf("step is now %.4g Hz", s))
		}
	})
}

// SetAmp changes the drive amplitude within the limit.
func (b *Bench) SetAmp(a float64) error {
	return b.do(func() {
		lim := b.drv.Info().MaxAmp
		if a < 0 || (lim > 0 && a > lim) {
			b.fail(fmt.Sprintf("drive amplitude %.4g %s refused: the limit is %.4g %s", a, b.drv.Info().Unit, lim, b.drv.Info().Unit))
			return
		}
		b.amp = a
		if b.driveOn {
			b.setDrive(b.freq, a, true)
		}
	})
}

// LogNow logs the current point once measured; force logs it even if not
// settled (marked so).
func (b *Bench) LogNow(force bool) error {
	return b.do(func() {
		b.logReq = true
		b.forceReq = force
		if b.phase == PhaseHolding || (force && b.phase == PhaseSettling) {
			if b.decidedT == 0 {
				b.decidedT = b.now
			}
			b.startMeasure()
		}
	})
}

// SetAutoLog turns logging each settled point on or off.
func (b *Bench) SetAutoLog(on bool) error {
	return b.do(func() {
		b.autoLog = on
		if on && b.phase == PhaseHolding {
			b.logReq = true
			b.startMeasure()
		}
	})
}

// SetNote attaches a note to the next logged point.
func (b *Bench) SetNote(s string) error { return b.do(func() { b.note = s }) }

// StartSweep runs the plan from its first point.
func (b *Bench) StartSweep() error {
	return b.do(func() {
		b.mode = ModeSweep
		b.sweepDone = false
		b.planIdx = 0
		b.legPts = map[Direction][]jump.Point{}
		b.say(fmt.Sprintf("sweep started: %d points", len(b.steps)))
		b.gotoPlan()
	})
}

// Pause holds the sweep at the current point.
func (b *Bench) Pause() error {
	return b.do(func() {
		if b.mode == ModeSweep {
			b.mode = ModePaused
			b.say("sweep paused")
		}
	})
}

// Resume continues a paused sweep at the point it left.
func (b *Bench) Resume() error {
	return b.do(func() {
		if b.mode == ModePaused {
			b.mode = ModeSweep
			b.say("sweep resumed")
			b.gotoPlan()
		}
	})
}

// StopSweep ends the sweep and ramps the drive down.
func (b *Bench) StopSweep() error {
	return b.do(func() {
		if b.mode == ModeSweep || b.mode == ModePaused {
			b.mode = ModeDone
			b.stopWhy = "stopped by the user"
			b.driveOff("sweep stopped; drive ramped down")
		}
	})
}

// Reverse turns the remaining sweep around: from the current point it goes
// the other way back to the plan's edge.
func (b *Bench) Reverse() error {
	return b.do(func() {
		if b.mode != ModeSweep && b.mode != ModePaused {
			return
		}
		cur := b.freq
		dir := Down
		if b.legDir == Down {
			dir = Up
		}
		var rest []Step
		leg := b.cfg.Plan.legFreqs()
		if dir == Up {
			for _, f := range leg {
				if f > cur+1e-9 {
					rest = append(rest, Step{FreqHz: f, Direction: Up})
				}
			}
		} else {
			for i := len(leg) - 1; i >= 0; i-- {
				if leg[i] < cur-1e-9 {
					rest = append(rest, Step{FreqHz: leg[i], Direction: Down})
				}
			}
		}
		b.steps = append(append([]Step(nil), b.steps[:b.planIdx]...), rest...)
		b.say("sweep reversed: now going " + dir.String())
		b.gotoPlan()
	})
}

func (b *Bench) say(s string) {
	b.messages = append(b.messages, s)
	if len(b.messages) > 50 {
		b.messages = b.messages[len(b.messages)-50:]
	}
	b.emit(Event{Kind: EventMessage, Text: s})
}

func (b *Bench) fail(s string) {
	b.errText = s
	b.messages = append(b.messages, "error: "+s)
	b.emit(Event{Kind: EventError, Text: s})
}

func (b *Bench) emit(e Event) {
	if b.cfg.OnEvent != nil {
		b.cfg.OnEvent(e)
	}
}

// setDrive asks the drive for (f, a) and starts a new point.
func (b *Bench) setDrive(f, a float64, on bool) {
	if f <= 0 || math.IsNaN(f) || math.IsInf(f, 0) {
		b.fail(fmt.Sprintf("frequency %.4g Hz refused: it must be positive", f))
		return
	}
	info := b.src.Info()
	if info.RateHz > 0 && f > info.RateHz/(2*b.maxHarmonic()) {
		b.fail(fmt.Sprintf("frequency %.4g Hz refused: harmonic %.4g would pass the Nyquist frequency %.4g Hz", f, b.maxHarmonic(), info.RateHz/2))
		return
	}
	b.measK = b.cfg.Plan.MeasureCycles
	if b.drv.Info().Coherent && info.RateHz > 0 {
		// The measurement block must hold whole cycles of every
		// subharmonic too; the frequency moves by at most a fiftieth of a
		// step (or 1 ppm) to make it coherent.
		den := 1
		for _, h := range b.cfg.Harmonics {
			den = lcm(den, h.Den)
		}
		f, b.measK, _ = CoherentFreq(f, info.RateHz, b.measK, 2*b.measK+den, den, math.Max(b.step/50, f*1e-6))
	}
	if err := b.drv.Set(f, a); err != nil {
		b.fail(err.Error())
		return
	}
	b.track.reset(f, info.RateHz)
	b.track.free = b.drv.Info().Kind == "manual"
	if b.track.free {
		b.say(fmt.Sprintf("set the generator to %.4f Hz at %.4g %s (turn it up and down gradually); the point starts when the reference reads it",
			f, a, b.drv.Info().Unit))
	}
	if on && !b.driveOn {
		b.say("drive on: " + SafetyNote)
	}
	b.freq, b.amp, b.driveOn = f, a, on
	b.errText = ""
	b.measFlags = 0 // a new point: the gaps and overloads met while measuring it
	b.phase = PhaseChanging
	b.changeT = b.now
	b.logReq = b.mode == ModeSweep || b.autoLog
	b.forceReq = false
}

func (b *Bench) maxHarmonic() float64 {
	m := 1.0
	for _, h := range b.cfg.Harmonics {
		m = math.Max(m, h.Ratio())
	}
	return m
}

func lcm(a, b int) int {
	g, h := a, b
	for h != 0 {
		g, h = h, g%h
	}
	return a / g * b
}

func (b *Bench) manualMove(f float64) {
	if b.mode == ModeSweep {
		b.mode = ModePaused
		b.say("sweep paused for a manual step; resume to continue the plan")
	}
	b.legDir = Manual
	if !b.driveOn {
		// With the drive off a step only moves the frequency it will start at.
		if f > 0 && !math.IsInf(f, 0) {
			b.freq = f
		}
		return
	}
	b.setDrive(f, b.amp, true)
}

// gotoPlan sets the drive to the plan's current step.
func (b *Bench) gotoPlan() {
	if b.planIdx >= len(b.steps) {
		b.finishSweep()
		return
	}
	s := b.steps[b.planIdx]
	b.legDir = s.Direction
	b.step = b.cfg.Plan.stepNear(s.FreqHz)
	b.setDrive(s.FreqHz, b.amp, true)
	if s.Kind == StepReposition {
		b.logReq = false
	}
}

// curStep is the plan step being measured, or a zero Step outside a sweep.
func (b *Bench) curStep() Step {
	if b.mode == ModeSweep && b.planIdx < len(b.steps) {
		return b.steps[b.planIdx]
	}
	return Step{}
}

func (b *Bench) finishSweep() {
	b.mode = ModeDone
	b.sweepDone = true
	b.endStats = b.src.Stats()
	b.stopWhy = ""
	b.driveOff("sweep finished; drive ramped down")
	b.writeSidecar(true)
	b.emit(Event{Kind: EventSweepDone, Text: "sweep finished"})
}

func (b *Bench) driveOff(msg string) {
	if b.driveOn || b.drv.Amp() > 0 {
		ctx, cancel := context.WithCancel(context.Background())
		cancel() // Off must not block the loop: start the ramp, do not wait
		_ = b.drv.Off(ctx)
	}
	b.driveOn = false
	b.phase = PhaseOff
	b.say(msg)
}

// Run reads the source until ctx ends, the source fails or Stop ends the
// plan in a headless run. On the way out it ramps the drive down (while
// still reading the source, so a simulated rig keeps producing the ramp),
// closes the record and writes the sidecar.
func (b *Bench) Run(ctx context.Context) error {
	info := b.src.Info()
	if b.cfg.RecordEager {
		if err := b.openRecord(); err != nil {
			return err
		}
	}
	if b.cfg.RawPath != "" {
		w, err := CreateWAV(b.cfg.RawPath, len(info.Channels)+RawDriveChannels, info.RateHz)
		if err != nil {
			return err
		}
		b.raw = w
		b.rawInfo = &RawInfo{File: b.cfg.RawPath, RateHz: info.RateHz,
			Channels: append(append([]string(nil), info.Channels...), "drive_phase_frac_cyc", "drive_hz", "drive_amp")}
	}
	if b.cfg.DriveOnAtStart {
		b.setDrive(b.freq, b.amp, true)
	}
	blocks := b.src.Blocks()
	b.publish(true)
	for {
		select {
		case <-ctx.Done():
			if b.stopWhy == "" && !b.sweepDone {
				b.stopWhy = "interrupted"
			}
			return b.shutdown(nil)
		case f := <-b.cmds:
			f()
			b.publish(true)
		case blk, ok := <-blocks:
			if !ok {
				err := b.src.Err()
				if err == nil {
					err = fmt.Errorf("%w: the %s source %q ended", ErrDisconnected, info.Kind, info.Name)
				}
				b.fail(err.Error())
				b.stopWhy = err.Error()
				return b.shutdown(err)
			}
			b.onBlock(blk)
			b.src.Release(blk)
			if b.runErr != nil {
				return b.shutdown(b.runErr)
			}
			b.publish(false)
		}
	}
}

// shutdown ramps the drive to zero, reading blocks meanwhile, then closes
// the record.
func (b *Bench) shutdown(err error) error {
	if b.drv.Amp() > 0 || b.driveOn {
		done := make(chan struct{})
		octx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
		var offErr error
		go func() { offErr = b.drv.Off(octx); close(done) }()
		blocks := b.src.Blocks()
	wait:
		for {
			select {
			case <-done:
				break wait
			case blk, ok := <-blocks:
				if !ok {
					<-done
					break wait
				}
				b.src.Release(blk)
			}
		}
		cancel()
		b.driveOn = false
		b.phase = PhaseOff
		if offErr != nil {
			b.say(fmt.Sprintf("the drive could not be ramped down: %v", offErr))
		} else {
			b.say(fmt.Sprintf("drive ramped down (now %.3g %s)", b.drv.Amp(), b.drv.Info().Unit))
		}
	}
	if b.raw != nil {
		if cerr := b.raw.Close(); cerr != nil && err == nil {
			err = cerr
		}
	}
	b.writeSidecar(b.sweepDone && b.stopWhy == "")
	if b.rec != nil {
		if cerr := b.rec.Close(); cerr != nil && err == nil {
			err = cerr
		}
	}
	b.finished = true
	b.final = b.snapshot()
	b.publish(true)
	b.emit(Event{Kind: EventStopped, Text: b.stopWhy})
	return err
}

// Final returns the bench's last snapshot, with everything logged. Call it
// after Run has returned (Latest's one slot may have been read by a
// watcher already).
func (b *Bench) Final() Snapshot { return b.final }

func (b *Bench) openRecord() error {
	if b.rec != nil || b.cfg.RecordPath == "" {
		return nil
	}
	cols := Columns{Unit: b.cfg.Unit, DriveUnit: b.drv.Info().Unit}
	for _, h := range b.cfg.Harmonics {
		cols.Harmonics = append(cols.Harmonics, h.String())
	}
	rec, err := CreateRecord(b.cfg.RecordPath, cols)
	if err != nil {
		return err
	}
	b.rec = rec
	b.writeSidecar(false)
	return nil
}

func (b *Bench) writeSidecar(completed bool) {
	if b.rec == nil || b.sidecar == nil {
		return
	}
	sc := b.sidecar
	sc.Format = SidecarFormat
	sc.Record = b.rec.Path()
	sc.Source = b.src.Info()
	sc.Drive = b.drv.Info()
	sc.Unit = b.cfg.Unit
	sc.SensorKind = b.cfg.SensorKind
	sc.VoltsPerUnit, sc.OffsetV = b.cfg.VoltsPerUnit, b.cfg.OffsetV
	sc.Harmonics = nil
	for _, h := range b.cfg.Harmonics {
		sc.Harmonics = append(sc.Harmonics, h.String())
	}
	if sc.Started.IsZero() {
		sc.Started = time.Now().UTC()
	}
	st := b.src.Stats()
	if b.sweepDone {
		st = b.endStats
	}
	ns := 0
	for _, p := range b.points {
		if !p.Settled {
			ns++
		}
	}
	if b.rawInfo != nil {
		ri := *b.rawInfo
		sc.Raw = &ri
	}
	sc.Summary = &Summary{Finished: time.Now().UTC(), Points: len(b.points), NotSettled: ns,
		Jumps: b.jumps, BandLoHz: b.bandLo, BandHiHz: b.bandHi, Completed: completed,
		StopReason: b.stopWhy, Gaps: st.Gaps, Overloads: st.Overloads, Dropped: st.Dropped}
	if err := WriteSidecar(SidecarPath(b.rec.Path()), sc); err != nil {
		b.fail(err.Error())
	}
}

// onBlock processes one block of samples.
func (b *Bench) onBlock(blk *Block) {
	n := blk.Frames
	ch := blk.Channels
	b.now = blk.StartS + float64(n)/blk.RateHz
	blockFirst := b.frames
	b.frames += int64(n)
	if b.raw != nil {
		if err := b.raw.WriteBlock(blk); err != nil {
			b.fail(err.Error())
			b.runErr = err
			return
		}
	}
	if cap(b.x) < n {
		b.x = make([]float64, n)
		b.r = make([]float64, n)
	}
	x, r := b.x[:n], b.r[:n]
	offV, inv := b.cfg.OffsetV, 1/b.cfg.VoltsPerUnit
	lo, hi := math.Inf(1), math.Inf(-1)
	data := blk.Data[b.cfg.Response:]
	for i := range x {
		v := (data[i*ch] - offV) * inv
		x[i] = v
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
	}
	peak := math.Max(hi-b.dc, b.dc-lo)
	if b.cfg.Reference >= 0 {
		refd := blk.Data[b.cfg.Reference:]
		for i := range r {
			r[i] = refd[i*ch]
		}
	}
	if b.cfg.MaxDisp > 0 && peak > b.cfg.MaxDisp && b.frames > int64(blk.RateHz) {
		b.limitStop(peak)
		return
	}
	ph := blk.PhaseCyc
	if ph == nil && blk.Flags&FlagGap != 0 {
		// Times on either side of a gap need not follow on (a reconnect
		// loses an unknown number of frames): fit only what comes after.
		b.track.clearWindow()
	}
	if ph == nil {
		// The source does not know the drive's phase: track it.
		sig := x
		if b.cfg.Reference >= 0 {
			sig = r
		}
		ph = b.track.phases(blk, sig)
	}
	t := blk.TimeS
	b.keep(x, ph, blk)
	spoiled := blk.Flags&(FlagGap|FlagOverload) != 0
	if spoiled {
		b.fast.Reset()
		if b.phase == PhaseSettling {
			b.det.Update(complex(math.NaN(), math.NaN())) // tells the detector of the gap
		}
		if b.phase == PhaseMeasuring {
			b.measX, b.measR, b.measP, b.measT = b.measX[:0], b.measR[:0], b.measP[:0], b.measT[:0]
			b.measFlags |= blk.Flags
			if blk.Flags&FlagGap != 0 {
				// A break in the path may have disturbed the resonator too:
				// settle again before measuring.
				b.phase = PhaseSettling
				b.det.Reset(b.blockS)
				b.decidedT = 0
				b.say(fmt.Sprintf("gap in the samples at %.4g Hz: settling and measuring the point again", b.freq))
			} else {
				b.say(fmt.Sprintf("%s in the samples at %.4g Hz: measuring the point again", blk.Flags, b.freq))
			}
		}
	}
	if b.phase == PhaseChanging {
		if blk.DriveHz == 0 && b.track.free {
			// A generator set by hand: settle once the reference reads
			// the frequency asked for.
			if b.track.matched(b.freq, math.Max(b.step/20, 1e-4*b.freq)) {
				b.say(fmt.Sprintf("the generator reads %.4f Hz: settling", b.track.f))
				b.startSettle(blk)
			}
		} else if blk.DriveHz == 0 {
			// The source cannot say when the change reached it: allow for
			// its latency and the drive's ramp.
			if b.now-b.changeT >= changeLatencyS {
				b.startSettle(blk)
			}
		} else if math.Abs(blk.DriveHz-b.freq) <= 1e-9*b.freq && math.Abs(blk.DriveAmp-b.amp) <= 1e-9*math.Max(b.amp, 1e-300) {
			b.startSettle(blk)
		}
	}
	// Feed the fast lock-in chunk by chunk; a chunk ends where a settle block ends.
	off := 0
	for off < n {
		var tt []float64
		if t != nil {
			tt = t[off:]
		}
		used, done := b.pushSettle(b.fast, x[off:], tt, ph[off:])
		if b.phase == PhaseMeasuring && !spoiled { // never measure across the flagged block
			if len(b.measX) == 0 {
				b.measAt = blockFirst + int64(off)
			}
			b.measAppend(x[off:off+used], r[off:off+used], ph[off:off+used], tt, used, blk, off)
		}
		off += used
		if done {
			b.onSettleBlock()
			if b.phase == PhaseMeasuring && len(b.measX) == 0 && off < n {
				// measurement starts at the next frame
				continue
			}
		}
		if used == 0 {
			break
		}
	}
	if b.phase == PhaseMeasuring && len(b.measX) >= b.measN {
		b.finishMeasure()
	}
}

// pushSettle feeds the settle lock-in and keeps the response's offset (for
// the displacement limit). The lock-in fits the offset with the harmonics,
// so the level does not leak into them.
func (b *Bench) pushSettle(l *lockin.LockIn, x, t, ph []float64) (int, bool) {
	n, done := l.Push(x[:len(ph)], t, ph)
	if done {
		b.dc = l.Result().Offset(0)
	}
	return n, done
}

// keep appends the block's calibrated response, drive phase and times to
// the rings the screen's views and the live readout are computed from.
func (b *Bench) keep(x, ph []float64, blk *Block) {
	k := len(b.ring)
	for i := range x {
		b.ring[b.ringPos], b.ringPh[b.ringPos], b.ringT[b.ringPos] = x[i], ph[i], blk.Frame(i)
		b.ringPos++
		if b.ringPos == k {
			b.ringPos = 0
		}
	}
	b.ringN += len(x)
}

// liveReadout measures the harmonics over the newest whole block of the
// live lock-in's cycles in the rings. It runs at display rate, not per
// sample.
func (b *Bench) liveReadout() {
	rate := b.src.Info().RateHz
	if b.freq <= 0 || rate <= 0 || !b.driveOn {
		return
	}
	cyc := float64(b.live.Config().Cycles)
	m := int(math.Ceil((cyc+1)*rate/b.freq)) + 2
	k := len(b.ring)
	if m > k || m > b.ringN {
		return
	}
	x, ph, t := b.liveX[:m], b.livePh[:m], b.liveT[:m]
	for i := 0; i < m; i++ {
		j := (b.ringPos - m + i + k) % k
		x[i], ph[i], t[i] = b.ring[j], b.ringPh[j], b.ringT[j]
	}
	b.live.Reset()
	for len(ph) > 0 {
		n, done := b.live.Push(x[:len(ph)], t, ph)
		if done {
			r := b.live.Result()
			if !r.OK {
				return
			}
			for i, h := range b.cfg.Harmonics {
				z := b.toDisp(r.At(0, i), h)
				b.liveAmp[i] = cmplx.Abs(z)
				b.livePhase[i] = cmplx.Phase(z) * 180 / math.Pi
			}
			return
		}
		if n == 0 {
			return
		}
		x, ph, t = x[n:], ph[n:], t[n:]
	}
}

// toDisp removes the input's stored response (Correct) from a harmonic's
// complex amplitude and turns the sensor quantity into displacement
// (velocity: divide by jω; acceleration: by −ω²).
func (b *Bench) toDisp(z complex128, h lockin.Harmonic) complex128 {
	w := 2 * math.Pi * b.freq * h.Ratio()
	if b.cfg.Correct != nil && b.cfg.Reference < 0 {
		if c := b.cfg.Correct(b.freq * h.Ratio()); c != 0 && !cmplx.IsNaN(c) {
			z /= c
		}
	}
	switch b.cfg.SensorKind {
	case "velocity":
		return z / complex(0, w)
	case "acceleration":
		return z / complex(-w*w, 0)
	}
	return z
}

func (b *Bench) startSettle(blk *Block) {
	b.phase = PhaseSettling
	b.decidedT = 0
	b.setT = blk.StartS
	b.blockS = float64(b.cfg.SettleCycles) / b.freq
	b.fast.Reset()
	b.det.Reset(b.blockS)
	b.st = settle.Status{}
	b.trend = b.trend[:0]
}

func (b *Bench) onSettleBlock() {
	z := b.toDisp(b.fast.Result().At(0, 0), lockin.Harmonic{Num: 1, Den: 1})
	b.trend = append(b.trend, cmplx.Abs(z))
	if len(b.trend) > 600 {
		b.trend = b.trend[len(b.trend)-600:]
	}
	if b.phase == PhaseHolding {
		// Settled and holding: watch for the response moving away from
		// its settled value (a disturbance, a jump) and settle again.
		ref := cmplx.Abs(b.heldZ)
		if d := cmplx.Abs(z - b.heldZ); d > math.Max(10*b.cfg.Plan.SettleTol*ref, 10*b.cfg.SettleFloor) && ref > 0 {
			b.say(fmt.Sprintf("the response moved by %.2g %% at %.4f Hz: settling again", 100*d/ref, b.freq))
			b.phase = PhaseSettling
			b.det.Reset(b.blockS)
			b.decidedT = 0
		}
		return
	}
	if b.phase != PhaseSettling {
		return
	}
	b.st = b.det.Update(z)
	switch b.st.State {
	case settle.Settled, settle.GaveUp:
		b.decidedT = b.now
		b.heldZ = z
		if f := b.st.Final; b.st.State == settle.Settled && !cmplx.IsNaN(f) {
			b.heldZ = f
		}
		if b.st.State == settle.GaveUp {
			b.say(fmt.Sprintf("%.4g Hz did not settle within %v: logged as not settled", b.freq, b.cfg.Plan.MaxDwell))
		}
		if b.logReq {
			b.startMeasure()
		} else if b.mode == ModeSweep && b.curStep().Kind == StepReposition {
			b.planIdx++
			b.gotoPlan()
		} else {
			b.phase = PhaseHolding
		}
	}
}

func (b *Bench) startMeasure() {
	b.phase = PhaseMeasuring
	b.measX, b.measR, b.measP, b.measT = b.measX[:0], b.measR[:0], b.measP[:0], b.measT[:0]
	if b.measK < 1 {
		b.measK = b.cfg.Plan.MeasureCycles
	}
	// The lock-in's block starts at the first whole cycle after the first
	// frame: one cycle more (and two frames) make sure a whole block fits.
	b.measN = int(math.Ceil(float64(b.measK+1)*b.src.Info().RateHz/b.freq)) + 2
}

func (b *Bench) measAppend(x, r, ph, t []float64, n int, blk *Block, off int) {
	need := b.measN - len(b.measX)
	if need <= 0 {
		return
	}
	if n > need {
		n = need
	}
	b.measX = append(b.measX, x[:n]...)
	b.measR = append(b.measR, r[:n]...)
	b.measP = append(b.measP, ph[:n]...)
	for i := 0; i < n; i++ {
		b.measT = append(b.measT, blk.Frame(off+i))
	}
}

func (b *Bench) finishMeasure() {
	n := b.measN
	x, ph, t := b.measX[:n], b.measP[:n], b.measT[:n]
	p := Point{Index: len(b.points), TimeS: b.now, Clock: time.Now(), FreqSetHz: b.freq,
		DriveAmp: b.drv.Amp(), Flags: b.measFlags}
	if b.mode == ModeSweep {
		p.Direction = b.legDir
		if st := b.curStep(); st.Kind == StepRefine && b.note == "" {
			b.note = fmt.Sprintf("refine %d", st.Level)
		}
	} else {
		p.Direction = Manual
	}
	zs, zr, ok := b.demodWindow(x, b.measR[:n], t, ph)
	if !ok {
		b.say(fmt.Sprintf("the measurement at %.4f Hz held no whole block of %d cycles: measuring again", b.freq, b.measK))
		b.startMeasure()
		return
	}
	corr := complex(1, 0)
	if b.cfg.Reference >= 0 && b.cfg.RefVoltsPerDrive != 0 && zr != 0 {
		corr = complex(p.DriveAmp*b.cfg.RefVoltsPerDrive, 0) / zr
	}
	amps := make([]float64, len(zs))
	for i, h := range b.cfg.Harmonics {
		z := zs[i]
		if corr != 1 {
			z *= complex(cmplx.Abs(corr), 0) * cmplx.Rect(1, h.Ratio()*cmplx.Phase(corr))
		}
		z = b.toDisp(z, h)
		p.Amp = append(p.Amp, cmplx.Abs(z))
		p.PhaseDeg = append(p.PhaseDeg, cmplx.Phase(z)*180/math.Pi)
		amps[i] = cmplx.Abs(z)
	}
	intAmps := amps[:0:0]
	for i, h := range b.cfg.Harmonics {
		if h.Den == 1 {
			intAmps = append(intAmps, amps[i])
		}
	}
	p.THD = dsp.THD(intAmps)
	if fit, err := dsp.Fit4(t, x, b.freq); err == nil {
		p.FreqMeasHz = fit.FreqHz
	} else {
		p.FreqMeasHz = math.NaN()
	}
	p.NoiseDensity = noiseFloor(x, b.src.Info().RateHz, b.freq, b.cfg.Harmonics)
	b.noise = p.NoiseDensity
	if b.decidedT == 0 {
		b.decidedT = b.now
	}
	p.Dwell = time.Duration((b.decidedT - b.changeT) * float64(time.Second))
	p.MeasureCycles = b.measK
	p.TauS = b.st.TauS
	switch {
	case b.st.State == settle.Settled:
		p.Settled, p.SettleState = true, "settled"
	case b.st.State == settle.GaveUp:
		p.SettleState = "gave-up"
	default:
		p.SettleState = "forced"
	}
	p.Note = b.note
	if err := b.openRecord(); err != nil {
		b.fail(err.Error())
		b.runErr = err
		return
	}
	if b.rec != nil {
		if err := b.rec.Write(p); err != nil {
			b.fail(err.Error())
			b.runErr = err
			return
		}
	}
	if b.raw != nil {
		b.rawInfo.Points = append(b.rawInfo.Points, RawPoint{Point: p.Index, FirstFrame: b.measAt, Frames: int64(n)})
		if err := b.raw.Sync(); err != nil {
			b.fail(err.Error())
		}
	}
	b.note = ""
	b.points = append(b.points, p)
	b.writeSidecar(false)
	where := "memory"
	if b.rec != nil {
		where = b.rec.Path()
	}
	b.say(fmt.Sprintf("logged point %d at %.4f Hz: %.4g %s (%s) to %s", p.Index, p.FreqSetHz, p.Amp[0], b.cfg.Unit, p.SettleState, where))
	b.emit(Event{Kind: EventLogged, Point: &b.points[len(b.points)-1]})
	b.logReq = false
	b.phase = PhaseHolding
	if b.mode == ModeSweep {
		st := b.curStep()
		if st.Kind == StepRefine {
			b.refinePoint(p, st)
		} else {
			b.findJumps(p)
		}
		b.planIdx++
		b.gotoPlan()
	}
	b.publish(true)
}

func (b *Bench) findJumps(p Point) {
	d := p.Direction
	b.legPts[d] = append(b.legPts[d], jump.Point{FreqHz: p.FreqSetHz, Amp: p.Amp[0]})
	found := jump.Find(b.legPts[d], jump.Config{})
	known := 0
	for _, j := range b.jumps {
		if j.Direction == d.String() {
			known++
		}
	}
	for i := known; i < len(found); i++ {
		j := found[i]
		jj := JumpJSON{Direction: d.String(), FromHz: j.FromHz, ToHz: j.ToHz, AmpBefore: j.AmpBefore, AmpAfter: j.AmpAfter, Rise: j.Rise}
		b.jumps = append(b.jumps, jj)
		kind := "down"
		if j.Rise {
			kind = "up"
		}
		b.say(fmt.Sprintf("jump %s on the %s sweep between %.4f and %.4f Hz", kind, d, j.FromHz, j.ToHz))
		b.emit(Event{Kind: EventJump, Jump: &b.jumps[len(b.jumps)-1]})
		if b.cfg.Plan.Refine {
			b.planRefine(len(b.jumps)-1, 1)
		}
	}
	b.updateBand()
}

func (b *Bench) updateBand() {
	var up, down *JumpJSON
	for i := range b.jumps {
		switch b.jumps[i].Direction {
		case "up":
			up = &b.jumps[i]
		case "down":
			down = &b.jumps[i]
		}
	}
	if up == nil || down == nil {
		return
	}
	mu := (up.FromHz + up.ToHz) / 2
	md := (down.FromHz + down.ToHz) / 2
	b.bandLo, b.bandHi = math.Min(mu, md), math.Max(mu, md)
}

func (b *Bench) limitStop(peak float64) {
	msg := fmt.Sprintf("displacement %.4g %s passed the limit %.4g %s at %.4f Hz: sweep stopped, drive ramped down", peak, b.cfg.Unit, b.cfg.MaxDisp, b.cfg.Unit, b.freq)
	b.stopWhy = msg
	if b.mode == ModeSweep || b.mode == ModePaused {
		b.mode = ModeDone
	}
	b.driveOff(msg)
	b.fail(msg)
	b.runErr = fmt.Errorf("%w: %s", ErrDisplacementLimit, msg)
}

// publish hands the screen a fresh snapshot, at most every 40 ms unless
// forced.
func (b *Bench) publish(force bool) {
	now := time.Now()
	if !force && now.Sub(b.lastPub) < 40*time.Millisecond {
		return
	}
	b.lastPub = now
	s := b.snapshot()
	select {
	case <-b.latest:
	default:
	}
	b.latest <- s
}

func (b *Bench) snapshot() Snapshot {
	info := b.src.Info()
	b.liveReadout()
	s := Snapshot{TimeS: b.now, Source: info, Stats: b.src.Stats(), Drive: b.drv.Info(),
		DriveOn: b.driveOn, FreqHz: b.freq, AmpSet: b.amp, AmpNow: b.drv.Amp(), StepHz: b.step,
		LimitAmp: b.drv.Info().MaxAmp, LimitDisp: b.cfg.MaxDisp, Mode: b.mode, Direction: b.legDir,
		PlanDone: b.planIdx, PlanTotal: len(b.steps), AutoLog: b.autoLog, NextNote: b.note,
		Phase: b.phase, Settle: b.st, Unit: b.cfg.Unit, THD: 0, Noise: b.noise,
		ThirdLimit: b.cfg.ThirdLimitPct, TrendDt: b.blockS,
		Points: b.points, Jumps: b.jumps, BandLoHz: b.bandLo, BandHiHz: b.bandHi,
		Err: b.errText, Finished: b.finished}
	if b.sweepDone {
		s.SweepStats = b.endStats
	}
	if b.phase >= PhaseSettling {
		s.SinceSetS = b.now - b.setT
	}
	if b.rec != nil {
		s.RecordPath = b.rec.Path()
	}
	s.Messages = append([]string(nil), b.messages...)
	var intAmps []float64
	for i, h := range b.cfg.Harmonics {
		s.Harmonics = append(s.Harmonics, h.String())
		if h.Den == 1 {
			intAmps = append(intAmps, b.liveAmp[i])
		}
		if h == (lockin.Harmonic{Num: 3, Den: 1}) && b.liveAmp[0] > 0 {
			s.ThirdPct = 100 * b.liveAmp[i] / b.liveAmp[0]
		}
	}
	s.Amp = append([]float64(nil), b.liveAmp...)
	s.PhaseDeg = append([]float64(nil), b.livePhase...)
	if len(intAmps) > 1 {
		s.THD = dsp.THD(intAmps)
	}
	s.ThirdFlag = b.driveOn && s.ThirdPct > b.cfg.ThirdLimitPct
	s.Trend = append([]float64(nil), b.trend...)
	if b.ringN >= specFrames && info.RateHz > 0 {
		k, n := len(b.ring), specFrames
		for i := 0; i < n; i++ {
			b.specBuf[i] = b.ring[(b.ringPos-n+i+k)%k]
		}
		s.Spectrum = b.spec.Amplitude(nil, b.specBuf)
		if b.driveOn {
			b.noiseBuf = b.spec.Density(b.noiseBuf, b.specBuf)
			s.Noise = noiseFromDensity(b.noiseBuf, info.RateHz/float64(n), b.freq)
		}
		s.BinHz = info.RateHz / float64(n)
		nw := int(math.Min(float64(n), math.Round(4*info.RateHz/math.Max(b.freq, 1))))
		s.Wave = append([]float64(nil), b.specBuf[n-nw:]...)
		s.WaveDt = 1 / info.RateHz
	}
	return s
}

// demodWindow measures the window's harmonics with a synchronous lock-in
// block of measK whole cycles (a least-squares fit of the harmonics and an
// offset, exact for coherent sampling and for any other), and the
// reference channel's fundamental when there is one.
func (b *Bench) demodWindow(x, r, t, ph []float64) (zs []complex128, zr complex128, ok bool) {
	nch := 1
	data := x
	if b.cfg.Reference >= 0 {
		nch = 2
		data = make([]float64, 2*len(x))
		for i := range x {
			data[2*i], data[2*i+1] = x[i], r[i]
		}
	}
	l, err := lockin.New(lockin.Config{Harmonics: b.cfg.Harmonics, Channels: nch, Mode: lockin.Sync,
		Cycles: b.measK, RateHz: b.src.Info().RateHz})
	if err != nil {
		return nil, 0, false
	}
	for len(ph) > 0 {
		n, done := l.Push(data[:len(ph)*nch], t, ph)
		if done {
			res := l.Result()
			if !res.OK {
				return nil, 0, false
			}
			zs = make([]complex128, len(b.cfg.Harmonics))
			for i := range zs {
				zs[i] = res.At(0, i)
			}
			if nch == 2 {
				zr = res.At(1, 0)
			}
			return zs, zr, true
		}
		if n == 0 {
			break
		}
		data, ph = data[n*nch:], ph[n:]
		if t != nil {
			t = t[n:]
		}
	}
	return nil, 0, false
}

// noiseFloor estimates the response's noise density (display unit per √Hz)
// from the median of the spectrum away from the harmonics. For Gaussian
// noise a bin's magnitude is Rayleigh distributed, whose median is
// √(ln 2) times its RMS (a standard property of the Rayleigh distribution).
func noiseFloor(x []float64, rate, f float64, hs []lockin.Harmonic) float64 {
	n := len(x)
	if n < 64 || rate <= 0 {
		return math.NaN()
	}
	sp := dsp.NewSpectrum(n, dsp.Hann, rate)
	return noiseFromDensity(sp.Density(nil, x), rate/float64(n), f)
}

// noiseFromDensity takes the median of a density spectrum over the bins
// away from DC and from every harmonic and subharmonic (k/1, k/2, k/3) of f.
func noiseFromDensity(d []float64, binHz, f float64) float64 {
	var keep []float64
	for k := 3; k < len(d)-1; k++ {
		fk := float64(k) * binHz
		near := false
		for m := 1; m <= 12 && !near; m++ {
			for _, den := range []float64{1, 2, 3} {
				if math.Abs(fk-float64(m)*f/den) < 4*binHz {
					near = true
					break
				}
			}
		}
		if !near {
			keep = append(keep, d[k])
		}
	}
	if len(keep) == 0 {
		return math.NaN()
	}
	return median(keep) / math.Sqrt(math.Ln2)
}

func median(v []float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	m := len(s) / 2
	if len(s)%2 == 1 {
		return s[m]
	}
	return (s[m-1] + s[m]) / 2
}

// SafetyNote is shown when the drive is first enabled and in the README.
const SafetyNote = "a resonator driven at a jump can break and coils and amplifiers heat: stay within the rig's limits, keep clear of the moving parts, and follow local rules and your lab's safety officer"
