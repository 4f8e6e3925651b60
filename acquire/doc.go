// Package acquire holds everything that touches the bench or stands in for
// it: sources of samples (the simulated rig, a serial ADC, a sound card, a
// replayed recording), drives (the sound card output, the simulated coil
// driver, a person at a generator), the stepped-sweep runner and the
// recorder that writes each logged point to disk.
//
// Data flows one way: a Source hands out Blocks of samples; the runner turns
// them into measurements with package dsp and its subpackages, decides with
// the settle detector when a point may be logged, and hands each logged point
// to the recorder and to whoever watches (the screen or the headless sweep).
//
// acquire may import dsp; dsp must never import acquire. Nothing here draws
// on a screen.
package acquire
