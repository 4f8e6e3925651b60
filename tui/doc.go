// Package tui is the live bench screen: it shows what the bench is doing
// (source health, drive, response, harmonics, settle state, the sweep so
// far as a chart, a small view of the signal, messages) and turns key
// presses into the bench's intents (step, set, log, sweep, quit).
//
// It renders state and sends intents; it never blocks. Everything it shows
// comes from the acquire.Snapshot the bench hands it at display rate
// through a one-slot latest-value channel, read by a re-armed command. It
// never touches a device, a file or the measurement itself, and it works
// without colour (NO_COLOR): every state is carried by words and markers,
// colour only repeats them.
package tui
