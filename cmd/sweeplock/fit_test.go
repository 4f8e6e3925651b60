package main

import (
	"bytes"
	"encoding/json"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const recordsDir = "../../testdata/records"

// runCLI runs the program in-process with args, capturing what it writes
// to stdout and stderr, and returns its exit code.
func runCLI(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	dir := t.TempDir()
	outF, err := os.Create(filepath.Join(dir, "stdout"))
	if err != nil {
		t.Fatal(err)
	}
	errF, err := os.Create(filepath.Join(dir, "stderr"))
	if err != nil {
		t.Fatal(err)
	}
	oldOut, oldErr := os.Stdout, os.Stderr
	os.Stdout, os.Stderr = outF, errF
	func() {
		defer func() { os.Stdout, os.Stderr = oldOut, oldErr }()
		code = run(args)
	}()
	outF.Close()
	errF.Close()
	o, _ := os.ReadFile(outF.Name())
	e, _ := os.ReadFile(errF.Name())
	return code, string(o), string(e)
}

func record(name string) string { return filepath.Join(recordsDir, name+".csv") }

// `sweeplock fit` on good and bad files: the exit code (0, 2 for a file
// that is not a usable record or a missing argument) and what it prints.
func TestFitCommand(t *testing.T) {
	dir := t.TempDir()
	notRecord := filepath.Join(dir, "notes.csv")
	if err := os.WriteFile(notRecord, []byte("x,y\n1,2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name   string
		args   []string
		code   int
		stdout []string
		stderr []string
		isJSON bool
	}{
		{"table", []string{"fit", record("demo-0.2")}, exitOK,
			[]string{"first order", "with 3rd harmonic", "rig's true value", "mm⁻²s⁻²", "softening", "jump up"}, nil, false},
		{"json", []string{"fit", "--json", record("hard-0.2")}, exitOK, []string{`"format": "sweeplock-fit/1"`}, nil, true},
		{"base form", []string{"fit", "--base", record("hard-0.2")}, exitOK, []string{"base drive"}, nil, false},
		{"missing file", []string{"fit", filepath.Join(dir, "nope.csv")}, exitMisuse, nil, []string{"cannot read the record"}, false},
		{"not a record", []string{"fit", notRecord}, exitMisuse, nil, []string{"not a sweep record"}, false},
		{"no argument", []string{"fit"}, exitMisuse, nil, []string{"expected \"<record>\""}, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			code, out, errOut := runCLI(t, c.args...)
			if code != c.code {
				t.Errorf("exit %d, want %d\nstdout:\n%s\nstderr:\n%s", code, c.code, out, errOut)
			}
			for _, w := range c.stdout {
				if !strings.Contains(out, w) {
					t.Errorf("stdout lacks %q:\n%s", w, out)
				}
			}
			for _, w := range c.stderr {
				if !strings.Contains(errOut, w) {
					t.Errorf("stderr lacks %q:\n%s", w, errOut)
				}
			}
			if c.isJSON {
				var v map[string]any
				if err := json.Unmarshal([]byte(out), &v); err != nil {
					t.Errorf("stdout is not JSON: %v", err)
				}
			}
		})
	}
}

// `sweeplock plot`: a PNG that decodes, several records with --no-fit, and
// the usage mistakes (no -o, an unknown format, a file that is not a
// record) exit 2.
func TestPlotCommand(t *testing.T) {
	dir := t.TempDir()
	png1 := filepath.Join(dir, "one.png")
	code, out, errOut := runCLI(t, "plot", record("demo-0.2"), "-o", png1)
	if code != exitOK || !strings.Contains(out, "wrote "+png1) {
		t.Fatalf("exit %d\n%s\n%s", code, out, errOut)
	}
	f, err := os.Open(png1)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	if w := img.Bounds().Dx(); w != 700 {
		t.Errorf("PNG %d px wide, want 700 (3.5 in at 200 dpi)", w)
	}

	svg := filepath.Join(dir, "cmp.svg")
	code, _, errOut = runCLI(t, "plot", record("hard-0.1"), record("hard-0.2"), "--no-fit", "-o", svg, "--width", "5")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	data, err := os.ReadFile(svg)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(data, []byte("hard-0.1.csv, 0.1 A")) || !bytes.Contains(data, []byte(`width="360pt"`)) {
		t.Errorf("SVG lacks the legend entry or the 5 in (360 pt) width")
	}

	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"no output", []string{"plot", record("demo-0.2")}, "missing flags: --out"},
		{"unknown format", []string{"plot", record("demo-0.2"), "-o", filepath.Join(dir, "x.jpg")}, "unknown image format"},
		{"not a record", []string{"plot", filepath.Join(dir, "one.png"), "-o", filepath.Join(dir, "y.svg")}, "not a sweep record"},
	} {
		t.Run(c.name, func(t *testing.T) {
			code, _, errOut := runCLI(t, c.args...)
			if code != exitMisuse || !strings.Contains(errOut, c.want) {
				t.Errorf("exit %d, want %d with %q; stderr:\n%s", code, exitMisuse, c.want, errOut)
			}
		})
	}
}
