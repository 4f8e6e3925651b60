package lockin

import (
	"fmt"
	"slices"
	"time"
)

// LockIn measures the complex amplitudes of a set of harmonics of the drive
// in one or more channels of streamed samples. It holds all its buffers:
// after New, Push allocates nothing. A LockIn is not safe for concurrent
// use.
type LockIn struct {
	cfg  Config // normalized
	nh   int    // number of harmonics
	nch  int    // channels
	nb   int    // least-squares basis size, 1+2nh
	lden int    // L, the lcm of the harmonics' denominators
	k    []int  // harmonic h is the k[h]-th power of e^{j2πφ/L}
	dt   float64
	cyc  float64 // Sync block length in drive cycles

	rot    rotor
	hChain chain     // powers k (LowPass direct path)
	mChain chain     // powers mset ∪ k (Sync per-sample path)
	mset   []int     // exponents m ≥ 1 whose sums E_m the Gram matrix needs
	mpos   []int     // m → index into mset, −1 when not needed
	pw     []float64 // powers of e^{−j2πφ/L} at phase pwPh, 2·(mChain.maxExp+1)
	pwPh   float64
	pwOK   bool

	// Sync block accumulators.
	ys    []float64 // per channel: Σw·x, then Re, Im of Σw·x·e^{−jθ_h}
	es    []float64 // Σw, then Re, Im of Σw·e^{−j2πmu} per mset entry
	gram  []float64 // nb×nb scratch
	terms []gramTerm
	diag  []float64 // nb
	coef  []float64 // nb
	phs   []float64 // chunk phases, maxGoertzel+2
	sig   []float64 // per harmonic e^{−jω_h} of the current chunk
	rho   []float64 // per harmonic e^{−jθ_h} at the chunk's last frame
	gk    []float64 // per harmonic the Goertzel coefficients c, U_2, U_3, U_4 (and 8 spare)

	// Sync stream state.
	started bool
	inBlock bool
	bNext   float64 // phase of the next block boundary, drive cycles
	bEdge   float64 // bNext less linTol: a frame at or past it is on or past the boundary
	tStart  float64 // time of the current block's first boundary
	owned   int     // frames in [start, bNext) so far
	pend    pending
	runOn   bool    // a linear-phase run is open
	runA    float64 // model phase of the run's first frame
	runD    float64 // phase step of the run
	runN    int     // frames in the run

	// Time of frames when Push gets t == nil: frame g is at tOrg+(g−nOrg)·dt.
	frames   int64
	tOrg     float64
	nOrg     int64
	restarts int

	lp  lowPass
	res Result
}

// pending is the last frame seen; its weight needs the next frame's phase.
type pending struct {
	x       []float64 // its samples, one per channel
	ph      float64   // its drive phase
	phL     float64   // the phase of the frame before it
	t       float64   // its time
	wl      float64   // its weight from the interval on its left
	regular bool      // wl is half that interval, all inside the block
	mirror  bool      // first frame of all, on a boundary: wl is to equal the right half
}

// Result is one measurement. For Sync it covers one block of whole drive
// cycles; for LowPass it is a snapshot of the smoothed values.
//
// LockIn.Result returns a pointer to storage the LockIn reuses: the values hold
// until the next call of Push, Reset or Result. Copy what you keep.
type Result struct {
	// StartS and EndS are the times in seconds at which the drive phase
	// crossed the block's first and last boundary (interpolated between
	// the frames on either side). For LowPass both are the last frame's
	// time.
	StartS, EndS float64
	// Samples is the number of frames whose drive phase lies in
	// [start, end) (for LowPass: frames since Reset).
	Samples int
	// Cycles is the number of whole drive cycles the block spans
	// (Config.Cycles rounded up); 0 for LowPass.
	Cycles int
	// FreqHz is the mean drive frequency over the block,
	// Cycles/(EndS−StartS); 0 for LowPass.
	FreqHz float64
	// OK is false when the block's least-squares system was singular: two
	// harmonics (or a harmonic and the offset) alias onto each other at
	// this drive frequency and sample rate, or the phase did not advance.
	// The amplitudes are then NaN.
	OK bool

	nh   int
	z    []complex128 // channel-major
	mean []float64
}

// At returns the complex amplitude of harmonic h (an index into
// Config.Harmonics) in channel ch: |At| is the peak amplitude in the
// samples' unit and arg At the phase in radians relative to the drive's
// cosine at that multiple. It panics if ch or h is out of range.
func (r *Result) At(ch, h int) complex128 {
	if h < 0 || h >= r.nh {
		panic(fmt.Sprintf("lockin: harmonic index %d out of range [0,%d)", h, r.nh))
	}
	return r.z[ch*r.nh+h]
}

// Offset returns the mean (DC offset) of channel ch in the samples' unit.
func (r *Result) Offset(ch int) float64 { return r.mean[ch] }

// New returns a LockIn for cfg, or an error wrapping ErrConfig or
// ErrHarmonic that names the bad field.
func New(cfg Config) (*LockIn, error) {
	c, err := cfg.normalized()
	if err != nil {
		return nil, err
	}
	l := &LockIn{cfg: c, nh: len(c.Harmonics), nch: c.Channels, dt: 1 / c.RateHz, cyc: float64(c.Cycles)}
	l.nb = 1 + 2*l.nh
	l.lden = 1
	for _, h := range c.Harmonics {
		l.lden = lcm(l.lden, h.Den)
	}
	l.k = make([]int, l.nh)
	for i, h := range c.Harmonics {
		l.k[i] = h.Num * l.lden / h.Den
	}
	l.rot = newRotor(l.lden)
	l.hChain = newChain(l.k)

	// The Gram matrix of the basis 1, cos θ_h, −sin θ_h needs Σw·e^{−j2πmu}
	// for m = k_h, k_h+k_g and |k_h−k_g|.
	kmax := slices.Max(l.k)
	l.mpos = make([]int, 2*kmax+1)
	for i := range l.mpos {
		l.mpos[i] = -1
	}
	add := func(m int) {
		if m > 0 && l.mpos[m] < 0 {
			l.mpos[m] = 0
		}
	}
	for i, a := range l.k {
		add(a)
		for _, b := range l.k[:i+1] {
			add(a + b)
			add(a - b)
			add(b - a)
		}
	}
	for m, p := range l.mpos {
		if p >= 0 {
			l.mpos[m] = len(l.mset)
			l.mset = append(l.mset, m)
		}
	}
	l.mChain = newChain(append(slices.Clone(l.mset), l.k...))
	l.pw = make([]float64, 2*(l.mChain.maxExp+1))

	l.ys = make([]float64, l.nch*l.nb)
	l.es = make([]float64, 1+2*len(l.mset))
	l.gram = make([]float64, l.nb*l.nb)
	l.terms = l.gramTerms()
	l.diag = make([]float64, l.nb)
	l.coef = make([]float64, l.nb)
	l.phs = make([]float64, maxGoertzel+2)
	l.sig = make([]float64, 2*l.nh)
	l.rho = make([]float64, 2*l.nh)
	l.gk = make([]float64, 4*l.nh+8)
	l.pend.x = make([]float64, l.nch)
	l.res = Result{nh: l.nh, z: make([]complex128, l.nch*l.nh), mean: make([]float64, l.nch)}
	if c.Mode == LowPass {
		l.lp.init(l)
	}
	l.Reset()
	return l, nil
}

// Config returns the configuration in use: defaults filled in, harmonics in
// lowest terms, Cycles rounded up to a multiple of every denominator.
func (l *LockIn) Config() Config {
	c := l.cfg
	c.Harmonics = slices.Clone(c.Harmonics)
	return c
}

// Reset forgets all samples: the partial Sync block is dropped, the LowPass
// filters return to zero and frame times restart at 0 s. Call it after a
// gap in the samples or a jump of the drive phase.
func (l *LockIn) Reset() {
	l.started, l.inBlock, l.runOn = false, false, false
	l.owned, l.runN = 0, 0
	clear(l.ys)
	clear(l.es)
	l.frames, l.tOrg, l.nOrg = 0, 0, 0
	l.lp.reset()
	r := &l.res
	r.StartS, r.EndS, r.Samples, r.Cycles, r.FreqHz, r.OK = 0, 0, 0, 0, 0, false
	clear(r.z)
	clear(r.mean)
}

// Restarts counts the frames at which a Sync LockIn dropped its partial
// block and started over because the drive phase stepped backwards, by a
// whole block or more, or was not a number.
func (l *LockIn) Restarts() int { return l.restarts }

// Push feeds frames: x holds len(ph)·Channels samples interleaved by
// channel (frame i, channel c at x[i·Channels+c]), t the frame times in
// seconds (nil: frames 1/RateHz apart, continuing from the last frame
// seen), ph the drive phase at each frame in cycles, unwrapped and
// non-decreasing (u = A·cos 2πφ is the drive).
//
// In Sync mode each block's result is the weighted least-squares fit of
// the offset and all the harmonics at the known drive phase, the
// multi-harmonic form of the three-parameter (known-frequency) sine fit of
// IEEE Std 1057 / IEEE Std 1241-2010 Annex B.1; see the package comment and
// sync.go for the weights and the cost. Push consumes frames up to and
// including the first one past the end of the current block and returns
// how many it consumed and whether a block completed; Result then holds
// it. Feed the rest:
//
//	for len(ph) > 0 {
//		n, done := l.Push(x, t, ph)
//		if done { use(l.Result()) }
//		x, ph = x[n*ch:], ph[n:]
//		if t != nil { t = t[n:] }
//	}
//
// In LowPass mode Push consumes every frame and returns (len(ph), false);
// Value and Result give the smoothed values after it.
//
// Push panics if len(x) != len(ph)·Channels or t is neither nil nor as long
// as ph.
func (l *LockIn) Push(x, t, ph []float64) (n int, done bool) {
	if len(x) != len(ph)*l.nch {
		panic(fmt.Sprintf("lockin: Push got %d samples for %d frames of %d channels", len(x), len(ph), l.nch))
	}
	if t != nil && len(t) != len(ph) {
		panic(fmt.Sprintf("lockin: Push got %d times for %d frames", len(t), len(ph)))
	}
	if len(ph) == 0 {
		return 0, false
	}
	if l.cfg.Mode == LowPass {
		n = l.lp.push(l, x, t, ph)
	} else {
		n, done = l.pushSync(x, t, ph)
	}
	if t != nil {
		l.tOrg, l.nOrg = t[n-1], l.frames+int64(n-1)
	}
	l.frames += int64(n)
	return n, done
}

// timeAt returns the time of frame i of the current Push call.
func (l *LockIn) timeAt(t []float64, i int) float64 {
	if t != nil {
		return t[i]
	}
	return l.tOrg + float64(l.frames+int64(i)-l.nOrg)*l.dt
}

// Result returns the latest measurement: in Sync mode the last completed
// block (zero values with OK false before the first), in LowPass mode the
// smoothed values now. The storage is reused; see Result.
func (l *LockIn) Result() *Result {
	if l.cfg.Mode == LowPass {
		l.lp.snapshot(l)
	}
	return &l.res
}

// Value returns the complex amplitude of harmonic h in channel ch: the
// smoothed value now in LowPass mode, the last completed block's in Sync
// mode. It panics if ch or h is out of range.
func (l *LockIn) Value(ch, h int) complex128 {
	if l.cfg.Mode == LowPass {
		return l.lp.value(l, ch, h)
	}
	return l.res.At(ch, h)
}

// Offset returns the mean of channel ch: smoothed now (LowPass) or over the
// last completed block (Sync).
func (l *LockIn) Offset(ch int) float64 {
	if l.cfg.Mode == LowPass {
		return l.lp.offset(l, ch)
	}
	return l.res.mean[ch]
}

// NoiseBandwidthHz returns the equivalent noise bandwidth of the LowPass
// output filter, RCNoiseBandwidthHz(Order, TimeConstant); 0 in Sync mode,
// whose bandwidth, about 1/(block duration), depends on the drive
// frequency.
func (l *LockIn) NoiseBandwidthHz() float64 {
	if l.cfg.Mode != LowPass {
		return 0
	}
	return RCNoiseBandwidthHz(l.cfg.Order, l.cfg.TimeConstant)
}

// SettleTime returns how long the LowPass output takes to reach the
// fraction frac of a step, RCSettleTime(Order, TimeConstant, frac); 0 in
// Sync mode, where one whole block after the step is settled.
func (l *LockIn) SettleTime(frac float64) time.Duration {
	if l.cfg.Mode != LowPass {
		return 0
	}
	return RCSettleTime(l.cfg.Order, l.cfg.TimeConstant, frac)
}
