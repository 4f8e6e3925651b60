//go:build !portaudio

package soundcard

// Open would open the sound card; this binary was built without the
// portaudio build tag, so it returns ErrNotBuilt.
func Open(cfg Config, opt Options) (*Card, error) {
	return nil, ErrNotBuilt
}

// ListDevices would list the sound devices; this binary was built without
// the portaudio build tag, so it returns ErrNotBuilt.
func ListDevices() ([]Device, error) {
	return nil, ErrNotBuilt
}
