//go:build !race

package serialadc_test

// raceDetector is true in a build with the race detector.
const raceDetector = false
