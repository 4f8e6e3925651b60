package tui

import (
	"strings"
	"unicode/utf8"

	"github.com/charmbracelet/x/ansi"
)

// seg is a run of text in one look.
type seg struct {
	s  string
	st sty
}

// line is one screen row under construction: segments and their width in
// cells. Panels build lines; the frame pads or cuts them to their column
// and renders them once.
type line struct {
	segs []seg
	w    int
}

// cellWidth is the width of plain text in terminal cells.
func cellWidth(s string) int {
	// Fast path: text made only of printable ASCII and of the narrow
	// symbols the screen draws itself is one cell per rune; anything else
	// (a user's note in CJK, an emoji, a combining mark) is measured in
	// full.
	n := 0
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			if c < 0x20 || c == 0x7f {
				return ansi.StringWidth(s)
			}
			i++
			n++
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if !narrowSymbol(r) {
			return ansi.StringWidth(s)
		}
		i += size
		n++
	}
	return n
}

// narrowSymbol reports whether r is one of the single-cell symbols the
// screen draws: Latin-1 signs (°, ·), Greek (τ), general punctuation (–,
// …), arrows, mathematical operators (√), box drawing, block elements,
// geometric shapes (●, ▲), ✖, and braille patterns. All have East Asian
// width "narrow" or "ambiguous" (Unicode Standard Annex #11), which
// terminals outside CJK locales draw one cell wide.
func narrowSymbol(r rune) bool {
	switch {
	case r >= 0xA0 && r <= 0xFF:
	case r >= 0x391 && r <= 0x3C9:
	case r >= 0x2010 && r <= 0x2027:
	case r >= 0x2190 && r <= 0x21FF:
	case r >= 0x2200 && r <= 0x22FF:
	case r >= 0x2500 && r <= 0x25FF:
	case r == 0x2716:
	case r >= 0x2800 && r <= 0x28FF:
	default:
		return false
	}
	return true
}

func (l *line) add(st sty, s string) *line {
	if s == "" {
		return l
	}
	if n := len(l.segs); n > 0 && l.segs[n-1].st == st {
		l.segs[n-1].s += s
	} else {
		l.segs = append(l.segs, seg{s, st})
	}
	l.w += cellWidth(s)
	return l
}

func (l *line) plain(s string) *line { return l.add(stPlain, s) }

// space adds n blanks.
func (l *line) space(n int) *line {
	if n > 0 {
		l.add(stPlain, strings.Repeat(" ", n))
	}
	return l
}

// fit pads the line with blanks or cuts it to exactly w cells.
func (l *line) fit(w int) {
	if l.w == w {
		return
	}
	if l.w < w {
		l.space(w - l.w)
		return
	}
	rest := w
	for i := range l.segs {
		sw := cellWidth(l.segs[i].s)
		if sw <= rest {
			rest -= sw
			continue
		}
		l.segs[i].s = ansi.Truncate(l.segs[i].s, rest, "")
		l.segs = l.segs[:i+1]
		l.w = w - rest + cellWidth(l.segs[i].s)
		if l.w < w {
			l.space(w - l.w)
		}
		return
	}
}

// join appends another line's segments.
func (l *line) join(o line) {
	for _, s := range o.segs {
		l.add(s.st, s.s)
	}
}

// render writes the line with its looks.
func (l *line) render(b *strings.Builder, p *palette) {
	for _, s := range l.segs {
		if s.st == stPlain {
			b.WriteString(s.s)
			continue
		}
		b.WriteString(p.pre[s.st])
		b.WriteString(s.s)
		b.WriteString(p.post[s.st])
	}
}

// text returns the line without looks (tests).
func (l *line) text() string {
	var b strings.Builder
	for _, s := range l.segs {
		b.WriteString(s.s)
	}
	return b.String()
}

// wrapWords breaks s into lines of at most w cells at spaces.
func wrapWords(s string, w int) []string {
	if w < 1 {
		return nil
	}
	var out []string
	for _, para := range strings.Split(ansi.Wordwrap(s, w, ""), "\n") {
		out = append(out, ansi.Hardwrap(para, w, true))
	}
	return strings.Split(strings.Join(out, "\n"), "\n")
}
