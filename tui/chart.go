package tui

import (
	"math"
	"strconv"
	"strings"

	"github.com/sweeplock/sweeplock/acquire"
)

// cell is one character cell of a chart.
type cell struct {
	r  rune
	st sty
}

// grid is a chart's plot area, row 0 at the top.
type grid struct {
	w, h  int
	cells []cell
}

func newGrid(w, h int) *grid {
	g := &grid{w: w, h: h, cells: make([]cell, w*h)}
	for i := range g.cells {
		g.cells[i] = cell{' ', stPlain}
	}
	return g
}

func (g *grid) at(x, y int) *cell {
	if x < 0 || y < 0 || x >= g.w || y >= g.h {
		return nil
	}
	return &g.cells[y*g.w+x]
}

// blank reports whether a cell holds no data mark (only background marks).
func (c *cell) blank() bool {
	return c.r == ' ' || c.st == stCursor || c.st == stBandFill
}

// row turns a grid row into a line, one segment per run of one look.
func (g *grid) row(y int) line {
	var l line
	var b strings.Builder
	cells := g.cells[y*g.w : (y+1)*g.w]
	for x := 0; x < len(cells); {
		st := cells[x].st
		b.Reset()
		for ; x < len(cells) && cells[x].st == st; x++ {
			b.WriteRune(cells[x].r)
		}
		l.segs = append(l.segs, seg{b.String(), st})
	}
	l.w = g.w
	return l
}

// axis maps a value range onto cells: v → round((v−lo)/(hi−lo)·(n−1)).
type axis struct {
	lo, hi float64
	n      int
}

func (a axis) cell(v float64) int {
	if a.hi <= a.lo || a.n < 2 {
		return 0
	}
	return int(math.Round((v - a.lo) / (a.hi - a.lo) * float64(a.n-1)))
}

// value is the value at the middle of cell i (the inverse of cell).
func (a axis) value(i int) float64 {
	if a.n < 2 {
		return a.lo
	}
	return a.lo + float64(i)/float64(a.n-1)*(a.hi-a.lo)
}

// freqRange chooses the chart's frequency span: every point, the drive
// frequency and the band, padded by 3 % of the span on each side, at
// least 10 steps wide (or ±5 % of the drive frequency with no step).
func freqRange(s *acquire.Snapshot) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	see := func(f float64) {
		if f > 0 && !math.IsInf(f, 0) && !math.IsNaN(f) {
			lo, hi = math.Min(lo, f), math.Max(hi, f)
		}
	}
	for i := range s.Points {
		see(s.Points[i].FreqSetHz)
	}
	see(s.FreqHz)
	if s.BandHiHz > s.BandLoHz {
		see(s.BandLoHz)
		see(s.BandHiHz)
	}
	if lo > hi {
		return 0, 1
	}
	minSpan := 10 * s.StepHz
	if minSpan <= 0 {
		minSpan = 0.1 * math.Max(s.FreqHz, 1)
	}
	if span := hi - lo; span < minSpan {
		c := (lo + hi) / 2
		lo, hi = c-minSpan/2, c+minSpan/2
	}
	pad := 0.03 * (hi - lo)
	return lo - pad, hi + pad
}

// thirdIndex is the index of the third harmonic in the snapshot's
// harmonics, −1 when it is not measured.
func thirdIndex(s *acquire.Snapshot) int {
	for i, h := range s.Harmonics {
		if h == "3" {
			return i
		}
	}
	return -1
}

// pointY is what the chart plots for a point: the fundamental's
// amplitude, or the third harmonic's ratio to it in %.
func pointY(p *acquire.Point, third int) float64 {
	if len(p.Amp) == 0 {
		return math.NaN()
	}
	if third < 0 {
		return p.Amp[0]
	}
	if third >= len(p.Amp) || p.Amp[0] <= 0 {
		return math.NaN()
	}
	return 100 * p.Amp[third] / p.Amp[0]
}

// Chart markers: the sweep direction reads from the marker itself.
const (
	markUp     = '>'
	markDown   = '<'
	markManual = 'o'
	markBoth   = 'x' // up and down points in one cell
	markNow    = '@'
	markJump   = '┆'
	markCursor = '│'
	markLimit  = '┄'
	markBand   = '═'
)

// yLabelW is the width of the chart's value labels.
const yLabelW = 7

// chartLines draws the sweep so far in w×h cells: a title, the plot with
// its value labels, the frequency axis and its labels, and a legend.
func (m *Model) chartLines(w, h int) []line {
	s := &m.snap
	third := -1
	if m.chart == chartThird {
		third = thirdIndex(s)
	}
	pw, ph := w-yLabelW-1, h-4
	if pw < 8 || ph < 2 {
		return nil
	}
	var out []line

	// Title.
	var t line
	if m.chart == chartThird {
		t.add(stHead, "3RD HARMONIC")
		t.plain(" % of 1st vs Hz")
	} else {
		t.add(stHead, "SWEEP")
		t.plain(" amplitude " + s.Unit + " vs Hz")
	}
	t.add(stDim, " · "+plural(len(s.Points), "point"))
	hint := "t: 3rd %"
	if m.chart == chartThird {
		hint = "t: amplitude"
	}
	if t.w+len(hint)+2 <= w {
		t.space(w - t.w - len(hint))
		t.add(stDim, hint)
	}
	out = append(out, t)
	if m.chart == chartThird && third < 0 {
		var l line
		l.add(stDim, "the third harmonic is not among the measured harmonics")
		return append(out, l)
	}

	// Scales.
	flo, fhi := freqRange(s)
	fx := axis{flo, fhi, pw}
	ymax := 0.0
	for i := range s.Points {
		if y := pointY(&s.Points[i], third); y > ymax {
			ymax = y
		}
	}
	live := math.NaN() // the live reading, shown (and scaled for) while driving
	if third >= 0 {
		ymax = math.Max(ymax, 1.5*s.ThirdLimit)
		if s.DriveOn {
			live = s.ThirdPct
		}
	} else if len(s.Amp) > 0 && s.DriveOn {
		live = s.Amp[0]
	}
	if live > ymax {
		ymax = live
	}
	for _, j := range s.Jumps {
		if third < 0 {
			ymax = math.Max(ymax, math.Max(j.AmpBefore, j.AmpAfter))
		}
	}
	if !(ymax > 0) {
		ymax = 1
	}
	ymax = niceCeil(1.05 * ymax)
	ya := axis{0, ymax, ph}
	row := func(v float64) int { return ph - 1 - min(max(ya.cell(v), 0), ph-1) }

	g := newGrid(pw, ph)
	// Bistable band: a tint behind the data (colour only) and a double
	// line on the axis (below).
	bandL, bandR := -1, -2
	if s.BandHiHz > s.BandLoHz {
		bandL, bandR = fx.cell(s.BandLoHz), fx.cell(s.BandHiHz)
		for y := 0; y < ph; y++ {
			for x := max(bandL, 0); x <= min(bandR, pw-1); x++ {
				g.at(x, y).st = stBandFill
			}
		}
	}
	// Third-harmonic threshold.
	if third >= 0 && s.ThirdLimit > 0 {
		y := row(s.ThirdLimit)
		for x := 0; x < pw; x++ {
			*g.at(x, y) = cell{markLimit, stBarHi}
		}
	}
	// Drive-frequency cursor.
	cx := fx.cell(s.FreqHz)
	if s.FreqHz > 0 {
		for y := 0; y < ph; y++ {
			if c := g.at(cx, y); c != nil && c.blank() {
				*c = cell{markCursor, stCursor}
			}
		}
	}
	// Jumps: a dashed line from the level before to the level after.
	if third < 0 {
		for _, j := range s.Jumps {
			x := fx.cell((j.FromHz + j.ToHz) / 2)
			y0, y1 := row(j.AmpBefore), row(j.AmpAfter)
			for y := min(y0, y1); y <= max(y0, y1); y++ {
				if c := g.at(x, y); c != nil && c.blank() {
					*c = cell{markJump, stJump}
				}
			}
		}
	}
	// Points.
	both := false
	for i := range s.Points {
		p := &s.Points[i]
		y := pointY(p, third)
		if math.IsNaN(y) {
			continue
		}
		c := g.at(fx.cell(p.FreqSetHz), row(y))
		if c == nil {
			continue
		}
		mk, st := markManual, stManual
		switch p.Direction {
		case acquire.Up:
			mk, st = markUp, stUp
		case acquire.Down:
			mk, st = markDown, stDown
		}
		switch {
		case c.blank() || c.r == markJump || c.r == markLimit:
			*c = cell{mk, st}
		case (c.r == markUp && mk == markDown) || (c.r == markDown && mk == markUp):
			*c = cell{markBoth, stBoth}
			both = true
		case c.r == markManual && mk != markManual:
			*c = cell{mk, st}
		}
	}
	// The live reading.
	if !math.IsNaN(live) {
		if c := g.at(cx, row(live)); c != nil {
			*c = cell{markNow, stNow}
		}
	}

	// Rows with value labels.
	for y := 0; y < ph; y++ {
		var l line
		lab := ""
		switch y {
		case 0:
			lab = fmtLabel(ymax)
		case ph - 1:
			lab = "0"
		case (ph - 1) / 2:
			if ph >= 5 {
				lab = fmtLabel(ya.value(ph - 1 - y))
			}
		}
		tick := '│'
		if lab != "" {
			tick = '┤'
		}
		l.add(stAxis, padLeft(lab, yLabelW)+string(tick))
		l.join(g.row(y))
		out = append(out, l)
	}

	// Frequency axis: the band as a double line, the cursor as ┴.
	var ax line
	ax.add(stAxis, strings.Repeat(" ", yLabelW)+"└")
	for x := 0; x < pw; x++ {
		switch {
		case x == cx && s.FreqHz > 0:
			ax.add(stNow, "┴")
		case x >= bandL && x <= bandR:
			ax.add(stBand, string(markBand))
		default:
			ax.add(stAxis, "─")
		}
	}
	out = append(out, ax)

	// Frequency labels: the ends, and the drive frequency under the cursor
	// where it does not collide with them.
	d := labelDecimals(fhi - flo)
	labs := []byte(strings.Repeat(" ", pw))
	put := func(x int, s string) bool {
		if x < 0 || x+len(s) > pw {
			return false
		}
		for i := max(x-1, 0); i < min(x+len(s)+1, pw); i++ {
			if labs[i] != ' ' {
				return false
			}
		}
		copy(labs[x:], s)
		return true
	}
	lo, hi := fmtFixed(flo, d), fmtFixed(fhi, d)
	put(0, lo)
	put(pw-len(hi), hi)
	var fl line
	fl.space(yLabelW + 1)
	if s.FreqHz > 0 {
		now := fmtFixed(s.FreqHz, d)
		x := cx - len(now)/2
		x = min(max(x, 0), pw-len(now))
		if put(x, now) {
			fl.plain(string(labs[:x]))
			fl.add(stNow, now)
			fl.plain(string(labs[x+len(now):]) + " Hz")
		} else {
			fl.plain(string(labs) + " Hz")
		}
	} else {
		fl.plain(string(labs) + " Hz")
	}
	out = append(out, fl)

	// Legend: as many entries as fit.
	var lg line
	lg.space(1)
	item := func(mk string, st sty, words string) {
		if lg.w+cellWidth(words)+cellWidth(mk)+3 > w {
			return
		}
		lg.add(st, mk)
		lg.plain(" " + words + "  ")
	}
	item(string(markUp), stUp, "up")
	item(string(markDown), stDown, "down")
	if len(s.Jumps) > 0 {
		item(string(markJump), stJump, "jump")
	}
	if s.BandHiHz > s.BandLoHz {
		item(string(markBand), stBand, "band "+fmtFixed(s.BandLoHz, d)+"–"+fmtFixed(s.BandHiHz, d))
	}
	if third >= 0 {
		item(string(markLimit), stBarHi, "flag level")
	}
	item(string(markNow), stNow, "now")
	item(string(markManual), stManual, "by hand")
	if both {
		item(string(markBoth), stBoth, "up+down")
	}
	out = append(out, lg)
	return out
}

// fmtLabel formats a value label in at most yLabelW cells.
func fmtLabel(v float64) string {
	for d := 3; d >= 1; d-- {
		if s := fmtSig(v, d); len(s) <= yLabelW {
			return s
		}
	}
	return strconv.FormatFloat(v, 'e', 0, 64)
}

// plural writes a count with its noun: "1 point", "2 points".
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return strconv.Itoa(n) + " " + noun + "s"
}

// labelDecimals gives frequency labels two significant decimals of the
// span: a 20 Hz span shows 0.1 Hz, a 2 Hz span 0.01 Hz.
func labelDecimals(span float64) int {
	if !(span > 0) {
		return 2
	}
	return min(max(int(math.Ceil(-math.Log10(span)))+2, 0), 5)
}

// niceCeil rounds v up to 1, 2, 2.5, 5 or 10 times a power of ten, so
// the top label reads plainly.
func niceCeil(v float64) float64 {
	if !(v > 0) || math.IsInf(v, 0) {
		return v
	}
	p := math.Pow(10, math.Floor(math.Log10(v)))
	for _, k := range []float64{1, 1.2, 1.5, 2, 2.5, 3, 4, 5, 6, 8, 10} {
		if k*p >= v*(1-1e-12) {
			return k * p
		}
	}
	return 10 * p
}
