package tui

import (
	"math"
	"strconv"
	"strings"
)

// freqDecimals is how many decimals a frequency is shown with: two more
// than the step's first significant decimal, at least 4, at most 6, so a
// step always shows in the last digits and the width stays fixed while
// stepping.
func freqDecimals(stepHz float64) int {
	d := 4
	if stepHz > 0 && !math.IsInf(stepHz, 0) {
		d = int(math.Ceil(-math.Log10(stepHz))) + 2
	}
	return min(max(d, 4), 6)
}

// fmtFreq formats a frequency in hertz with the step's resolution.
func fmtFreq(hz, stepHz float64) string {
	return strconv.FormatFloat(hz, 'f', freqDecimals(stepHz), 64)
}

// fmtSig formats v with n significant digits, "–" when it is not a number.
func fmtSig(v float64, n int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v, 'g', n, 64)
}

// fmtFixed formats v with d decimals, "–" when it is not a number.
func fmtFixed(v float64, d int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v, 'f', d, 64)
}

// ratioDB is an amplitude ratio in decibels, 20·log10(r) (the decibel for
// field quantities, IEC 60027-3). It is −Inf for r = 0 and NaN for r < 0.
func ratioDB(r float64) float64 { return 20 * math.Log10(r) }

// fmtDB formats a level in dB with one decimal; below −199 dB (or −Inf)
// it shows "<-199".
func fmtDB(db float64) string {
	switch {
	case math.IsNaN(db):
		return "–"
	case db < -199:
		return "<-199"
	}
	return strconv.FormatFloat(db, 'f', 1, 64)
}

// padLeft right-aligns s in w cells.
func padLeft(s string, w int) string {
	if n := cellWidth(s); n < w {
		return strings.Repeat(" ", w-n) + s
	}
	return s
}

// padRight left-aligns s in w cells.
func padRight(s string, w int) string {
	if n := cellWidth(s); n < w {
		return s + strings.Repeat(" ", w-n)
	}
	return s
}

// leftBlock is the left-aligned block n eighths of a cell wide, n = 1..8:
// U+258F (one eighth) down to U+2588 (full block) (Unicode Standard, Block
// Elements).
func leftBlock(n int) rune { return rune(0x2590 - n) }

// lowBlock is the lower block n eighths of a cell high, n = 1..8: U+2581
// (one eighth) up to U+2588 (full block) (Unicode Standard, Block
// Elements).
func lowBlock(n int) rune { return rune(0x2580 + n) }

// hbar draws frac (0..1) of w cells as a horizontal bar in eighths of a
// cell: full cells "█", then one partial cell, then blanks to w.
func hbar(frac float64, w int) string {
	if w <= 0 {
		return ""
	}
	if math.IsNaN(frac) || frac < 0 {
		frac = 0
	}
	frac = math.Min(frac, 1)
	n := int(math.Round(frac * float64(w*8)))
	var b strings.Builder
	b.WriteString(strings.Repeat("█", n/8))
	cells := n / 8
	if r := n % 8; r > 0 {
		b.WriteRune(leftBlock(r))
		cells++
	}
	b.WriteString(strings.Repeat(" ", w-cells))
	return b.String()
}

// progress draws frac (0..1) of w cells as "█" on "░".
func progress(frac float64, w int) string {
	if w <= 0 {
		return ""
	}
	if math.IsNaN(frac) || frac < 0 {
		frac = 0
	}
	n := int(math.Round(math.Min(frac, 1) * float64(w)))
	return strings.Repeat("█", n) + strings.Repeat("░", w-n)
}

// minSpanRel is the smallest span, relative to the largest magnitude
// shown, that a sparkline stretches over its eight levels: below it a
// steady reading with a little noise would look like large swings.
const minSpanRel = 0.002

// sparkline draws the last w values (or fewer) as eight-level blocks
// scaled between their smallest and largest value; a span below
// minSpanRel of the largest magnitude is centred on that span instead.
func sparkline(v []float64, w int) string {
	if w <= 0 || len(v) == 0 {
		return ""
	}
	if len(v) > w {
		v = v[len(v)-w:]
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range v {
		if math.IsNaN(x) {
			continue
		}
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	if lo > hi {
		return strings.Repeat(" ", len(v))
	}
	if m := minSpanRel * math.Max(math.Abs(lo), math.Abs(hi)); hi-lo < m {
		c := (hi + lo) / 2
		lo, hi = c-m/2, c+m/2
	}
	var b strings.Builder
	for _, x := range v {
		if math.IsNaN(x) {
			b.WriteByte(' ')
			continue
		}
		k := 0
		if hi > lo {
			k = int(math.Round((x - lo) / (hi - lo) * 7))
		}
		b.WriteRune(lowBlock(min(max(k, 0), 7) + 1))
	}
	return b.String()
}

// harmonicRatio reads a harmonic label ("3", "1/2") as its ratio to the
// drive frequency; ok is false for anything else.
func harmonicRatio(label string) (r float64, ok bool) {
	num, den, found := strings.Cut(label, "/")
	n, err := strconv.Atoi(strings.TrimSpace(num))
	if err != nil || n < 1 {
		return 0, false
	}
	d := 1
	if found {
		d, err = strconv.Atoi(strings.TrimSpace(den))
		if err != nil || d < 1 {
			return 0, false
		}
	}
	return float64(n) / float64(d), true
}

// parseNumber reads a number typed by the user; a decimal comma is
// taken as a decimal point.
func parseNumber(s string) (float64, bool) {
	s = strings.TrimSpace(strings.ReplaceAll(s, ",", "."))
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}
