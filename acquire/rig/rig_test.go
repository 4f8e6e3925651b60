package rig

import (
	"errors"
	"strings"
	"testing"
)

func TestDemoParses(t *testing.T) {
	f, err := Parse("demo", DemoText())
	if err != nil {
		t.Fatal(err)
	}
	p, err := f.AcquirePlan()
	if err != nil || len(p.Steps()) != 161 {
		t.Fatalf("demo plan: %v, %d steps", err, len(p.Steps()))
	}
	if f.Sim == nil || f.Sim.NaturalHz != 38 || f.Sim.MaxAmp != f.DriveCfg.MaxAmplitude {
		t.Errorf("demo sim table: %+v", f.Sim)
	}
}

// Mistakes in a rig file name the key, its line and what is allowed.
func TestRigErrorsNameKeyAndLine(t *testing.T) {
	lineOf := func(text, key string) int {
		for i, l := range strings.Split(text, "\n") {
			if strings.HasPrefix(strings.TrimSpace(l), key) {
				return i + 1
			}
		}
		return 0
	}
	cases := []struct {
		name, old, new, key string
		want                []string
	}{
		{"unknown key", "step_hz = 0.05", "step_hz = 0.05\nstep_width = 1", "plan.step_width", []string{"unknown key", "allowed", "step_hz"}},
		{"unknown table key", "q = 60.0", "q = 60.0\nquality = 3", "sim.quality", []string{"unknown key"}},
		{"bad direction", `direction = "up-down"`, `direction = "sideways"`, "plan.direction", []string{"up, down, up-down"}},
		{"bad sensor", `sensor = "displacement"`, `sensor = "laser"`, "response.sensor", []string{"displacement, velocity, acceleration"}},
		{"drive above limit", "amplitude = 0.2 ", "amplitude = 0.9 ", "drive_output.amplitude", []string{"above max_amplitude"}},
		{"bad duration", `max_dwell = "20s"`, `max_dwell = "twenty"`, "plan.max_dwell", []string{"duration"}},
		{"bad harmonic", `harmonics = ["1", "2", "3", "5", "1/2", "1/3"]`, `harmonics = ["1", "x"]`, "measure.harmonics", []string{"fractions"}},
		{"negative step", "step_hz = 0.05", "step_hz = -0.05", "plan.step_hz", []string{"positive"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			text := strings.Replace(DemoText(), tc.old, tc.new, 1)
			if text == DemoText() {
				t.Fatalf("the demo has no %q to change", tc.old)
			}
			_, err := Parse("my.toml", text)
			var ke *KeyError
			if !errors.As(err, &ke) || !errors.Is(err, ErrRig) {
				t.Fatalf("error %v is not a KeyError", err)
			}
			short := tc.key[strings.LastIndexByte(tc.key, '.')+1:]
			want := lineOf(text, short)
			if tc.name == "bad duration" || tc.name == "bad harmonic" {
				want = ke.Line // the decoder reports these; the key is what matters
			}
			if ke.Key != tc.key || ke.Line != want || ke.Line == 0 {
				t.Errorf("key %q line %d, want %q line %d (%v)", ke.Key, ke.Line, tc.key, want, err)
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("%q lacks %q", err, w)
				}
			}
		})
	}
}

// FuzzParse: any text gives a rig or an error, never a panic.
func FuzzParse(f *testing.F) {
	f.Add(DemoText())
	f.Add("source = \"sim\"\n[plan]\nstart_hz = 1\n")
	f.Add("[sim]\nq = -1\n")
	f.Fuzz(func(t *testing.T, s string) {
		rf, err := Parse("fuzz", s)
		if err == nil && rf == nil {
			t.Fatal("nil rig without an error")
		}
	})
}

// A bad value in the [sim] table names its key and line.
func TestSimValueErrorNamesKey(t *testing.T) {
	text := strings.Replace(DemoText(), "q = 60.0 ", "q = 0.1 ", 1)
	if text == DemoText() {
		t.Fatal("the demo has no q line to change")
	}
	_, err := Parse("my.toml", text)
	var ke *KeyError
	if !errors.As(err, &ke) || ke.Key != "sim.q" || ke.Line == 0 {
		t.Fatalf("got %v, want a KeyError for sim.q with its line", err)
	}
}
