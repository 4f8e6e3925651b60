package figure

import (
	"bytes"
	"encoding/xml"
	"errors"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"

	"github.com/sweeplock/sweeplock/acquire/report"
	"github.com/sweeplock/sweeplock/dsp/duffing"
)

const records = "../../testdata/records"

// trace opens a committed record and, when fit is set, fits it.
func trace(t testing.TB, name string, fit bool) Trace {
	t.Helper()
	run, err := report.Open(filepath.Join(records, name+".csv"))
	if err != nil {
		t.Fatalf("%v (the records are made by: go test -tags records ./acquire/report -run TestGenerateRecords -update)", err)
	}
	tr := Trace{Run: run}
	if fit {
		rep, err := report.Analyze(run, report.Options{})
		if err != nil {
			t.Fatal(err)
		}
		tr.Fit = &rep.Fit
	}
	return tr
}

// svgText returns the character data of an SVG document, failing the test
// if it is not well-formed XML.
func svgText(t *testing.T, data []byte) string {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(data))
	var b strings.Builder
	root := ""
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not well-formed XML: %v", err)
		}
		switch x := tok.(type) {
		case xml.StartElement:
			if root == "" {
				root = x.Name.Local
			}
		case xml.CharData:
			b.Write(x)
			b.WriteByte('\n')
		}
	}
	if root != "svg" {
		t.Fatalf("root element %q, want svg", root)
	}
	return b.String()
}

// One record with its fit, in the three formats: the PNG decodes to the
// size the options ask for (3.5 in at 200 dpi is 700 px wide), the SVG is
// XML with the axis labels and legend entries as text, the PDF has the
// header and trailer of a PDF file (ISO 32000-1 §7.5.2, §7.5.5: "%PDF-1.n"
// and "%%EOF"; section numbers from memory).
func TestSaveFormats(t *testing.T) {
	dir := t.TempDir()
	tr := []Trace{trace(t, "demo-0.3-dwell2s-seed11", true)}
	for _, format := range Formats() {
		t.Run(format, func(t *testing.T) {
			path := filepath.Join(dir, "fig."+format)
			if err := Save(path, tr, Options{}); err != nil {
				t.Fatal(err)
			}
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			f, err := New(tr, Options{})
			if err != nil {
				t.Fatal(err)
			}
			w, h := f.Size()
			switch format {
			case "png":
				img, err := png.Decode(bytes.NewReader(data))
				if err != nil {
					t.Fatal(err)
				}
				wantW := int(math.Round(float64(w/vg.Inch) * 200))
				wantH := int(math.Round(float64(h/vg.Inch) * 200))
				if b := img.Bounds(); b.Dx() != wantW || b.Dy() != wantH || wantW != 700 {
					t.Errorf("PNG is %dx%d px, want %dx%d (700 wide)", b.Dx(), b.Dy(), wantW, wantH)
				}
			case "svg":
				text := svgText(t, data)
				for _, want := range []string{"amplitude (mm)", "harmonic ratio (%)", "phase of fundamental (°)",
					"drive frequency (Hz)", "up-sweep", "down-sweep", "not settled", "jump seen",
					"fit, stable", "fit, unstable", "backbone", "3rd", "3rd, model", "drive 0.3 A",
					"demo-0.3-dwell2s-seed11.csv"} {
					if !strings.Contains(text, want) {
						t.Errorf("SVG has no text %q", want)
					}
				}
			case "pdf":
				if !bytes.HasPrefix(data, []byte("%PDF-1.")) || !bytes.Contains(data[len(data)-32:], []byte("%%EOF")) {
					t.Errorf("not a PDF: starts %q, ends %q", data[:8], data[len(data)-16:])
				}
			}
		})
	}
}

// Several records on one figure: one legend entry per record naming the
// file and the drive amplitude; the ratio panel shows the third harmonic.
func TestCompareRecords(t *testing.T) {
	var tr []Trace
	for _, n := range []string{"demo-0.1", "demo-0.2", "demo-0.3"} {
		tr = append(tr, trace(t, n, true))
	}
	f, err := New(tr, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if _, err := f.WriteTo(&b, "svg"); err != nil {
		t.Fatal(err)
	}
	text := svgText(t, b.Bytes())
	for _, want := range []string{"demo-0.1.csv, 0.1 A", "demo-0.2.csv, 0.2 A", "demo-0.3.csv, 0.3 A", "3rd harmonic (%)"} {
		if !strings.Contains(text, want) {
			t.Errorf("SVG has no text %q", want)
		}
	}
	if strings.Contains(text, "not settled") {
		t.Error("a legend entry for unsettled points, but every point settled")
	}
}

// Points only (--no-fit): no fit entries in the legend.
func TestNoFit(t *testing.T) {
	f, err := New([]Trace{trace(t, "hard-0.2", false)}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if _, err := f.WriteTo(&b, "svg"); err != nil {
		t.Fatal(err)
	}
	text := svgText(t, b.Bytes())
	if strings.Contains(text, "fit, stable") || strings.Contains(text, "backbone") {
		t.Error("fit drawn without a fit")
	}
	if !strings.Contains(text, "jump seen") {
		t.Error("the record's jumps are not marked")
	}
}

func TestFormatOf(t *testing.T) {
	for _, c := range []struct {
		path, want string
		err        bool
	}{
		{"a.png", "png", false}, {"dir/b.SVG", "svg", false}, {"c.pdf", "pdf", false},
		{"d.jpg", "", true}, {"e", "", true}, {"run.csv", "", true},
	} {
		got, err := FormatOf(c.path)
		if got != c.want || (err != nil) != c.err || (err != nil && !errors.Is(err, ErrFormat)) {
			t.Errorf("FormatOf(%q) = %q, %v", c.path, got, err)
		}
	}
	if _, err := New(nil, Options{}); !errors.Is(err, ErrNoTraces) {
		t.Errorf("New(nil) error %v", err)
	}
}

// The drawn response curve is the first-order harmonic balance: at each
// sampled point duffing.Params.Roots (a separate derivation: the cubic in
// A² solved at fixed frequency) has a root of the same amplitude and
// stability, and the curve turns back exactly at duffing's folds.
func TestResponseCurveMatchesRoots(t *testing.T) {
	const (
		tolAmp = 1e-6 // relative: both solve the same relation to ~1e-12
		// The curve is sampled by amplitude; a turning point in frequency
		// falls between two samples, 1/480 of the amplitude range apart.
		tolFold = 2e-4 // relative frequency
	)
	for _, c := range []struct {
		name string
		p    duffing.Params
	}{
		{"softening demo 0.2 A", duffing.Params{F0Hz: 38, Zeta: 1.0 / 120, Beta: -2e4, Force: 480}},
		{"hardening beam 0.3 A", duffing.Params{F0Hz: 120, Zeta: 0.01, Beta: 2.25e7, Force: 1050}},
		{"base-excited hardening", duffing.Params{F0Hz: 100, Zeta: 0.02, Beta: 5e8, Force: 300, Base: true}},
	} {
		t.Run(c.name, func(t *testing.T) {
			polys := responseCurve(c.p, 1)
			if len(polys) == 0 {
				t.Fatal("no curve")
			}
			var buf [3]duffing.Root
			checked := 0
			var turns []float64
			for _, poly := range polys {
				for i, cp := range poly {
					if i > 0 && i+1 < len(poly) {
						a, b := poly[i-1].FreqHz, poly[i+1].FreqHz
						if (cp.FreqHz-a)*(b-cp.FreqHz) < 0 {
							turns = append(turns, cp.FreqHz)
						}
					}
					if cp.Amp < 1e-3*c.p.Static() {
						continue
					}
					ok := false
					for _, r := range c.p.Roots(buf[:0], cp.FreqHz) {
						if math.Abs(r.Amp/cp.Amp-1) < tolAmp && r.Stable == cp.Stable {
							ok = true
						}
					}
					// Right at a fold the stability flips between samples.
					if !ok && !nearAny(cp.FreqHz, c.p.Folds(), tolFold) {
						t.Errorf("curve point %.6g Hz, %.6g (stable %v) is no root of duffing's", cp.FreqHz, cp.Amp, cp.Stable)
					}
					checked++
				}
			}
			if checked < 100 {
				t.Errorf("only %d points checked", checked)
			}
			folds := c.p.Folds()
			if len(folds) == 0 {
				t.Fatal("the case has no fold: it does not test the turns")
			}
			t.Logf("%d points, folds %v, turns %v", checked, folds, turns)
			for _, fd := range folds {
				if !nearAnyF(fd.FreqHz, turns, tolFold) {
					t.Errorf("duffing's fold at %.6g Hz: no turn of the curve there (turns %v)", fd.FreqHz, turns)
				}
			}
		})
	}
}

func nearAny(f float64, folds []duffing.Fold, tol float64) bool {
	for _, fd := range folds {
		if math.Abs(f/fd.FreqHz-1) < tol {
			return true
		}
	}
	return false
}

func nearAnyF(f float64, fs []float64, tol float64) bool {
	for _, x := range fs {
		if math.Abs(f/x-1) < tol {
			return true
		}
	}
	return false
}

func TestWrapPhase(t *testing.T) {
	for _, c := range []struct{ in, want float64 }{
		{-5, -5}, {-185, -185}, {175, -185}, {95, -265}, {-275, 85}, {360, 0}, {90, 90},
	} {
		if got := wrapPhase(c.in); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("wrapPhase(%g) = %g, want %g", c.in, got, c.want)
		}
	}
}

// Drawing a comparison of two 160-point records with their fits.
func BenchmarkDrawPNG(b *testing.B) {
	tr := []Trace{trace(b, "demo-0.2", true), trace(b, "demo-0.3", true)}
	b.ReportAllocs()
	for b.Loop() {
		f, err := New(tr, Options{})
		if err != nil {
			b.Fatal(err)
		}
		if _, err := f.WriteTo(io.Discard, "png"); err != nil {
			b.Fatal(err)
		}
	}
}
