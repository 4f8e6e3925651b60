// Package pathtest holds end-to-end tests of the sound card through real
// PulseAudio sound paths that need no sound card: a filter with a
// published response between two null sinks, and the sound server killed
// under a running sweep of the real binary.
//
// The tests are built only with the build tag portaudio and need the
// Debian packages portaudio19-dev, pulseaudio, pulseaudio-utils and sox;
// each starts its own private PulseAudio daemon (its own XDG_RUNTIME_DIR
// and HOME) and stops it when it ends, so they touch no other sound setup
// and play nothing through a speaker. Without the programs they skip,
// unless SWEEPLOCK_AUDIO=1 (as .ci/soundcard sets), when they fail.
//
// The package has no code of its own; it must never be imported.
package pathtest
