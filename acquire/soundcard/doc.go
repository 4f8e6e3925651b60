// Package soundcard drives a resonator from a sound card output and reads its
// sensor from the same card's inputs, through PortAudio.
//
// One full-duplex stream carries both directions, so the drive's output
// frames and the sensor's input frames are counted by the same clock. Each
// audio callback makes the drive (a phase-continuous sine from a phase
// accumulator in cycles, as a DDS generator has), writes it to the chosen
// output channels, and copies the chosen input channels — the response and,
// optionally, a reference — into a pooled acquire.Block together with the
// generator's phase at each frame (Block.PhaseCyc).
//
// # Phase, delay and the reference channel
//
// Input frame i and output frame i of one callback are simultaneous in the
// card's clock up to a constant delay: the output is played some
// milliseconds after it is made, and the input was sampled some milliseconds
// before it is handed over. Sound card inputs are also AC-coupled (a
// high-pass of a few hertz). Both effects are removed by measuring the
// response as a ratio to the reference input channel, which carries the
// drive itself (wire the second output channel, or a tap of the amplifier
// output, to the second input): delay and coupling act alike on both inputs
// and cancel in the ratio. The runner takes that ratio; this package only
// delivers both channels. Without a reference, the phase read against
// PhaseCyc includes the card's delay (Card.Latency reports PortAudio's
// estimate of it) and the amplitude the input's coupling loss.
//
// # No DC
//
// Sound card outputs are AC-coupled and cannot hold a DC level. The drive
// has no DC term: the generator makes a zero-mean sine whose amplitude moves
// only along smooth ramps, so no step reaches the coupling capacitor, and a
// DC offset request (Config.OffsetV, Drive.SetOffset) is refused.
//
// # Safety
//
// Every amplitude change is a raised-cosine ramp over Config.Ramp; a request
// above Config.MaxLevel is refused with acquire.ErrDriveLimit and the
// generator clamps at it as well; Off, Close, the end of the Start context
// and every other stop ramp the drive to zero before the stream stops, and
// wait for the ramp to be played.
//
// # What it must never do
//
// The audio callback never blocks, locks, logs or allocates: setpoints
// reach it through atomics, blocks come from a pool and go out by a
// non-blocking send, and a block the consumer has no room for is dropped,
// counted, and the next delivered block is marked acquire.FlagGap. Sound
// card trouble that PortAudio reports (input overflow, output underflow)
// also marks FlagGap.
//
// # When the device goes away
//
// If callbacks stop arriving (the sound server was killed, a USB card was
// pulled), the source reports and exits: Stats().Connected turns false,
// Err() says what happened in plain words (wrapping acquire.ErrDisconnected)
// and the Blocks channel is closed. It does not wait for the device to come
// back; open the card again.
//
// # Build tag
//
// The PortAudio code is built only with the build tag portaudio (it needs
// cgo and the PortAudio headers: apt-get install portaudio19-dev, then go
// build -tags portaudio ./cmd/sweeplock). Without the tag the package still
// builds, Config and its checks work, and Open and ListDevices return
// ErrNotBuilt.
package soundcard
