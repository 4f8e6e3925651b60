package figure

import (
	"image/color"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// triangle is a point marker: a triangle pointing up (an up-sweep point)
// or down (a down-sweep point), filled (settled) or outlined (not
// settled). Its size follows GlyphStyle.Radius like gonum's own glyphs.
type triangle struct {
	down, hollow bool
}

var _ draw.GlyphDrawer = triangle{}

// DrawGlyph implements draw.GlyphDrawer.
func (t triangle) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	r := sty.Radius
	// Equilateral triangle with its centroid at pt: apex at 2r/1.5 from it.
	h := 1.15 * r
	var apex, b1, b2 vg.Point
	if t.down {
		apex = vg.Point{X: pt.X, Y: pt.Y - h}
		b1 = vg.Point{X: pt.X - h, Y: pt.Y + 0.6*h}
		b2 = vg.Point{X: pt.X + h, Y: pt.Y + 0.6*h}
	} else {
		apex = vg.Point{X: pt.X, Y: pt.Y + h}
		b1 = vg.Point{X: pt.X - h, Y: pt.Y - 0.6*h}
		b2 = vg.Point{X: pt.X + h, Y: pt.Y - 0.6*h}
	}
	if t.hollow {
		c.SetLineStyle(draw.LineStyle{Color: sty.Color, Width: vg.Points(0.6)})
		var p vg.Path
		p.Move(apex)
		p.Line(b1)
		p.Line(b2)
		p.Close()
		c.Stroke(p)
		return
	}
	c.FillPolygon(sty.Color, []vg.Point{apex, b1, b2})
}

// arrows draws the jumps seen in a record: at the middle of each jump's
// interval, a vertical arrow from the amplitude before the jump to the one
// after, and a short horizontal bar across the interval at the arrow's
// foot, so that both where and how far the sweep jumped can be read.
type arrows struct {
	jumps []arrowSpec
	style draw.LineStyle
}

type arrowSpec struct {
	loHz, hiHz, from, to float64
	color                color.Color
}

var _ plot.Plotter = arrows{}

// Plot implements plot.Plotter.
func (a arrows) Plot(c draw.Canvas, plt *plot.Plot) {
	trX, trY := plt.Transforms(&c)
	for _, j := range a.jumps {
		sty := a.style
		sty.Color = j.color
		x := trX(0.5 * (j.loHz + j.hiHz))
		y0, y1 := trY(j.from), trY(j.to)
		c.StrokeLines(sty, c.ClipLinesXY([]vg.Point{{X: x, Y: y0}, {X: x, Y: y1}})...)
		c.StrokeLines(sty, c.ClipLinesXY([]vg.Point{{X: trX(j.loHz), Y: y0}, {X: trX(j.hiHz), Y: y0}})...)
		head := vg.Points(3)
		dir := vg.Length(1)
		if y1 < y0 {
			dir = -1
		}
		tip := vg.Point{X: x, Y: y1}
		if c.Contains(tip) {
			c.FillPolygon(j.color, []vg.Point{tip,
				{X: x - 0.5*head, Y: y1 - dir*head}, {X: x + 0.5*head, Y: y1 - dir*head}})
		}
	}
}

// arrowThumb is the legend thumbnail of a jump arrow.
type arrowThumb struct{ color color.Color }

// Thumbnail implements plot.Thumbnailer.
func (a arrowThumb) Thumbnail(c *draw.Canvas) {
	x := (c.Min.X + c.Max.X) / 2
	sty := draw.LineStyle{Color: a.color, Width: vg.Points(0.8)}
	top, bot := c.Max.Y-vg.Points(1), c.Min.Y+vg.Points(1)
	c.StrokeLine2(sty, x, bot, x, top-vg.Points(2.5))
	c.FillPolygon(a.color, []vg.Point{{X: x, Y: top}, {X: x - vg.Points(1.5), Y: top - vg.Points(3)}, {X: x + vg.Points(1.5), Y: top - vg.Points(3)}})
}

// glyphThumb is a legend thumbnail of one marker.
type glyphThumb struct{ sty draw.GlyphStyle }

// Thumbnail implements plot.Thumbnailer.
func (g glyphThumb) Thumbnail(c *draw.Canvas) {
	c.DrawGlyph(g.sty, c.Center())
}

// lineThumb is a legend thumbnail of a line style.
type lineThumb struct{ sty draw.LineStyle }

// Thumbnail implements plot.Thumbnailer.
func (l lineThumb) Thumbnail(c *draw.Canvas) {
	y := c.Center().Y
	c.StrokeLine2(l.sty, c.Min.X, y, c.Max.X, y)
}
