package tui

import (
	"math"
	"strings"
	"testing"
	"unicode/utf8"
)

// TestRatioDB checks the harmonic ratio in dB against the decibel for
// field quantities, L = 20·log10(A/A1) dB (IEC 60027-3), at exact
// decades, and the THD test vector of the Modelica Standard Library
// (Blocks.Examples.TotalHarmonicDistortion: V1 = 100, V3 = 20 → THD_F =
// 0.2), whose third is 20 % of the fundamental.
func TestRatioDB(t *testing.T) {
	// log10 of a power of ten is exact to a few ulps.
	const tol = 1e-12
	for _, tc := range []struct {
		r, db float64
	}{{1, 0}, {0.1, -20}, {0.01, -40}, {1e-4, -80}, {10, 20}} {
		if got := ratioDB(tc.r); math.Abs(got-tc.db) > tol {
			t.Errorf("ratioDB(%g) = %g, want %g", tc.r, got, tc.db)
		}
	}
	if !math.IsInf(ratioDB(0), -1) {
		t.Error("ratioDB(0) is not −Inf")
	}
	// Modelica vector through the screen: the harmonic row shows 20.000 %
	// and 20·log10(0.2) = −13.979… → "-14.0".
	s := sceneSettling()
	s.Harmonics = []string{"1", "3"}
	s.Amp = []float64{100, 20}
	s.PhaseDeg = []float64{0, 0}
	s.THD = 0.2
	txt := plain(show(t, &recorder{}, Options{}, 80, 24, s))
	for _, want := range []string{"3   20.000 %  -14.0", "THD 20.00 %"} {
		if !strings.Contains(txt, want) {
			t.Errorf("no %q in:\n%s", want, txt)
		}
	}
}

// TestBlockCodePoints checks the bar glyphs against the Unicode Standard's
// Block Elements chart: U+2581 LOWER ONE EIGHTH BLOCK … U+2588 FULL BLOCK;
// U+258F LEFT ONE EIGHTH BLOCK … U+2589 LEFT SEVEN EIGHTHS BLOCK.
func TestBlockCodePoints(t *testing.T) {
	if lowBlock(1) != 0x2581 || lowBlock(4) != 0x2584 || lowBlock(8) != 0x2588 {
		t.Errorf("lower blocks %U %U %U", lowBlock(1), lowBlock(4), lowBlock(8))
	}
	if leftBlock(1) != 0x258F || leftBlock(4) != 0x258C || leftBlock(7) != 0x2589 || leftBlock(8) != 0x2588 {
		t.Errorf("left blocks %U %U %U %U", leftBlock(1), leftBlock(4), leftBlock(7), leftBlock(8))
	}
}

// TestBrailleBits checks the dot numbering against the Unicode Standard's
// Braille Patterns block: dot k is bit k−1 above U+2800, dots 1-2-3-7 in
// the left column top to bottom, 4-5-6-8 in the right (U+2801 DOTS-1,
// U+2808 DOTS-4, U+2840 DOTS-7, U+2880 DOTS-8, U+28FF DOTS-12345678).
func TestBrailleBits(t *testing.T) {
	for _, tc := range []struct {
		x, y int
		want rune
	}{{0, 0, 0x2801}, {0, 1, 0x2802}, {0, 2, 0x2804}, {0, 3, 0x2840},
		{1, 0, 0x2808}, {1, 1, 0x2810}, {1, 2, 0x2820}, {1, 3, 0x2880}} {
		d := newDots(1, 1)
		d.set(tc.x, tc.y)
		if got, _ := utf8.DecodeRuneInString(d.row(0)); got != tc.want {
			t.Errorf("dot (%d,%d): %U, want %U", tc.x, tc.y, got, tc.want)
		}
	}
	d := newDots(2, 2)
	for x := 0; x < 4; x++ {
		for y := 0; y < 8; y++ {
			d.set(x, y)
		}
	}
	d.set(-1, 0) // outside: ignored
	d.set(4, 8)
	if d.row(0) != "⣿⣿" || d.row(1) != "⣿⣿" {
		t.Errorf("full canvas %q %q, want U+28FF everywhere", d.row(0), d.row(1))
	}
}

// TestBars checks the bar and progress drawings cell by cell: a fraction
// f of w cells is round(8fw) eighths (common practice for eighth-block
// bars).
func TestBars(t *testing.T) {
	for _, tc := range []struct {
		frac float64
		w    int
		want string
	}{
		{0, 4, "    "}, {1, 4, "████"}, {0.5, 4, "██  "}, {0.5 + 1.0/32, 4, "██▏ "},
		{0.25 + 4.0/32, 4, "█▌  "}, {2, 3, "███"}, {-1, 3, "   "}, {math.NaN(), 2, "  "},
	} {
		if got := hbar(tc.frac, tc.w); got != tc.want {
			t.Errorf("hbar(%g, %d) = %q, want %q", tc.frac, tc.w, got, tc.want)
		}
	}
	for _, tc := range []struct {
		frac float64
		w    int
		want string
	}{{0, 4, "░░░░"}, {0.5, 4, "██░░"}, {1, 4, "████"}, {0.45, 10, "█████░░░░░"}} {
		if got := progress(tc.frac, tc.w); got != tc.want {
			t.Errorf("progress(%g, %d) = %q, want %q", tc.frac, tc.w, got, tc.want)
		}
	}
}

// TestSparkline: values map linearly onto the eight levels between their
// extremes; a span below minSpanRel of the level reads as flat.
func TestSparkline(t *testing.T) {
	if got := sparkline([]float64{0, 1, 2, 3, 4, 5, 6, 7}, 8); got != "▁▂▃▄▅▆▇█" {
		t.Errorf("ramp: %q", got)
	}
	flat := sparkline([]float64{1, 1.0001, 0.9999, 1}, 4)
	for _, r := range flat {
		if r == '▁' || r == '█' {
			t.Errorf("a 0.01 %% wobble fills the whole height: %q", flat)
		}
	}
	if got := sparkline([]float64{5, 0, 9}, 2); got != "▁█" {
		t.Errorf("only the last w values: %q", got)
	}
	if got := squeeze([]float64{1, 3, 5, 7, 9, 11}, 3); len(got) != 3 || got[0] != 2 || got[1] != 6 || got[2] != 10 {
		t.Errorf("squeeze: %v, want [2 6 10]", got)
	}
}

// TestNumbers checks the number formats and the input parser.
func TestNumbers(t *testing.T) {
	for _, tc := range []struct {
		step float64
		want int
	}{{0.5, 4}, {0.05, 4}, {0.001, 5}, {1e-6, 6}, {10, 4}, {0, 4}} {
		if got := freqDecimals(tc.step); got != tc.want {
			t.Errorf("freqDecimals(%g) = %d, want %d", tc.step, got, tc.want)
		}
	}
	if got := fmtFreq(112.34567, 0.001); got != "112.34567" {
		t.Errorf("fmtFreq: %q", got)
	}
	for _, tc := range []struct {
		in   string
		want float64
		ok   bool
	}{{"112.5", 112.5, true}, {" 0,25 ", 0.25, true}, {"1e3", 1000, true}, {"abc", 0, false},
		{"", 0, false}, {"NaN", 0, false}, {"inf", 0, false}} {
		got, ok := parseNumber(tc.in)
		if ok != tc.ok || (ok && got != tc.want) {
			t.Errorf("parseNumber(%q) = %g, %v", tc.in, got, ok)
		}
	}
	for _, tc := range []struct {
		in   string
		want float64
		ok   bool
	}{{"1", 1, true}, {"3", 3, true}, {"1/2", 0.5, true}, {"2/3", 2.0 / 3, true}, {"0", 0, false}, {"x", 0, false}, {"1/0", 0, false}} {
		got, ok := harmonicRatio(tc.in)
		if ok != tc.ok || (ok && got != tc.want) {
			t.Errorf("harmonicRatio(%q) = %g, %v", tc.in, got, ok)
		}
	}
	for _, tc := range []struct{ in, want float64 }{
		{0.87, 1}, {1.13, 1.2}, {0.0729, 0.08}, {3.1, 4}, {250, 250}, {0.41, 0.5},
	} {
		if got := niceCeil(tc.in); math.Abs(got-tc.want) > 1e-12*tc.want {
			t.Errorf("niceCeil(%g) = %g, want %g", tc.in, got, tc.want)
		}
	}
}
