package jump

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// Point is one logged point of a sweep.
type Point struct {
	FreqHz float64 // drive frequency, Hz
	Amp    float64 // amplitude of the response (any unit, > 0; the same for all points)
}

// Jump is a jump between two neighbouring points of a sweep.
type Jump struct {
	// Index is the index in the input of the point after the jump.
	Index int
	// Prev is the index of the point before it: Index−1, unless unusable
	// points (see Find) lay between. The jump lies between the two.
	Prev int
	// FromHz and ToHz are the frequencies of points Prev and Index, in
	// sweep order (FromHz > ToHz on a down-sweep). The fold the sweep
	// fell from or climbed to lies between them.
	FromHz, ToHz float64
	// AmpBefore and AmpAfter are the amplitudes at those points.
	AmpBefore, AmpAfter float64
	// Rise is true when the amplitude rises across the jump.
	Rise bool
}

// Ratio returns the amplitude ratio across the jump, ≥ 1.
func (j Jump) Ratio() float64 {
	if j.Rise {
		return j.AmpAfter / j.AmpBefore
	}
	return j.AmpBefore / j.AmpAfter
}

// String describes the jump in plain words.
func (j Jump) String() string {
	dir := "down"
	if j.Rise {
		dir = "up"
	}
	return fmt.Sprintf("jump %s ×%.2f between %.6g Hz and %.6g Hz (points %d–%d, %.4g → %.4g)",
		dir, j.Ratio(), j.FromHz, j.ToHz, j.Prev, j.Index, j.AmpBefore, j.AmpAfter)
}

// ErrConfig is wrapped by the errors Config.Validate returns.
var ErrConfig = errors.New("jump: bad configuration")

// Config sets the test. Zero fields take the defaults of DefaultConfig.
type Config struct {
	// K: a step is a jump only if it departs from the local trend by more
	// than K robust standard deviations of the neighbouring steps.
	// Default 5.
	K float64
	// MinRatio: a jump must also change the amplitude by at least this
	// factor across the step. Default 1.5.
	MinRatio float64
	// Span is the number of neighbouring steps on each side that set the
	// local trend (a Detector sees at most its lag on the later side).
	// Default 5.
	Span int
	// MinDev is the smallest robust standard deviation assumed for the
	// steps, in natural-log units of amplitude (0.02 ≈ 2 %), so that a
	// sweep of noiseless points does not make every small bend a
	// departure. Default 0.02.
	MinDev float64
	// MinAmp: a step whose two amplitudes are both at or below MinAmp
	// (the noise floor) is never a jump. Default 0 (off).
	MinAmp float64
}

// Defaults for the zero fields of Config.
const (
	DefaultK        = 5
	DefaultMinRatio = 1.5
	DefaultSpan     = 5
	DefaultMinDev   = 0.02
)

// DefaultConfig returns the default test.
func DefaultConfig() Config {
	return Config{K: DefaultK, MinRatio: DefaultMinRatio, Span: DefaultSpan, MinDev: DefaultMinDev}
}

func (c Config) withDefaults() Config {
	if c.K == 0 {
		c.K = DefaultK
	}
	if c.MinRatio == 0 {
		c.MinRatio = DefaultMinRatio
	}
	if c.Span == 0 {
		c.Span = DefaultSpan
	}
	if c.MinDev == 0 {
		c.MinDev = DefaultMinDev
	}
	return c
}

// Validate reports the first field of c (after defaults) that cannot be
// used, wrapping ErrConfig.
func (c Config) Validate() error {
	c = c.withDefaults()
	bad := func(field string, v any, want string) error {
		return fmt.Errorf("%w: %s = %v, want %s", ErrConfig, field, v, want)
	}
	switch {
	case !(c.K > 0) || math.IsInf(c.K, 0):
		return bad("K", c.K, "a finite value > 0 (e.g. 5)")
	case !(c.MinRatio > 1) || math.IsInf(c.MinRatio, 0):
		return bad("MinRatio", c.MinRatio, "a finite value > 1 (e.g. 1.5)")
	case c.Span < 1:
		return bad("Span", c.Span, ">= 1")
	case !(c.MinDev > 0) || math.IsInf(c.MinDev, 0):
		return bad("MinDev", c.MinDev, "a finite value > 0 (e.g. 0.02)")
	case !(c.MinAmp >= 0) || math.IsInf(c.MinAmp, 0):
		return bad("MinAmp", c.MinAmp, "a finite value >= 0")
	}
	return nil
}

// Find returns the jumps of one sweep direction, pts in sweep order, in
// the order they occur.
//
// Let s_i = ln(A_i/A_{i−1}) be the step into point i and g_i = s_i/|f_i −
// f_{i−1}| its slope per hertz. For each step the local trend is the
// median ĝ of the slopes of up to Span steps on either side (not the step
// itself), and its spread the scaled median absolute deviation
// σ̂ = 1.4826·median|g_j − ĝ|, 1.4826 making the MAD consistent for
// Gaussian noise: the Hampel identifier (after F. R. Hampel, "The
// influence curve and its role in robust estimation", J. Amer. Statist.
// Assoc. 69:383–393, 1974; named by L. Davies and U. Gather, "The
// identification of multiple outliers", J. Amer. Statist. Assoc.
// 88:782–792, 1993), applied to the slopes. Step i is a jump when
//
//	|s_i − ĝ·Δf_i| > K·max(σ̂·Δf_i, MinDev)  and  |s_i| ≥ ln MinRatio,
//
// and not both amplitudes are at or below MinAmp. With fewer than two
// neighbouring steps only the ratio test applies. Points with a non-finite
// frequency or amplitude, or a non-positive amplitude, are skipped
// (indices still refer to pts); so are repeated frequencies.
//
// Find panics with a "jump: …" message if cfg does not pass Validate.
func Find(pts []Point, cfg Config) []Jump {
	cfg = mustConfig(cfg)
	idx, s, g := steps(pts, cfg)
	var out []Jump
	var scratch []float64
	for k := range s {
		lo, hi := max(0, k-cfg.Span), min(len(s), k+cfg.Span+1)
		scratch = scratch[:0]
		scratch = append(scratch, g[lo:k]...)
		scratch = append(scratch, g[k+1:hi]...)
		if isJump(s[k], g[k], scratch, cfg) && !belowFloor(pts, idx[k], idx[k+1], cfg) {
			out = append(out, makeJump(pts, idx[k], idx[k+1]))
		}
	}
	return out
}

// DefaultLag is the number of later points a Detector waits for before it
// decides on a step: DefaultSpan, so that it decides as Find does.
const DefaultLag = DefaultSpan

// Detector is the streaming form of Find for a sweep in progress: Add each
// logged point in sweep order, and it decides on the step into a point
// once lag more points have arrived, with the Span earlier steps and the
// lag later ones as the trend. With lag 0 it reports a jump as soon as the
// point after it is logged, from the earlier steps alone; that is weaker
// where the sweep turns over a sharp resonance peak in coarse steps (the
// first step down from the peak then stands out against the rising steps
// before it). With lag = Span it decides as Find does. Call Flush at the
// end of the sweep for the last lag steps. Add allocates only as its
// history grows.
type Detector struct {
	cfg     Config
	lag     int
	pts     []Point
	idx     []int     // indices of the usable points
	s, g    []float64 // steps and slopes between usable points
	next    int       // the next step to decide on
	scratch []float64
}

// NewDetector returns a streaming detector that waits for lag later
// points; it panics with a "jump: …" message if cfg does not pass Validate
// or lag is negative.
func NewDetector(cfg Config, lag int) *Detector {
	if lag < 0 {
		panic("jump: negative lag")
	}
	return &Detector{cfg: mustConfig(cfg), lag: lag}
}

// Reset forgets the sweep, for the next one (or the other direction).
func (d *Detector) Reset() {
	d.pts, d.idx, d.s, d.g = d.pts[:0], d.idx[:0], d.s[:0], d.g[:0]
	d.next = 0
}

// Add appends the next point of the sweep and reports whether the step
// decided on now — into the usable point lag usable points back — is a
// jump. Unusable points (see Find) are kept for indexing but never make a
// jump.
func (d *Detector) Add(p Point) (Jump, bool) {
	d.pts = append(d.pts, p)
	i := len(d.pts) - 1
	if !usable(p) {
		return Jump{}, false
	}
	if n := len(d.idx); n > 0 {
		q := d.pts[d.idx[n-1]]
		df := math.Abs(p.FreqHz - q.FreqHz)
		if df == 0 {
			return Jump{}, false
		}
		st := math.Log(p.Amp / q.Amp)
		d.s = append(d.s, st)
		d.g = append(d.g, st/df)
	}
	d.idx = append(d.idx, i)
	if d.next+d.lag < len(d.s) {
		k := d.next
		d.next++
		return d.decide(k)
	}
	return Jump{}, false
}

// Flush decides on the steps still waiting for later points, with the
// later points there are, and returns the jumps among them.
func (d *Detector) Flush() []Jump {
	var out []Jump
	for ; d.next < len(d.s); d.next++ {
		if j, ok := d.decide(d.next); ok {
			out = append(out, j)
		}
	}
	return out
}

// decide tests step k (into usable point k+1) against up to Span earlier
// and lag later steps.
func (d *Detector) decide(k int) (Jump, bool) {
	lo, hi := max(0, k-d.cfg.Span), min(len(d.s), k+1+d.lag)
	d.scratch = append(d.scratch[:0], d.g[lo:k]...)
	d.scratch = append(d.scratch, d.g[k+1:hi]...)
	a, b := d.idx[k], d.idx[k+1]
	if !isJump(d.s[k], d.g[k], d.scratch, d.cfg) || belowFloor(d.pts, a, b, d.cfg) {
		return Jump{}, false
	}
	return makeJump(d.pts, a, b), true
}

func mustConfig(cfg Config) Config {
	if err := cfg.Validate(); err != nil {
		panic(err.Error())
	}
	return cfg.withDefaults()
}

func usable(p Point) bool {
	return !math.IsNaN(p.FreqHz) && !math.IsInf(p.FreqHz, 0) && p.Amp > 0 && !math.IsInf(p.Amp, 0)
}

// steps returns the indices of the usable points of pts (skipping
// repeated frequencies), and the log-amplitude step s and slope g into
// each usable point after the first.
func steps(pts []Point, cfg Config) (idx []int, s, g []float64) {
	for i, p := range pts {
		if !usable(p) {
			continue
		}
		if len(idx) > 0 {
			q := pts[idx[len(idx)-1]]
			df := math.Abs(p.FreqHz - q.FreqHz)
			if df == 0 {
				continue
			}
			st := math.Log(p.Amp / q.Amp)
			s = append(s, st)
			g = append(g, st/df)
		}
		idx = append(idx, i)
	}
	return idx, s, g
}

// isJump applies the test of Find to a step s with slope g against the
// neighbouring slopes ref (which it reorders).
func isJump(s, g float64, ref []float64, cfg Config) bool {
	if math.Abs(s) < math.Log(cfg.MinRatio) {
		return false
	}
	if len(ref) < 2 {
		return true
	}
	df := s / g
	med := median(ref)
	for i, v := range ref {
		ref[i] = math.Abs(v - med)
	}
	sigma := 1.4826 * median(ref) * math.Abs(df)
	return math.Abs(s-med*df) > cfg.K*math.Max(sigma, cfg.MinDev)
}

func belowFloor(pts []Point, a, b int, cfg Config) bool {
	return pts[a].Amp <= cfg.MinAmp && pts[b].Amp <= cfg.MinAmp
}

func makeJump(pts []Point, a, b int) Jump {
	return Jump{
		Index:     b,
		Prev:      a,
		FromHz:    pts[a].FreqHz,
		ToHz:      pts[b].FreqHz,
		AmpBefore: pts[a].Amp,
		AmpAfter:  pts[b].Amp,
		Rise:      pts[b].Amp > pts[a].Amp,
	}
}

// median returns the median of v, reordering it.
func median(v []float64) float64 {
	sort.Float64s(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}
