package tui

import (
	"testing"

	"github.com/charmbracelet/x/ansi"
)

// TestPaletteCodes: the cached codes around a run give exactly what Lip
// Gloss renders for that run, for every look, with and without colour, on
// text with spaces and the screen's own symbols.
func TestPaletteCodes(t *testing.T) {
	for _, noColor := range []bool{false, true} {
		p := newPalette(noColor)
		for st := sty(0); st < nSty; st++ {
			for _, s := range []string{"x", "  ~ SETTLING 45 %  ", "▁▂█ ⠉⣄ ┆═│ –·°√τ"} {
				want := p.st[st].Render(s)
				if got := p.pre[st] + s + p.post[st]; got != want {
					t.Errorf("noColor=%v look %d %q: cached %q, Lip Gloss %q", noColor, st, s, got, want)
				}
			}
		}
	}
}

// TestCellWidth: the fast width agrees with the full grapheme width of
// the x/ansi package on the screen's own symbols, and falls back to it
// for wide text.
func TestCellWidth(t *testing.T) {
	for _, s := range []string{
		"plain ASCII 123", "°·τ–…√", "↑↓→←", "─│┤┴└┆═┄", "▁▂▃▄▅▆▇█▏▎▍▌▋▊▉░", "●▲✖",
		"⠀⠉⣿⢦", "note: 調整後", "emoji 🔧", "e\u0301", "tab\there",
	} {
		if got, want := cellWidth(s), ansi.StringWidth(s); got != want {
			t.Errorf("cellWidth(%q) = %d, ansi.StringWidth %d", s, got, want)
		}
	}
}
