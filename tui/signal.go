package tui

import (
	"fmt"
	"math"
	"strings"
)

// brailleBit is the bit of the dot at column x (0, 1) and row y (0..3,
// top first) of a braille cell: dots 1, 2, 3, 7 run down the left column
// and 4, 5, 6, 8 down the right, and dot k is bit k−1 of the offset from
// U+2800 (Unicode Standard, Braille Patterns block, U+2800–U+28FF).
func brailleBit(x, y int) uint8 {
	if y == 3 {
		return 0x40 << x // dot 7 or 8
	}
	return 1 << (3*x + y) // dots 1–3 or 4–6
}

// dots is a braille canvas of w×h cells, 2w×4h dots.
type dots struct {
	w, h int
	bits []uint8
}

func newDots(w, h int) *dots { return &dots{w: w, h: h, bits: make([]uint8, w*h)} }

// set lights the dot at (x, y), y counted from the top.
func (d *dots) set(x, y int) {
	if x < 0 || y < 0 || x >= 2*d.w || y >= 4*d.h {
		return
	}
	d.bits[(y/4)*d.w+x/2] |= brailleBit(x%2, y%4)
}

func (d *dots) row(y int) string {
	var b strings.Builder
	for x := 0; x < d.w; x++ {
		b.WriteRune(rune(0x2800 + int(d.bits[y*d.w+x])))
	}
	return b.String()
}

// signalLines draws the small signal view in w×h cells: the waveform over
// the last few cycles, or the spectrum with the harmonics marked.
func (m *Model) signalLines(w, h int) []line {
	if h < 2 || w < 10 {
		return nil
	}
	if m.signal == showSpectrum {
		return m.spectrumLines(w, h)
	}
	return m.waveLines(w, h)
}

func (m *Model) waveLines(w, h int) []line {
	s := &m.snap
	var t line
	t.add(stHead, "WAVE")
	v := s.Wave
	mean, amp := 0.0, 0.0
	for _, x := range v {
		mean += x
	}
	if len(v) > 0 {
		mean /= float64(len(v))
	}
	for _, x := range v {
		amp = math.Max(amp, math.Abs(x-mean))
	}
	if len(v) > 1 && s.WaveDt > 0 && s.FreqHz > 0 {
		cyc := float64(len(v)) * s.WaveDt * s.FreqHz
		t.plain(fmt.Sprintf(" %s cycles ±%s %s", fmtFixed(cyc, 1), fmtSig(amp, 3), s.Unit))
	}
	out := []line{titleHint(t, w, "w: spectrum")}
	rows := h - 1
	if len(v) < 2 {
		var l line
		l.add(stDim, "no signal yet")
		return append(out, l)
	}
	if amp == 0 {
		amp = 1
	}
	d := newDots(w, rows)
	nx, ny := 2*w, 4*rows
	prev := -1
	for x := 0; x < nx; x++ {
		i := int(math.Round(float64(x) * float64(len(v)-1) / float64(nx-1)))
		y := int(math.Round((1 - (v[i]-mean)/amp) / 2 * float64(ny-1)))
		y = min(max(y, 0), ny-1)
		if prev < 0 {
			prev = y
		}
		// join to the previous dot so steep flanks stay continuous
		for yy := min(prev, y); yy <= max(prev, y); yy++ {
			d.set(x, yy)
		}
		prev = y
	}
	for y := 0; y < rows; y++ {
		var l line
		l.add(stTrace, d.row(y))
		out = append(out, l)
	}
	return out
}

// specRangeDB is the depth of the spectrum view below its highest peak.
const specRangeDB = 80.0

func (m *Model) spectrumLines(w, h int) []line {
	s := &m.snap
	var t line
	t.add(stHead, "SPECTRUM")
	sp := s.Spectrum
	top := 0.0
	for _, h := range s.Harmonics {
		if r, ok := harmonicRatio(h); ok {
			top = math.Max(top, r)
		}
	}
	fmax := float64(len(sp)) * s.BinHz
	if s.FreqHz > 0 && top > 0 {
		fmax = math.Min(fmax, (top+0.75)*s.FreqHz)
	}
	if len(sp) < 2 || !(fmax > 0) || !(s.BinHz > 0) {
		out := []line{titleHint(t, w, "w: wave")}
		var l line
		l.add(stDim, "no spectrum yet")
		return append(out, l)
	}
	t.plain(fmt.Sprintf(" 0–%s Hz, %g dB deep", fmtSig(fmax, 4), specRangeDB))
	out := []line{titleHint(t, w, "w: wave")}
	rows := h - 2 // bars, then the harmonic marks
	if rows < 1 {
		return out
	}
	// largest bin per column, in dB below the highest peak shown
	col := make([]float64, w)
	peak := 0.0
	perCol := fmax / (float64(w) * s.BinHz) // bins per column
	for c := 0; c < w; c++ {
		// the bins whose centre frequency k·BinHz lies in this column
		k0 := int(math.Ceil(float64(c) * perCol))
		k1 := min(int(math.Ceil(float64(c+1)*perCol)), len(sp))
		if k1 <= k0 {
			// a column narrower than a bin: the nearest bin
			k0 = min(int(math.Round((float64(c)+0.5)*perCol)), len(sp)-1)
			k1 = k0 + 1
		}
		v := 0.0
		for k := k0; k < k1; k++ {
			v = math.Max(v, sp[k])
		}
		col[c] = v
		peak = math.Max(peak, v)
	}
	if peak <= 0 {
		peak = 1
	}
	eighthsTall := make([]int, w)
	for c, v := range col {
		frac := (ratioDB(v/peak) + specRangeDB) / specRangeDB
		if math.IsNaN(frac) || frac < 0 {
			frac = 0
		}
		eighthsTall[c] = int(math.Round(math.Min(frac, 1) * float64(rows*8)))
	}
	for r := 0; r < rows; r++ {
		base := (rows - 1 - r) * 8 // eighths below this row
		var b strings.Builder
		for c := 0; c < w; c++ {
			n := eighthsTall[c] - base
			switch {
			case n <= 0:
				b.WriteByte(' ')
			case n >= 8:
				b.WriteRune(lowBlock(8))
			default:
				b.WriteRune(lowBlock(n))
			}
		}
		var l line
		l.add(stTrace, b.String())
		out = append(out, l)
	}
	// harmonic marks under their columns
	marks := []byte(strings.Repeat(" ", w))
	for _, lab := range s.Harmonics {
		r, ok := harmonicRatio(lab)
		if !ok {
			continue
		}
		// the column holding the centre of the harmonic's nearest bin
		x := int(math.Round(r*s.FreqHz/s.BinHz) * s.BinHz / fmax * float64(w))
		x = min(max(x-len(lab)/2, 0), w-len(lab))
		free := true
		for i := max(x-1, 0); i < min(x+len(lab)+1, w); i++ {
			if marks[i] != ' ' {
				free = false
			}
		}
		if free {
			copy(marks[x:], lab)
		}
	}
	var l line
	l.add(stHarm, string(marks))
	return append(out, l)
}

// titleHint right-aligns a key hint on a title line when it fits.
func titleHint(t line, w int, hint string) line {
	if t.w+len(hint)+2 <= w {
		t.space(w - t.w - len(hint))
		t.add(stDim, hint)
	}
	return t
}
