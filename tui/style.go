package tui

import (
	"strings"

	"charm.land/lipgloss/v2"
)

// sty names a look; the palette maps it to a Lip Gloss style. Every look
// that carries meaning also has words or a marker, so a screen without
// colour loses nothing.
type sty uint8

const (
	stPlain sty = iota
	stDim
	stHead     // section label
	stValue    // a main reading
	stTitle    // the top bar
	stOn       // drive on
	stOff      // drive off
	stGood     // settled
	stWarn     // settling, changing
	stSlow     // slow: a jump may be near
	stBad      // gave up, disconnected
	stFlag     // third-harmonic flag
	stErr      // error line
	stCaution  // safety caution
	stUp       // up-sweep points
	stDown     // down-sweep points
	stManual   // manual points
	stBoth     // a cell holding up and down points
	stNow      // the live reading on the chart
	stJump     // jump marks
	stBand     // bistable band marks
	stBandFill // the band's tint behind the data
	stCursor   // the drive-frequency cursor
	stAxis
	stBar
	stBarHi // bar above its threshold
	stTrace // wave and spectrum traces
	stHarm  // harmonic marks under the spectrum
	stKey   // key names in help
	stMode  // mode badge
	stInput // input line
	nSty
)

// palette holds one Lip Gloss style per look, and the escape codes each
// puts before and after a run of text on one line (taken from the style's
// own rendering once, so a frame does not re-render every run).
type palette struct {
	st        [nSty]lipgloss.Style
	pre, post [nSty]string
}

// probe is the text the palette renders to find a style's codes.
const probe = "x"

func (p *palette) cache() *palette {
	for i := range p.st {
		out := p.st[i].Render(probe)
		k := strings.Index(out, probe)
		p.pre[i], p.post[i] = out[:k], out[k+len(probe):]
	}
	return p
}

// Colours are our own: a dark-background scheme, picked so that up and
// down points differ in hue and in lightness (they stay apart for the
// common red-green colour blindness, and the markers differ anyway).
func newPalette(noColor bool) *palette {
	var pal palette
	p := &pal.st
	base := lipgloss.NewStyle()
	for i := range p {
		p[i] = base
	}
	p[stHead] = base.Bold(true)
	p[stValue] = base.Bold(true)
	p[stTitle] = base.Bold(true)
	p[stOn] = base.Bold(true)
	p[stFlag] = base.Bold(true).Reverse(true)
	p[stErr] = base.Bold(true).Reverse(true)
	p[stCaution] = base.Bold(true)
	p[stBad] = base.Bold(true)
	p[stSlow] = base.Bold(true)
	p[stGood] = base.Bold(true)
	p[stMode] = base.Bold(true).Reverse(true)
	p[stKey] = base.Bold(true)
	p[stNow] = base.Bold(true)
	if noColor {
		return pal.cache()
	}
	c := lipgloss.Color
	p[stDim] = base.Foreground(c("#8a8f98"))
	p[stHead] = base.Bold(true).Foreground(c("#e3b25c"))
	p[stValue] = base.Bold(true).Foreground(c("#f2f2f2"))
	p[stTitle] = base.Bold(true).Foreground(c("#10141a")).Background(c("#7fb7be"))
	p[stOn] = base.Bold(true).Foreground(c("#9ccc65"))
	p[stOff] = base.Foreground(c("#8a8f98"))
	p[stGood] = base.Bold(true).Foreground(c("#9ccc65"))
	p[stWarn] = base.Foreground(c("#f2d16b"))
	p[stSlow] = base.Bold(true).Foreground(c("#ff9f43"))
	p[stBad] = base.Bold(true).Foreground(c("#ff6b6b"))
	p[stFlag] = base.Bold(true).Foreground(c("#10141a")).Background(c("#ff9f43"))
	p[stErr] = base.Bold(true).Foreground(c("#ffffff")).Background(c("#b3261e"))
	p[stCaution] = base.Bold(true).Foreground(c("#f2d16b"))
	p[stUp] = base.Foreground(c("#5ec8f2"))
	p[stDown] = base.Foreground(c("#f27ea9"))
	p[stManual] = base.Foreground(c("#c5c9d0"))
	p[stBoth] = base.Bold(true).Foreground(c("#d6a8ff"))
	p[stNow] = base.Bold(true).Foreground(c("#9ccc65"))
	p[stJump] = base.Foreground(c("#f2d16b"))
	p[stBand] = base.Foreground(c("#e3b25c"))
	p[stBandFill] = base.Background(c("#2e2a1c"))
	p[stCursor] = base.Foreground(c("#5d8a61"))
	p[stAxis] = base.Foreground(c("#6b7280"))
	p[stBar] = base.Foreground(c("#7fb7be"))
	p[stBarHi] = base.Foreground(c("#ff9f43"))
	p[stTrace] = base.Foreground(c("#7fb7be"))
	p[stHarm] = base.Foreground(c("#e3b25c"))
	p[stKey] = base.Bold(true).Foreground(c("#e3b25c"))
	p[stMode] = base.Bold(true).Foreground(c("#10141a")).Background(c("#e3b25c"))
	p[stInput] = base.Foreground(c("#f2f2f2"))
	return pal.cache()
}
