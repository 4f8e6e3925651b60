package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Without the portaudio build tag (TestMain builds the binary without it,
// whatever tags the test runs with), the sound card commands say how to
// get sound card support and exit 1; a rig that is not a sound card rig
// is a mistake in the call (exit 2).
func TestSoundcardNotBuilt(t *testing.T) {
	dir := t.TempDir()
	example, err := filepath.Abs(filepath.Join("..", "..", "testdata", "soundcard-example.toml"))
	if err != nil {
		t.Fatal(err)
	}
	rigPath := filepath.Join(dir, "card.toml")
	b, err := os.ReadFile(example)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(rigPath, b, 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		args []string
		code int
		want []string
	}{
		{"calibrate", []string{"calibrate", "--rig", rigPath}, 1, []string{"built without sound card support", "go build -tags portaudio"}},
		{"sweep", []string{"sweep", "--rig", rigPath, "--out", "run.csv"}, 1, []string{"built without sound card support", "portaudio19-dev"}},
		{"calibrate a sim rig", []string{"calibrate", "--rig", "demo"}, 2, []string{`source = "sim"`, "sound card"}},
		{"calibrate with no rig", []string{"calibrate"}, 2, []string{"--rig"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errOut := runBin(t, dir, tc.args...)
			if code != tc.code {
				t.Errorf("exit %d, want %d\n%s\n%s", code, tc.code, out, errOut)
			}
			for _, w := range tc.want {
				if !strings.Contains(errOut, w) {
					t.Errorf("stderr lacks %q:\n%s", w, errOut)
				}
			}
		})
	}
	if _, err := os.Stat(filepath.Join(dir, "card-card-cal.json")); err == nil {
		t.Error("a calibration file was written without a card")
	}
}
