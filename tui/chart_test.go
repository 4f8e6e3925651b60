package tui

import (
	"strings"
	"testing"

	"github.com/charmbracelet/x/ansi"

	"github.com/sweeplock/sweeplock/acquire"
)

// chartText draws the chart of s at w×h and returns its rows as text.
func chartText(t *testing.T, s acquire.Snapshot, w, h int, view chartView) []string {
	t.Helper()
	m := New(&recorder{}, Options{NoColor: true})
	m.snap, m.have, m.chart = s, true, view
	var rows []string
	for _, l := range m.chartLines(w, h) {
		rows = append(rows, ansi.Strip(l.text()))
	}
	return rows
}

// TestAxis checks the value-to-cell mapping, cell = round((v−lo)/(hi−lo)·(n−1)),
// on exact values, and that value() inverts it.
func TestAxis(t *testing.T) {
	a := axis{100, 110, 11}
	for _, tc := range []struct {
		v    float64
		want int
	}{{100, 0}, {110, 10}, {105, 5}, {104.4, 4}, {104.6, 5}} {
		if got := a.cell(tc.v); got != tc.want {
			t.Errorf("cell(%g) = %d, want %d", tc.v, got, tc.want)
		}
	}
	for i := 0; i < 11; i++ {
		if a.cell(a.value(i)) != i {
			t.Errorf("value(%d) = %g maps back to %d", i, a.value(i), a.cell(a.value(i)))
		}
	}
}

// TestChartMarks places hand-picked points and checks each mark lands in
// the cell the axis mapping gives, with its own marker: > up, < down,
// o by hand, x up and down in one cell, @ the live reading, ┆ a jump,
// ═ the band and ┴ the cursor on the axis.
func TestChartMarks(t *testing.T) {
	const pw, ph = 41, 6 // plot cells
	const w, h = yLabelW + 1 + pw, 4 + ph
	pt := func(f, a float64, d acquire.Direction) acquire.Point {
		return acquire.Point{FreqSetHz: f, Amp: []float64{a, 0, 0, 0, 0, 0}, Direction: d}
	}
	s := baseSnap()
	s.StepHz = 1
	// frequencies 100..120, padded by 3 % of the span: 99.4..120.6 Hz
	s.Points = []acquire.Point{
		pt(100, 1, acquire.Up), pt(120, 5, acquire.Down), pt(110, 3, acquire.Up), pt(110, 3, acquire.Down),
		pt(104, 2, acquire.Manual),
	}
	s.Jumps = []acquire.JumpJSON{{Direction: "up", FromHz: 114, ToHz: 116, AmpBefore: 1, AmpAfter: 4, Rise: true}}
	s.BandLoHz, s.BandHiHz = 106, 108
	s.FreqHz = 118
	s.Amp = []float64{4, 0, 0, 0, 0, 0}
	rows := chartText(t, s, w, h, chartAmp)
	plot := rows[1 : 1+ph]
	flo, fhi := freqRange(&s)
	if flo != 99.4 || fhi != 120.6 {
		t.Fatalf("range %g..%g, want 99.4..120.6", flo, fhi)
	}
	fx := axis{flo, fhi, pw}
	ymax := niceCeil(1.05 * 5) // 6
	ya := axis{0, ymax, ph}
	at := func(f, a float64) rune {
		y := ph - 1 - ya.cell(a)
		return []rune(plot[y])[yLabelW+1+fx.cell(f)]
	}
	for _, tc := range []struct {
		f, a float64
		want rune
	}{
		{100, 1, markUp}, {120, 5, markDown}, {110, 3, markBoth}, {104, 2, markManual}, {118, 4, markNow},
		{115, 2, markJump}, {118, 0, markCursor},
	} {
		if got := at(tc.f, tc.a); got != tc.want {
			t.Errorf("at %g Hz, %g: %q, want %q\n%s", tc.f, tc.a, got, tc.want, strings.Join(rows, "\n"))
		}
	}
	axisRow := []rune(rows[1+ph])[yLabelW+1:]
	if axisRow[fx.cell(107)] != markBand || axisRow[fx.cell(118)] != '┴' || axisRow[fx.cell(100)] != '─' {
		t.Errorf("axis row %q", string(axisRow))
	}
	if !strings.Contains(rows[len(rows)-1], "═ band 106.0–108.0") {
		t.Errorf("legend %q has no band", rows[len(rows)-1])
	}
}

// TestChartThird: with t the chart plots the third harmonic's ratio to the
// fundamental in % per point, with the flag level drawn across.
func TestChartThird(t *testing.T) {
	s := baseSnap()
	s.StepHz = 1
	s.FreqHz = 110
	s.ThirdLimit = 1
	s.Points = []acquire.Point{
		{FreqSetHz: 100, Amp: []float64{2, 0, 0.02, 0}, Direction: acquire.Up}, // 1 %
		{FreqSetHz: 120, Amp: []float64{1, 0, 0.03, 0}, Direction: acquire.Up}, // 3 %
	}
	rows := chartText(t, s, 29, 10, chartThird)
	if !strings.HasPrefix(rows[0], "3RD HARMONIC") {
		t.Fatalf("title %q", rows[0])
	}
	// ymax = niceCeil(1.05·3) = 4; 6 rows: 1 % → cell round(1/4·5) = 1 from the bottom
	plot := rows[1:7]
	if !strings.ContainsRune(plot[5-1], markUp) || !strings.ContainsRune(plot[5-4], markUp) {
		t.Errorf("ratios not where 1 %% and 3 %% belong:\n%s", strings.Join(rows, "\n"))
	}
	if !strings.ContainsRune(plot[5-1], markLimit) {
		t.Errorf("no flag level on the 1 %% row:\n%s", strings.Join(rows, "\n"))
	}
}

// TestSpectrumMarks: each harmonic's label sits under the column that
// holds its peak (in the third-harmonic scene every harmonic is within the
// 80 dB the view shows: the fifth, the smallest, is at −76 dB).
func TestSpectrumMarks(t *testing.T) {
	s := sceneThird()
	m := New(&recorder{}, Options{NoColor: true})
	m.snap, m.have, m.signal = s, true, showSpectrum
	lines := m.spectrumLines(60, 5)
	bars := ansi.Strip(lines[len(lines)-2].text()) // the lowest bar row
	marks := ansi.Strip(lines[len(lines)-1].text())
	top := ansi.Strip(lines[1].text())
	for _, lab := range []string{"1", "2", "3", "5"} {
		x := tokenIndex(marks, lab)
		if x < 0 {
			t.Fatalf("no mark %q in %q", lab, marks)
		}
		if []rune(bars)[x] == ' ' {
			t.Errorf("harmonic %s: no bar above its mark at %d\n%s\n%s", lab, x, bars, marks)
		}
	}
	// the fundamental is the highest peak: a full column in the top row
	if !strings.ContainsRune(top, '█') {
		t.Errorf("fundamental not full height: %q", top)
	}
}

// tokenIndex is the byte index of lab in s standing alone (between
// blanks or the ends), −1 if absent.
func tokenIndex(s, lab string) int {
	for i := 0; i+len(lab) <= len(s); i++ {
		if s[i:i+len(lab)] == lab && (i == 0 || s[i-1] == ' ') && (i+len(lab) == len(s) || s[i+len(lab)] == ' ') {
			return i
		}
	}
	return -1
}
