//go:build portaudio

package pathtest

import (
	"strings"
	"testing"
)

// TestDevicesListsPulse runs `sweeplock devices` (built with -tags
// portaudio) against a private PulseAudio daemon: PortAudio reaches
// PulseAudio through ALSA's pulse plugin, so the list must hold the
// plugin's device "pulse" and the ALSA default that .asoundrc points at
// it, marked as the default for input and output, accepting 48 kHz.
func TestDevicesListsPulse(t *testing.T) {
	d := startDaemon(t, oneSink, false)
	code, out, errOut := runBinary(t, d, t.TempDir(), "devices")
	t.Logf("exit %d\n%s", code, out)
	if code != 0 {
		t.Fatalf("exit %d:\n%s\n%s", code, out, quiet(errOut))
	}
	_, sound, ok := strings.Cut(out, "Sound devices:")
	if !ok {
		t.Fatalf("no sound device list:\n%s", out)
	}
	var pulse, def bool
	for _, l := range strings.Split(sound, "\n") {
		f := strings.Fields(l)
		if len(f) < 2 || !strings.Contains(l, "ALSA") || !strings.Contains(l, "48k") {
			continue
		}
		switch {
		case f[1] == "pulse":
			pulse = true
		case f[1] == "default" && strings.Contains(l, "(default in+out)"):
			def = true
		}
	}
	if !pulse || !def {
		t.Errorf("the list lacks the pulse device (%v) or the default marked in+out (%v), each on ALSA at 48 kHz:\n%s", pulse, def, sound)
	}
}
