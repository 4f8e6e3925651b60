package figure

import (
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"

	"github.com/sweeplock/sweeplock/acquire/report"
	"github.com/sweeplock/sweeplock/dsp/duffing"
)

var (
	// ErrFormat: the output file's extension names no format we write.
	ErrFormat = errors.New("figure: unknown image format")
	// ErrNoTraces: nothing to draw.
	ErrNoTraces = errors.New("figure: no records to draw")
)

// Trace is one record on a figure.
type Trace struct {
	Run *report.Run
	// Fit, when not nil, is drawn over the points: the first-order
	// response curve (stable branches solid, the unstable middle branch
	// dashed) and its backbone.
	Fit *duffing.FitResult
	// Label names the record in the legend; empty means the file name and
	// the drive amplitude.
	Label string
}

// Options sets the figure's size and resolution. Zero fields take the
// defaults: 3.5 in wide (a journal column), panel heights 2.3, 1.25 and
// 1.25 in, PNG at 200 dpi.
type Options struct {
	Width vg.Length
	// Height of the whole figure; the panels share it in the default
	// proportions.
	Height vg.Length
	DPI    int
	// Title over the panels; empty: the record's name for one record,
	// none for several.
	Title string
}

// Figure is a drawn comparison of records: three stacked panels sharing
// the frequency axis and a legend strip below them.
type Figure struct {
	look   look
	title  string
	panels [3]*plot.Plot
	ylabel [3]string       // drawn by Draw, centred on each data area
	legend [][]legendEntry // columns of entries
	width  vg.Length
	height vg.Length
	dpi    int
}

type legendEntry struct {
	name  string
	thumb []plot.Thumbnailer
}

// Formats lists the file formats Save and WriteTo accept.
func Formats() []string { return []string{"png", "svg", "pdf"} }

// FormatOf returns the format named by a file's extension (png, svg or
// pdf, any case), or an error wrapping ErrFormat.
func FormatOf(path string) (string, error) {
	ext := strings.ToLower(strings.TrimPrefix(filepath.Ext(path), "."))
	if slices.Contains(Formats(), ext) {
		return ext, nil
	}
	return "", fmt.Errorf("%w: %q (the file name must end in .png, .svg or .pdf)", ErrFormat, filepath.Ext(path))
}

// Save draws the traces and writes the figure to path in the format its
// extension names. The file is written whole or not at all: to a
// temporary file in the same folder, then renamed.
func Save(path string, traces []Trace, opt Options) error {
	format, err := FormatOf(path)
	if err != nil {
		return err
	}
	f, err := New(traces, opt)
	if err != nil {
		return err
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), ".figure-*.tmp")
	if err != nil {
		return fmt.Errorf("figure: %w", err)
	}
	name := tmp.Name()
	if _, err := f.WriteTo(tmp, format); err != nil {
		tmp.Close()
		os.Remove(name)
		return err
	}
	if err := tmp.Close(); err != nil {
		os.Remove(name)
		return fmt.Errorf("figure: %w", err)
	}
	if err := os.Rename(name, path); err != nil {
		os.Remove(name)
		return fmt.Errorf("figure: %w", err)
	}
	return nil
}

// Size returns the figure's width and height.
func (f *Figure) Size() (w, h vg.Length) { return f.width, f.height }

// WriteTo draws the figure in format ("png", "svg" or "pdf") to w.
func (f *Figure) WriteTo(w io.Writer, format string) (int64, error) {
	var c vg.CanvasWriterTo
	switch format {
	case "png":
		img := vgimg.NewWith(vgimg.UseWH(f.width, f.height), vgimg.UseDPI(f.dpi), vgimg.UseBackgroundColor(color.White))
		c = vgimg.PngCanvas{Canvas: img}
	case "svg":
		c = vgsvg.New(f.width, f.height)
	case "pdf":
		c = vgpdf.New(f.width, f.height)
	default:
		return 0, fmt.Errorf("%w: %q", ErrFormat, format)
	}
	f.Draw(draw.New(c))
	n, err := c.WriteTo(w)
	if err != nil {
		return n, fmt.Errorf("figure: writing %s: %w", format, err)
	}
	return n, nil
}

// New builds the figure of the traces.
func New(traces []Trace, opt Options) (*Figure, error) {
	if len(traces) == 0 {
		return nil, ErrNoTraces
	}
	for i, t := range traces {
		if t.Run == nil || t.Run.Record == nil {
			return nil, fmt.Errorf("figure: trace %d has no record", i)
		}
	}
	l := defaultLook()
	f := &Figure{look: l, dpi: opt.DPI}
	if f.dpi <= 0 {
		f.dpi = 200
	}
	f.width = opt.Width
	if f.width <= 0 {
		f.width = l.width
	}
	f.title = opt.Title
	if f.title == "" && len(traces) == 1 {
		f.title = traces[0].Run.Name
		if m := traces[0].Run.Record.Meta; m != nil && m.Rig.Name != "" {
			f.title += " — " + m.Rig.Name
		}
	}
	f.build(traces)
	panelH := l.ampH + l.ratioH + l.phaseH
	f.height = opt.Height
	if f.height <= 0 {
		f.height = panelH + f.chromeHeight()
	}
	return f, nil
}

// chromeHeight is the height of the title and the legend strip.
func (f *Figure) chromeHeight() vg.Length {
	h := vg.Points(4)
	if f.title != "" {
		h += f.look.titleSize + vg.Points(4)
	}
	rows := 0
	for _, col := range f.legend {
		rows = max(rows, len(col))
	}
	return h + vg.Length(rows)*f.look.legendRow + vg.Points(4)
}

// Draw draws the figure on c.
func (f *Figure) Draw(c draw.Canvas) {
	l := f.look
	top := c.Max.Y - vg.Points(2)
	if f.title != "" {
		sty := textStyle(l.titleSize)
		sty.XAlign = draw.XCenter
		sty.YAlign = draw.YTop
		c.FillText(sty, vg.Point{X: (c.Min.X + c.Max.X) / 2, Y: top}, f.title)
		top -= l.titleSize + vg.Points(4)
	}
	rows := 0
	for _, col := range f.legend {
		rows = max(rows, len(col))
	}
	legendH := vg.Length(rows)*l.legendRow + vg.Points(4)
	bottom := c.Min.Y + legendH
	// Panels share the height between bottom and top in proportion.
	total := l.ampH + l.ratioH + l.phaseH
	avail := top - bottom
	hs := [3]vg.Length{avail * l.ampH / total, avail * l.ratioH / total, avail * l.phaseH / total}
	var cs [3]draw.Canvas
	y := top
	for i := range cs {
		cs[i] = c
		cs[i].Min.Y, cs[i].Max.Y = y-hs[i], y
		y -= hs[i]
	}
	// A gutter on the left for the y labels, which are drawn here rather
	// than by gonum: its label sits at the arithmetic middle of the axis
	// range, off centre on a logarithmic axis.
	gutter := l.labelSize + vg.Points(3)
	for i := range cs {
		cs[i].Min.X += gutter
	}
	// Room on the right for the last tick label.
	for i := range cs {
		cs[i].Max.X -= vg.Points(5)
	}
	// Line up the data areas: the same left and right margins for all.
	var left, right vg.Length
	for i, p := range f.panels {
		d := p.DataCanvas(cs[i])
		left = max(left, d.Min.X-cs[i].Min.X)
		right = max(right, cs[i].Max.X-d.Max.X)
	}
	for i, p := range f.panels {
		d := p.DataCanvas(cs[i])
		cc := draw.Crop(cs[i], left-(d.Min.X-cs[i].Min.X), -(right - (cs[i].Max.X - d.Max.X)), 0, 0)
		p.Draw(cc)
		d = p.DataCanvas(cc)
		sty := textStyle(l.labelSize)
		sty.Rotation = math.Pi / 2
		sty.XAlign, sty.YAlign = draw.XCenter, draw.YTop
		c.FillText(sty, vg.Point{X: c.Min.X + vg.Points(1), Y: (d.Min.Y + d.Max.Y) / 2}, f.ylabel[i])
	}
	// Legend columns, below the panels, starting at the data area's left.
	lc := c
	lc.Min.X += gutter + left
	lc.Max.Y = bottom - vg.Points(2)
	lc.Min.Y = c.Min.Y
	colW := (lc.Max.X - lc.Min.X - right) / vg.Length(max(1, len(f.legend)))
	for k, col := range f.legend {
		leg := plot.NewLegend()
		leg.TextStyle = textStyle(l.legendSize)
		leg.Top, leg.Left = true, true
		leg.ThumbnailWidth = vg.Points(12)
		leg.Padding = l.legendRow - l.legendSize
		for _, e := range col {
			leg.Add(e.name, e.thumb...)
		}
		cc := lc
		cc.Min.X = lc.Min.X + vg.Length(k)*colW
		cc.Max.X = cc.Min.X + colW
		leg.Draw(cc)
	}
}

// build makes the three panels and the legend.
func (f *Figure) build(traces []Trace) {
	l := f.look
	lo, hi := math.Inf(1), math.Inf(-1)
	unit, driveUnit := "", ""
	for _, t := range traces {
		for _, p := range t.Run.Points {
			lo, hi = math.Min(lo, p.FreqHz), math.Max(hi, p.FreqHz)
		}
		if unit == "" {
			unit, driveUnit = t.Run.Record.Columns.Unit, t.Run.Record.Columns.DriveUnit
		}
	}
	if !(hi > lo) {
		lo, hi = lo-1, hi+1
		if math.IsInf(lo, 0) {
			lo, hi = 0, 1
		}
	}
	pad := 0.01 * (hi - lo)
	xmin, xmax := lo-pad, hi+pad

	for i := range f.panels {
		p := plot.New()
		p.X.Min, p.X.Max = xmin, xmax
		styleAxes(p, l)
		f.panels[i] = p
	}
	amp, ratio, phase := f.panels[0], f.panels[1], f.panels[2]
	if unit == "" {
		unit = "unit"
	}
	f.ylabel[0] = "amplitude (" + unit + ")"
	phase.X.Label.Text = "drive frequency (Hz)"
	f.ylabel[2] = "phase of fundamental (°)"
	phase.Y.Tick.Marker = degreeTicks{}

	single := len(traces) == 1
	var harmonics []string // drawn in the ratio panel
	if single {
		for _, h := range traces[0].Run.Record.Columns.Harmonics {
			if h != "1" {
				harmonics = append(harmonics, h)
			}
		}
		f.ylabel[1] = "harmonic ratio (%)"
	} else {
		harmonics = []string{"3"}
		f.ylabel[1] = "3rd harmonic (%)"
	}
	ratio.Y.Scale = plot.LogScale{}
	ratio.Y.Tick.Marker = percentTicks{}

	var recCol, dirCol, fitCol []legendEntry
	yMax, rMin, rMax := 0.0, math.Inf(1), math.Inf(-1)
	for _, t := range traces {
		for _, p := range t.Run.Points {
			yMax = math.Max(yMax, p.Amp)
		}
	}
	anyFit, anyHollow, anyJump := false, false, false
	for ti, t := range traces {
		cUp, cDown, cFit := l.up, l.down, l.fit
		if !single {
			c := l.recordColor(ti)
			cUp, cDown, cFit = c, c, c
		}
		run := t.Run
		// The fit, under the points.
		if t.Fit != nil {
			anyFit = true
			// Over this record's own range: a comparison's wider axis is no
			// reason to extrapolate one record's model.
			rlo, rhi := math.Inf(1), math.Inf(-1)
			for _, p := range run.Points {
				rlo, rhi = math.Min(rlo, p.FreqHz), math.Max(rhi, p.FreqHz)
			}
			rpad := 0.01 * (rhi - rlo)
			f.addFit(t.Fit.Params, cFit, math.Max(xmin, rlo-rpad), math.Min(xmax, rhi+rpad), yMax, single && slices.Contains(harmonics, "3"))
		}
		// Points by direction and settledness.
		type key struct{ up, settled bool }
		groups := map[key]plotter.XYs{}
		phases := map[key]plotter.XYs{}
		for k, p := range run.Points {
			g := key{p.Up, p.Settled}
			groups[g] = append(groups[g], plotter.XY{X: p.FreqHz, Y: p.Amp})
			if !p.Settled {
				anyHollow = true
			}
			rp := run.Record.Points[run.Index[k]]
			if len(rp.PhaseDeg) > 0 && !math.IsNaN(rp.PhaseDeg[0]) {
				phases[g] = append(phases[g], plotter.XY{X: p.FreqHz, Y: wrapPhase(rp.PhaseDeg[0])})
			}
		}
		for _, g := range []key{{true, true}, {false, true}, {true, false}, {false, false}} {
			col := cDown
			if g.up {
				col = cUp
			}
			sty := draw.GlyphStyle{Color: col, Radius: l.marker, Shape: triangle{down: !g.up, hollow: !g.settled}}
			if xy := groups[g]; len(xy) > 0 {
				amp.Add(scatter(xy, sty))
			}
			if xy := phases[g]; len(xy) > 0 {
				phase.Add(scatter(xy, sty))
			}
		}
		// Harmonic ratios.
		for _, h := range harmonics {
			hi := slices.Index(run.Record.Columns.Harmonics, h)
			if hi < 0 {
				continue
			}
			col := l.harmonicColor(h)
			if !single {
				col = l.recordColor(ti)
			}
			for _, up := range []bool{true, false} {
				var xy plotter.XYs
				for k, p := range run.Points {
					a := run.Record.Points[run.Index[k]].Amp
					if p.Up != up || hi >= len(a) || !(p.Amp > 0) || !(a[hi] > 0) {
						continue
					}
					r := 100 * a[hi] / p.Amp
					xy = append(xy, plotter.XY{X: p.FreqHz, Y: r})
					rMin, rMax = math.Min(rMin, r), math.Max(rMax, r)
				}
				if len(xy) == 0 {
					continue
				}
				r := 0.8 * l.marker
				if h != "3" {
					r = 0.6 * l.marker // the third harmonic matters most
				}
				ratio.Add(scatter(xy, draw.GlyphStyle{Color: col, Radius: r, Shape: triangle{down: !up}}))
			}
		}
		// The jumps seen.
		var js []arrowSpec
		for k, j := range []report.Jump{run.UpJump, run.DownJump} {
			if !j.Found || !(j.AmpBefore > 0) || !(j.AmpAfter > 0) {
				continue
			}
			col := cUp
			if k == 1 {
				col = cDown
			}
			js = append(js, arrowSpec{loHz: j.LoHz, hiHz: j.HiHz, from: j.AmpBefore, to: j.AmpAfter, color: col})
		}
		if len(js) > 0 {
			anyJump = true
			amp.Add(arrows{jumps: js, style: draw.LineStyle{Width: l.thin}})
		}
		if !single {
			recCol = append(recCol, legendEntry{traceLabel(t, driveUnit), []plot.Thumbnailer{
				lineThumb{draw.LineStyle{Color: l.recordColor(ti), Width: l.line}},
				glyphThumb{draw.GlyphStyle{Color: l.recordColor(ti), Radius: l.marker, Shape: triangle{}}}}})
		}
	}
	amp.Y.Min, amp.Y.Max = 0, 1.08*yMax
	if !(yMax > 0) {
		amp.Y.Max = 1
	}
	if rMax > 0 {
		ratio.Y.Min, ratio.Y.Max = rMin/1.5, rMax*1.5
	} else {
		ratio.Y.Min, ratio.Y.Max = 0.01, 1
	}
	phase.Y.Min, phase.Y.Max = -190, 10

	// Legend: what the marks mean, then the records (or harmonics).
	cUp, cDown := l.up, l.down
	if !single {
		cUp, cDown = l.fit, l.fit
	}
	dirCol = append(dirCol,
		legendEntry{"up-sweep", []plot.Thumbnailer{glyphThumb{draw.GlyphStyle{Color: cUp, Radius: l.marker, Shape: triangle{}}}}},
		legendEntry{"down-sweep", []plot.Thumbnailer{glyphThumb{draw.GlyphStyle{Color: cDown, Radius: l.marker, Shape: triangle{down: true}}}}})
	if anyHollow {
		dirCol = append(dirCol, legendEntry{"not settled", []plot.Thumbnailer{glyphThumb{draw.GlyphStyle{Color: l.fit, Radius: l.marker, Shape: triangle{hollow: true}}}}})
	}
	if anyJump {
		dirCol = append(dirCol, legendEntry{"jump seen", []plot.Thumbnailer{arrowThumb{l.fit}}})
	}
	if anyFit {
		fitCol = append(fitCol,
			legendEntry{"fit, stable", []plot.Thumbnailer{lineThumb{draw.LineStyle{Color: l.fit, Width: l.line}}}},
			legendEntry{"fit, unstable", []plot.Thumbnailer{lineThumb{draw.LineStyle{Color: l.fit, Width: l.line, Dashes: l.dash}}}},
			legendEntry{"backbone", []plot.Thumbnailer{lineThumb{draw.LineStyle{Color: l.muted, Width: l.line, Dashes: l.dot}}}})
	}
	if single {
		var hcol []legendEntry
		for _, h := range harmonics {
			hcol = append(hcol, legendEntry{harmonicName(h), []plot.Thumbnailer{
				glyphThumb{draw.GlyphStyle{Color: l.harmonicColor(h), Radius: l.marker, Shape: triangle{}}}}})
		}
		if anyFit && slices.Contains(harmonics, "3") {
			hcol = append(hcol, legendEntry{"3rd, model", []plot.Thumbnailer{lineThumb{draw.LineStyle{Color: l.harmonicColor("3"), Width: l.thin, Dashes: l.dash}}}})
		}
		f.legend = [][]legendEntry{append(dirCol, fitCol...), hcol}
		if len(hcol) == 0 {
			f.legend = f.legend[:1]
		}
		if d := traces[0].Run.DriveAmp; !math.IsNaN(d) {
			f.legend[0] = append(f.legend[0], legendEntry{fmt.Sprintf("drive %.4g %s", d, driveUnit), nil})
		}
		return
	}
	f.legend = [][]legendEntry{recCol, append(dirCol, fitCol...)}
}

// addFit draws the first-order response curve of p on the amplitude and
// phase panels (stable solid, unstable dashed), its backbone, and, when
// third is set, the model's third-harmonic ratio along the stable
// branches on the ratio panel.
func (f *Figure) addFit(p duffing.Params, col color.Color, xmin, xmax, yMax float64, third bool) {
	l := f.look
	amp, ratio, phase := f.panels[0], f.panels[1], f.panels[2]
	capAmp := 2 * yMax
	topAmp := 0.0
	for _, poly := range responseCurve(p, capAmp) {
		for _, run := range splitStable(poly) {
			// A run after the first starts on the previous run's last point.
			stable := run[len(run)-1].Stable
			var xy, ph, r3 plotter.XYs
			for _, cp := range run {
				if cp.FreqHz < xmin || cp.FreqHz > xmax || cp.Amp > 1.5*yMax {
					// Break the line where it leaves the frame.
					flush(amp, phase, ratio, &xy, &ph, &r3, stable, col, l, third)
					continue
				}
				xy = append(xy, plotter.XY{X: cp.FreqHz, Y: cp.Amp})
				ph = append(ph, plotter.XY{X: cp.FreqHz, Y: cp.PhaseDeg})
				if third && cp.Stable {
					if h := 100 * p.ThirdHarmonic(cp.FreqHz, cp.Amp); h > 0 {
						r3 = append(r3, plotter.XY{X: cp.FreqHz, Y: h})
					}
				}
				topAmp = math.Max(topAmp, cp.Amp)
			}
			flush(amp, phase, ratio, &xy, &ph, &r3, stable, col, l, third)
		}
	}
	// Backbone from zero amplitude to the top of the drawn curve.
	var bb plotter.XYs
	const nb = 100
	for i := 0; i <= nb; i++ {
		a := 1.05 * math.Max(topAmp, yMax) * float64(i) / nb
		if fr := p.Backbone(a); fr >= xmin && fr <= xmax && a <= 1.08*yMax {
			bb = append(bb, plotter.XY{X: fr, Y: a})
		}
	}
	if len(bb) > 1 {
		ln := line(bb, draw.LineStyle{Color: l.muted, Width: l.line, Dashes: l.dot})
		amp.Add(ln)
	}
}

// flush adds the pending polylines to the panels and empties them.
func flush(amp, phase, ratio *plot.Plot, xy, ph, r3 *plotter.XYs, stable bool, col color.Color, l look, third bool) {
	sty := draw.LineStyle{Color: col, Width: l.line}
	if !stable {
		sty.Dashes = l.dash
	}
	if len(*xy) > 1 {
		amp.Add(line(*xy, sty))
		phase.Add(line(*ph, sty))
	}
	if third && len(*r3) > 1 {
		ratio.Add(line(*r3, draw.LineStyle{Color: l.harmonicColor("3"), Width: l.thin, Dashes: l.dash}))
	}
	*xy, *ph, *r3 = nil, nil, nil
}

func scatter(xy plotter.XYs, sty draw.GlyphStyle) *plotter.Scatter {
	s, err := plotter.NewScatter(xy)
	if err != nil {
		// NewScatter fails only on NaN or Inf values, which are never added.
		panic("figure: " + err.Error())
	}
	s.GlyphStyle = sty
	return s
}

func line(xy plotter.XYs, sty draw.LineStyle) *plotter.Line {
	ln, err := plotter.NewLine(xy)
	if err != nil {
		panic("figure: " + err.Error())
	}
	ln.LineStyle = sty
	return ln
}

// traceLabel is the legend name of a record in a comparison.
func traceLabel(t Trace, driveUnit string) string {
	if t.Label != "" {
		return t.Label
	}
	s := t.Run.Name
	if d := t.Run.DriveAmp; !math.IsNaN(d) {
		s += fmt.Sprintf(", %.4g %s", d, driveUnit)
	}
	return s
}

// wrapPhase maps a phase in degrees to (−270, 90], so that lags just past
// −180° (a resonator above resonance with a little extra delay) stay next
// to their neighbours instead of wrapping to +180°.
func wrapPhase(deg float64) float64 {
	d := math.Mod(deg, 360)
	if d > 90 {
		d -= 360
	}
	if d <= -270 {
		d += 360
	}
	return d
}

func styleAxes(p *plot.Plot, l look) {
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		ax.Label.TextStyle.Font.Size = l.labelSize
		ax.Tick.Label.Font.Size = l.tickSize
		ax.Width = vg.Points(0.6)
		ax.Tick.LineStyle.Width = vg.Points(0.5)
		ax.Tick.Length = vg.Points(3)
		ax.Padding = vg.Points(2)
	}
	p.X.Label.Padding = vg.Points(1)
	p.Y.Label.Padding = vg.Points(2)
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{Y: 0xe4}
	g.Horizontal.Color = color.Gray{Y: 0xe4}
	g.Vertical.Width = vg.Points(0.4)
	g.Horizontal.Width = vg.Points(0.4)
	p.Add(g)
}

func textStyle(size vg.Length) draw.TextStyle {
	p := plot.New()
	s := p.Legend.TextStyle
	s.Font.Size = size
	return s
}

// degreeTicks labels a phase axis every 45° (major, labelled every 90°).
type degreeTicks struct{}

// Ticks implements plot.Ticker.
func (degreeTicks) Ticks(min, max float64) []plot.Tick {
	var ts []plot.Tick
	for v := math.Ceil(min/45) * 45; v <= max; v += 45 {
		t := plot.Tick{Value: v}
		if math.Mod(v, 90) == 0 {
			t.Label = fmt.Sprintf("%.0f", v)
		}
		ts = append(ts, t)
	}
	return ts
}

// percentTicks labels a logarithmic percent axis at 1, 2, 5 times powers
// of ten, as plain numbers.
type percentTicks struct{}

// Ticks implements plot.Ticker.
func (percentTicks) Ticks(min, max float64) []plot.Tick {
	if !(min > 0) || !(max > min) {
		return nil
	}
	var ts []plot.Tick
	for e := math.Floor(math.Log10(min)); e <= math.Ceil(math.Log10(max)); e++ {
		for _, m := range []float64{1, 2, 5} {
			v := m * math.Pow(10, e)
			if v < min || v > max {
				continue
			}
			t := plot.Tick{Value: v}
			if m == 1 || max/min < 30 {
				t.Label = trimFloat(v)
			}
			ts = append(ts, t)
		}
	}
	if len(ts) < 2 {
		return plot.LogTicks{Prec: -1}.Ticks(min, max)
	}
	return ts
}

func trimFloat(v float64) string {
	return fmt.Sprintf("%g", v)
}
