package figure

import (
	"image/color"

	"gonum.org/v1/plot/vg"
)

// look holds the sizes and colours of a figure, chosen for a journal
// column (3.5 in wide, text of 7–8.5 pt that stays legible when printed at
// that size) and a screen (PNG at 200 dpi is 700 px wide).
type look struct {
	width                vg.Length
	ampH, ratioH, phaseH vg.Length // heights of the three panels
	titleSize, labelSize vg.Length
	tickSize, legendSize vg.Length
	legendRow            vg.Length
	marker               vg.Length // glyph radius
	line, thin           vg.Length
	dash                 []vg.Length // unstable branch
	dot                  []vg.Length // backbone
	up, down, fit, muted color.Color
	records              []color.Color
	harmonics            map[string]color.Color
	otherHarmonic        color.Color
}

func defaultLook() look {
	return look{
		width: 3.5 * vg.Inch,
		ampH:  2.3 * vg.Inch, ratioH: 1.25 * vg.Inch, phaseH: 1.25 * vg.Inch,
		titleSize: vg.Points(8.5), labelSize: vg.Points(8), tickSize: vg.Points(7), legendSize: vg.Points(7),
		legendRow: vg.Points(9.5),
		marker:    vg.Points(1.7),
		line:      vg.Points(0.9), thin: vg.Points(0.6),
		dash:  []vg.Length{vg.Points(3), vg.Points(2)},
		dot:   []vg.Length{vg.Points(0.8), vg.Points(1.6)},
		up:    color.RGBA{R: 0x1f, G: 0x5f, B: 0xa8, A: 0xff}, // blue
		down:  color.RGBA{R: 0xc8, G: 0x52, B: 0x10, A: 0xff}, // burnt orange
		fit:   color.RGBA{R: 0x20, G: 0x20, B: 0x20, A: 0xff},
		muted: color.RGBA{R: 0x80, G: 0x80, B: 0x80, A: 0xff},
		records: []color.Color{
			color.RGBA{R: 0x1f, G: 0x5f, B: 0xa8, A: 0xff},
			color.RGBA{R: 0xc8, G: 0x52, B: 0x10, A: 0xff},
			color.RGBA{R: 0x2a, G: 0x8a, B: 0x3e, A: 0xff},
			color.RGBA{R: 0x7a, G: 0x3e, B: 0x9d, A: 0xff},
			color.RGBA{R: 0x8c, G: 0x6d, B: 0x1f, A: 0xff},
			color.RGBA{R: 0x1a, G: 0x8f, B: 0x95, A: 0xff},
			color.RGBA{R: 0xb0, G: 0x30, B: 0x60, A: 0xff},
			color.RGBA{R: 0x50, G: 0x50, B: 0x50, A: 0xff},
		},
		harmonics: map[string]color.Color{
			"2":   color.RGBA{R: 0x1a, G: 0x8f, B: 0x95, A: 0xff},
			"3":   color.RGBA{R: 0xb0, G: 0x1c, B: 0x2e, A: 0xff},
			"5":   color.RGBA{R: 0x8c, G: 0x6d, B: 0x1f, A: 0xff},
			"1/2": color.RGBA{R: 0x7a, G: 0x3e, B: 0x9d, A: 0xff},
			"1/3": color.RGBA{R: 0x2a, G: 0x8a, B: 0x3e, A: 0xff},
		},
		otherHarmonic: color.RGBA{R: 0x60, G: 0x60, B: 0x60, A: 0xff},
	}
}

// recordColor returns the colour of the i-th record of a comparison.
func (l look) recordColor(i int) color.Color { return l.records[i%len(l.records)] }

// harmonicColor returns the colour of a harmonic label.
func (l look) harmonicColor(label string) color.Color {
	if c, ok := l.harmonics[label]; ok {
		return c
	}
	return l.otherHarmonic
}

// harmonicName returns a legend name for a harmonic label: "3" → "3rd",
// "1/2" → "1/2 subharmonic".
func harmonicName(label string) string {
	switch label {
	case "2":
		return "2nd"
	case "3":
		return "3rd"
	}
	for _, c := range label {
		if c == '/' {
			return label + " subharmonic"
		}
	}
	return label + "th"
}
