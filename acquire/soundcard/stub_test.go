//go:build !portaudio

package soundcard

import (
	"errors"
	"strings"
	"testing"
)

// TestNotBuilt checks that a binary built without the portaudio tag says
// so plainly and says how to build it with sound card support.
func TestNotBuilt(t *testing.T) {
	c, err := Open(DefaultConfig(), Options{})
	if c != nil || !errors.Is(err, ErrNotBuilt) {
		t.Fatalf("Open = %v, %v; want nil, ErrNotBuilt", c, err)
	}
	for _, want := range []string{"built without sound card support", "apt-get install portaudio19-dev", "go build -tags portaudio ./cmd/sweeplock"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("message %q lacks %q", err, want)
		}
	}
	if d, err := ListDevices(); d != nil || !errors.Is(err, ErrNotBuilt) {
		t.Fatalf("ListDevices = %v, %v; want nil, ErrNotBuilt", d, err)
	}
}
