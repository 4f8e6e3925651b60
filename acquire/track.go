package acquire

import (
	"math"

	"github.com/sweeplock/sweeplock/dsp"
)

// phaseTrack makes a drive phase for a source that does not know it (a
// serial ADC on its own clock, an external generator): a phase accumulator
// advanced at the tracked drive frequency, which a four-parameter sine fit
// (IEEE Std 1057; dsp.Fit4) of the reference channel, or of the response
// when there is none, keeps up to date. The response's amplitude is then
// exact; its phase is against the tracked signal, which is the drive only
// when a reference channel carries it.
type phaseTrack struct {
	nominal float64 // frequency the drive was set to
	f       float64 // tracked frequency
	ph      float64 // phase at the last frame, cycles
	lastT   float64
	started bool
	winT    []float64
	winX    []float64
	maxWin  int
	minWin  int
	out     []float64
	// free: the drive is set by hand, so its frequency may be anywhere:
	// each fit starts from the window's spectrum peak, not the nominal.
	free   bool
	rate   float64
	fitted bool // a fit has converged since reset
	// sinceFit counts frames since the last fit: the fit runs again every
	// few cycles, not every block (it costs a few hundred µs).
	sinceFit int
	refit    int
}

// clearWindow forgets the samples fitted so far (after a gap).
func (p *phaseTrack) clearWindow() {
	p.winT, p.winX = p.winT[:0], p.winX[:0]
	p.sinceFit = 0
}

// matched reports whether the tracked frequency agrees with want within tol.
func (p *phaseTrack) matched(want, tol float64) bool {
	return p.fitted && math.Abs(p.f-want) <= tol
}

// reset starts tracking a new drive frequency.
func (p *phaseTrack) reset(nominalHz, rateHz float64) {
	p.nominal, p.f, p.rate, p.fitted = nominalHz, nominalHz, rateHz, false
	p.winT, p.winX = p.winT[:0], p.winX[:0]
	cyc := rateHz / nominalHz
	p.minWin = int(8 * cyc)               // fit once 8 cycles are in
	p.maxWin = int(math.Max(32*cyc, 256)) // and over the last 32
}

// phases returns the drive phase at each frame of the block (reusing its
// own buffer) and refits the frequency from sig, the channel that carries
// the drive's signature.
func (p *phaseTrack) phases(b *Block, sig []float64) []float64 {
	n := b.Frames
	if cap(p.out) < n {
		p.out = make([]float64, n)
	}
	out := p.out[:n]
	for i := 0; i < n; i++ {
		t := b.Frame(i)
		if p.started {
			p.ph += p.f * (t - p.lastT)
		}
		p.started = true
		p.lastT = t
		out[i] = p.ph
		p.winT = append(p.winT, t)
		p.winX = append(p.winX, sig[i])
	}
	if over := len(p.winT) - p.maxWin; over > 0 {
		p.winT = append(p.winT[:0], p.winT[over:]...)
		p.winX = append(p.winX[:0], p.winX[over:]...)
	}
	p.sinceFit += n
	if len(p.winT) >= p.minWin && p.minWin > 0 && (p.sinceFit >= p.refit || !p.fitted) {
		p.sinceFit = 0
		guess := p.f
		if p.free && !p.fitted {
			guess = dsp.FreqGuess(p.winX, p.rate)
		}
		if guess > 0 {
			if fit, err := dsp.Fit4(p.winT, p.winX, guess); err == nil &&
				(p.free || math.Abs(fit.FreqHz-p.nominal) < 0.02*p.nominal) {
				p.f, p.fitted = fit.FreqHz, true
			}
		}
	}
	return out
}
