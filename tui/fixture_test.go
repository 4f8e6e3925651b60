package tui

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"sort"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
	"github.com/sweeplock/sweeplock/dsp/settle"
)

// The screens in these tests show an ILLUSTRATIVE softening resonator, not
// a measurement: the one-term harmonic balance of the Duffing equation
// y” + 2ζy' + y + γy³ = cos Ωτ,
//
//	[(1 − Ω² + ¾γY²)² + (2ζΩ)²]·Y² = 1,
//
// a cubic in p = Y² (REFERENCES.md §5, HB1), with ζ = 0.01 and γ = −1e−4,
// scaled to f0 = 120 Hz and a static deflection of 0.02 mm. Its folds are
// checked against the published check values in TestFixtureFolds.
const (
	fixZeta   = 0.01
	fixGamma  = -1e-4
	fixF0     = 120.0 // Hz
	fixStatic = 0.02  // mm per unit Y
	fixRate   = 48000.0
)

// cubicRoots returns the real roots of a·x³ + b·x² + c·x + d = 0 (a ≠ 0)
// by the trigonometric form for three real roots and Cardano's formula for
// one (Press, Teukolsky, Vetterling, Flannery, Numerical Recipes, 3rd ed.
// 2007, §5.6, eqs. 5.6.10–5.6.18).
func cubicRoots(a, b, c, d float64) []float64 {
	b, c, d = b/a, c/a, d/a
	q := (b*b - 3*c) / 9
	r := (2*b*b*b - 9*b*c + 27*d) / 54
	if r*r < q*q*q {
		th := math.Acos(r / math.Sqrt(q*q*q))
		s := -2 * math.Sqrt(q)
		return []float64{
			s*math.Cos(th/3) - b/3,
			s*math.Cos((th+2*math.Pi)/3) - b/3,
			s*math.Cos((th-2*math.Pi)/3) - b/3,
		}
	}
	A := -math.Copysign(math.Cbrt(math.Abs(r)+math.Sqrt(r*r-q*q*q)), r)
	B := 0.0
	if A != 0 {
		B = q / A
	}
	return []float64{A + B - b/3}
}

// hbAmps returns the physical amplitudes Y (ascending) of the HB1 cubic at
// Ω, discarding the spurious large-Y roots beyond 1/√|γ| (REFERENCES.md
// §5: "beyond escape: discard such roots").
func hbAmps(om float64) []float64 {
	k := 1 - om*om
	g := fixGamma
	roots := cubicRoots(9*g*g/16, 3*g*k/2, k*k+4*fixZeta*fixZeta*om*om, -1)
	var ys []float64
	for _, p := range roots {
		if p > 0 {
			if y := math.Sqrt(p); y < 1/math.Sqrt(math.Abs(g)) {
				ys = append(ys, y)
			}
		}
	}
	sort.Float64s(ys)
	return ys
}

// hbPoint is one steady response of the fixture: fundamental amplitude Y,
// its phase against the drive (degrees, a lag is negative) and the third
// harmonic's ratio to it from the two-term balance
// a3/a1 ≈ γa1²/(4·|9Ω² − 1 − (3/2)γa1² − j6ζΩ|) (REFERENCES.md §5).
func hbPoint(om, y float64) (amp, phaseDeg, third float64) {
	k := 1 - om*om + 0.75*fixGamma*y*y
	phaseDeg = -math.Atan2(2*fixZeta*om, k) * 180 / math.Pi
	den := cmplx.Abs(complex(9*om*om-1-1.5*fixGamma*y*y, -6*fixZeta*om))
	third = math.Abs(fixGamma*y*y) / (4 * den)
	return y * fixStatic, phaseDeg, third
}

// wrapDeg wraps a phase into (−180°, 180°], as the bench reports phases.
func wrapDeg(d float64) float64 {
	d = math.Mod(d+180, 360)
	if d <= 0 {
		d += 360
	}
	return d - 180
}

// fixHarmonics are the harmonics the fixture measures (the demo rig
// file's set).
func fixHarmonics() []string { return []string{"1", "2", "3", "5", "1/2", "1/3"} }

// harmonicAmps gives illustrative harmonic amplitudes for a fundamental
// a1 with third ratio r3: an even second at 0.05 % (a sensor's slight
// asymmetry), a fifth at r3², and the subharmonics at the noise (0.002 %).
func harmonicAmps(a1, r3 float64) []float64 {
	return []float64{a1, 5e-4 * a1, r3 * a1, r3 * r3 * a1, 2e-5 * a1, 2e-5 * a1}
}

// harmonicPhases gives illustrative phases for a fundamental at ph degrees.
func harmonicPhases(ph float64) []float64 {
	return []float64{ph, 10, wrapDeg(3 * ph), wrapDeg(5 * ph), 70, -40}
}

// sweepPoints steps the fixture up from lo to hi and (if down) back, each
// leg following its branch: the up leg keeps the smallest steady amplitude,
// the down leg the largest, so each jumps where its branch ends.
func sweepPoints(loHz, hiHz, stepHz float64, up, down int) ([]acquire.Point, []acquire.JumpJSON) {
	var pts []acquire.Point
	var jumps []acquire.JumpJSON
	t0 := time.Date(2025, 3, 14, 10, 0, 0, 0, time.UTC)
	n := int(math.Round((hiHz-loHz)/stepHz)) + 1
	leg := func(dir acquire.Direction, count int) {
		prev := math.NaN()
		prevF := 0.0
		for i := 0; i < n && i < count; i++ {
			f := loHz + float64(i)*stepHz
			if dir == acquire.Down {
				f = hiHz - float64(i)*stepHz
			}
			ys := hbAmps(f / fixF0)
			y := ys[0]
			if dir == acquire.Down {
				y = ys[len(ys)-1]
			}
			a, ph, r3 := hbPoint(f/fixF0, y)
			if !math.IsNaN(prev) && (a > 2*prev || a < prev/2) {
				jumps = append(jumps, acquire.JumpJSON{Direction: dir.String(), FromHz: prevF, ToHz: f,
					AmpBefore: prev, AmpAfter: a, Rise: a > prev})
			}
			prev, prevF = a, f
			amps := harmonicAmps(a, r3)
			pts = append(pts, acquire.Point{Index: len(pts), TimeS: float64(len(pts)) * 3.1,
				Clock: t0.Add(time.Duration(len(pts)) * 3100 * time.Millisecond), Direction: dir,
				FreqSetHz: f, FreqMeasHz: f, DriveAmp: 0.2, Amp: amps,
				PhaseDeg: harmonicPhases(ph), THD: math.Hypot(math.Hypot(amps[1], amps[2]), amps[3]) / a,
				NoiseDensity: 2.1e-6, Dwell: 3 * time.Second, Settled: true, SettleState: "settled", TauS: 0.133})
		}
	}
	leg(acquire.Up, up)
	if down > 0 {
		leg(acquire.Down, down)
	}
	return pts, jumps
}

// bandOf is the bistable band the bench reports once both legs jumped:
// between the middles of the two jumps.
func bandOf(jumps []acquire.JumpJSON) (lo, hi float64) {
	var mids []float64
	for _, j := range jumps {
		mids = append(mids, (j.FromHz+j.ToHz)/2)
	}
	if len(mids) < 2 {
		return 0, 0
	}
	return math.Min(mids[0], mids[1]), math.Max(mids[0], mids[1])
}

// liveAt fills the live readings of s at f on the chosen branch.
func liveAt(s *acquire.Snapshot, f float64, upper bool) {
	ys := hbAmps(f / fixF0)
	y := ys[0]
	if upper {
		y = ys[len(ys)-1]
	}
	a, ph, r3 := hbPoint(f/fixF0, y)
	s.FreqHz = f
	s.Amp = harmonicAmps(a, r3)
	s.PhaseDeg = harmonicPhases(ph)
	s.THD = math.Hypot(math.Hypot(s.Amp[1], s.Amp[2]), s.Amp[3]) / a
	s.ThirdPct = 100 * r3
	s.ThirdFlag = s.DriveOn && s.ThirdPct > s.ThirdLimit
	// the signal: a1·cos + a3·cos 3 over four cycles, with a little
	// seeded noise
	rng := rand.New(rand.NewPCG(8, 1))
	n := int(math.Round(4 * fixRate / f))
	s.Wave = make([]float64, n)
	s.WaveDt = 1 / fixRate
	for i := range s.Wave {
		th := 2 * math.Pi * f * float64(i) / fixRate
		s.Wave[i] = s.Amp[0]*math.Cos(th+ph*math.Pi/180) + s.Amp[2]*math.Cos(3*th) + 2e-4*rng.NormFloat64()
	}
	// the spectrum: a floor and a peak at each harmonic's bin
	s.BinHz = fixRate / 4096
	s.Spectrum = make([]float64, 2049)
	for k := range s.Spectrum {
		s.Spectrum[k] = 1e-6 * (1 + 0.3*rng.Float64())
	}
	for i, h := range s.Harmonics {
		r, _ := harmonicRatio(h)
		k := int(math.Round(r * f / s.BinHz))
		if k < len(s.Spectrum) {
			s.Spectrum[k] = s.Amp[i]
		}
	}
	// a settling trend: an exponential approach with the linear envelope
	// time constant τ = Q/(π f0) (REFERENCES.md §6), Q = 1/(2ζ)
	tau := 1 / (2 * fixZeta) / (math.Pi * fixF0)
	s.TrendDt = 2 / f
	s.Trend = make([]float64, 60)
	for i := range s.Trend {
		t := float64(i) * s.TrendDt
		s.Trend[i] = a * (1 - 0.35*math.Exp(-t/tau)*math.Cos(2*math.Pi*3*t))
	}
}

// baseSnap is a plausible bench state on the demo's simulated rig.
func baseSnap() acquire.Snapshot {
	s := acquire.Snapshot{
		TimeS:   42.5,
		Source:  acquire.SourceInfo{Kind: "sim", Name: "demo strip", RateHz: fixRate, Channels: []string{"response"}, FullScale: 1},
		Stats:   acquire.SourceStats{Blocks: 1994, Connected: true},
		Drive:   acquire.DriveInfo{Kind: "sim", Unit: "A", MaxAmp: 0.5, Coherent: true},
		DriveOn: true, AmpSet: 0.2, AmpNow: 0.2, StepHz: 0.5, LimitAmp: 0.5, LimitDisp: 1.5,
		Mode: acquire.ModeManual, Direction: acquire.Manual, PlanTotal: 62,
		Phase: acquire.PhaseSettling, Harmonics: fixHarmonics(), Unit: "mm", Noise: 2.1e-6, ThirdLimit: 1,
		Settle:    settle.Status{State: settle.Settling, Progress: 0.45, RemainingS: 1.3, TauS: math.NaN(), ErrEst: math.NaN()},
		SinceSetS: 0.9,
	}
	return s
}
