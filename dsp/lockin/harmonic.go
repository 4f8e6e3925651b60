package lockin

import (
	"fmt"
	"strconv"
	"strings"
)

// Limits on a harmonic's numerator and denominator. They keep the table of
// rotor values and the least-squares system of a block small; a bench
// measurement never needs more (the 64th harmonic or a 1/16 subharmonic).
const (
	MaxNum       = 64 // largest numerator accepted
	MaxDen       = 16 // largest denominator accepted
	MaxHarmonics = 16 // most harmonics one LockIn measures
	// MaxLCM bounds the least common multiple of the denominators of one
	// LockIn's harmonics (1/16 with 1/3 and 1/5 is 240), which sets the
	// size of its rotor table.
	MaxLCM = 240
)

// Harmonic is a rational multiple Num/Den of the drive frequency: {1,1} is
// the fundamental, {3,1} the third harmonic, {1,2} the subharmonic at half
// the drive frequency. Its complex amplitude Z is defined by the model
// x(t) ≈ Re{Z·e^{j2π(Num/Den)φ(t)}} with φ the drive phase in cycles, so |Z|
// is the peak amplitude and arg Z the phase relative to the drive's cosine
// taken at that multiple.
type Harmonic struct {
	Num, Den int
}

// Default returns a fresh copy of the harmonics measured when a Config names
// none: the fundamental and the 2nd, 3rd and 5th harmonics.
func Default() []Harmonic {
	return []Harmonic{{1, 1}, {2, 1}, {3, 1}, {5, 1}}
}

// Ratio returns Num/Den, the harmonic's frequency as a multiple of the
// drive frequency.
func (h Harmonic) Ratio() float64 { return float64(h.Num) / float64(h.Den) }

// String returns "3" for {3,1} and "1/2" for {1,2}; the form ParseHarmonic
// reads back.
func (h Harmonic) String() string {
	if h.Den == 1 {
		return strconv.Itoa(h.Num)
	}
	return strconv.Itoa(h.Num) + "/" + strconv.Itoa(h.Den)
}

// reduced returns h in lowest terms.
func (h Harmonic) reduced() Harmonic {
	g := gcd(h.Num, h.Den)
	if g <= 1 {
		return h
	}
	return Harmonic{h.Num / g, h.Den / g}
}

// valid reports whether h is within the accepted range.
func (h Harmonic) valid() error {
	if h.Num < 1 || h.Num > MaxNum || h.Den < 1 || h.Den > MaxDen {
		return fmt.Errorf("%w: %d/%d (numerator 1..%d, denominator 1..%d)", ErrHarmonic, h.Num, h.Den, MaxNum, MaxDen)
	}
	return nil
}

// ParseHarmonic reads a harmonic written as "3" or "1/2" (spaces around the
// parts are allowed). The result is in lowest terms ("2/4" reads as 1/2). It
// returns an error wrapping ErrHarmonic for anything else.
func ParseHarmonic(s string) (Harmonic, error) {
	num, den, frac := strings.Cut(strings.TrimSpace(s), "/")
	n, err := strconv.Atoi(strings.TrimSpace(num))
	if err != nil {
		return Harmonic{}, fmt.Errorf("%w: %q is not a whole number or a fraction like 1/2", ErrHarmonic, s)
	}
	d := 1
	if frac {
		d, err = strconv.Atoi(strings.TrimSpace(den))
		if err != nil {
			return Harmonic{}, fmt.Errorf("%w: %q is not a whole number or a fraction like 1/2", ErrHarmonic, s)
		}
	}
	h := Harmonic{n, d}
	if err := h.valid(); err != nil {
		return Harmonic{}, err
	}
	return h.reduced(), nil
}

func gcd(a, b int) int {
	if a < 0 {
		a = -a
	}
	if b < 0 {
		b = -b
	}
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

func lcm(a, b int) int { return a / gcd(a, b) * b }
