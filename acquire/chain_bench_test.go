package acquire

import (
	"context"
	"math"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/dsp/lockin"
)

type fakeSource struct{ info SourceInfo }

func (f *fakeSource) Info() SourceInfo            { return f.info }
func (f *fakeSource) Start(context.Context) error { return nil }
func (f *fakeSource) Blocks() <-chan *Block       { return nil }
func (f *fakeSource) Release(*Block)              {}
func (f *fakeSource) Stats() SourceStats          { return SourceStats{Connected: true} }
func (f *fakeSource) Err() error                  { return nil }
func (f *fakeSource) Close() error                { return nil }
func (f *fakeDrive) Info() DriveInfo {
	return DriveInfo{Kind: "fake", Unit: "V", MaxAmp: 1, Coherent: true}
}
func (f *fakeDrive) Set(freqHz, amp float64) error { f.f, f.a = freqHz, amp; return nil }
func (f *fakeDrive) Off(ctx context.Context) error { f.a = 0; return nil }
func (f *fakeDrive) Amp() float64                  { return f.a }

type fakeDrive struct{ f, a float64 }

// BenchmarkChain is the whole per-sample chain of the bench on a 192 kHz
// stereo stream (response and reference) with five harmonics (1, 2, 3, 5
// and 1/2): calibration, the settle lock-in and detector, the live
// rings the screen's views are drawn from, and the limit check. The screen's
// snapshot (live harmonics, spectrum, wave) is display-rate work, timed
// apart in BenchmarkSnapshot.
// It reports ns per frame and the real-time factor (frames per second
// processed over the sample rate).
func BenchmarkChain(b *testing.B) {
	for _, rate := range []float64{48000, 192000} {
		b.Run(map[float64]string{48000: "48kHz-stereo", 192000: "192kHz-stereo"}[rate], func(b *testing.B) {
			src := &fakeSource{SourceInfo{Kind: "fake", RateHz: rate, Channels: []string{"resp", "ref"}}}
			drv := &fakeDrive{}
			cfg := BenchConfig{
				Harmonics: []lockin.Harmonic{{Num: 1, Den: 1}, {Num: 2, Den: 1}, {Num: 3, Den: 1}, {Num: 5, Den: 1}, {Num: 1, Den: 2}},
				Response:  0, Reference: 1, RefVoltsPerDrive: 1, VoltsPerUnit: 1, Unit: "V",
				Plan:     Plan{StartHz: 1000, StopHz: 1100, StepHz: 10, Direction: Up, MaxDwell: time.Minute, MeasureCycles: 20, SettleTol: 0.002},
				DriveAmp: 0.5, SettleCycles: 4,
			}
			bench, err := NewBench(src, drv, cfg)
			if err != nil {
				b.Fatal(err)
			}
			bench.setDrive(1000, 0.5, true)
			const frames = 2048
			blk := &Block{RateHz: rate, Channels: 2, Frames: frames, Data: make([]float64, 2*frames), PhaseCyc: make([]float64, frames)}
			ph := 0.0
			fill := func(seq uint64) {
				blk.Seq, blk.StartS = seq, float64(seq)*frames/rate
				blk.DriveHz, blk.DriveAmp = drv.f, drv.a
				for i := 0; i < frames; i++ {
					blk.PhaseCyc[i] = ph
					c := math.Cos(2 * math.Pi * ph)
					blk.Data[2*i] = 0.3*c + 0.003*math.Cos(6*math.Pi*ph)
					blk.Data[2*i+1] = 0.5 * c
					ph += drv.f / rate
				}
			}
			// Settle first, so the steady chain is what is timed.
			for s := uint64(0); s < 200; s++ {
				fill(s)
				bench.onBlock(blk)
			}
			fill(200)
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				bench.onBlock(blk)
			}
			perFrame := float64(b.Elapsed().Nanoseconds()) / float64(b.N*frames)
			b.ReportMetric(perFrame, "ns/frame")
			b.ReportMetric(1e9/perFrame/rate, "x-realtime")
		})
	}
}

// BenchmarkSnapshot times one snapshot for the screen at 192 kHz: the live
// harmonic readout over the newest whole block, a 4096-point spectrum and
// the wave view. It is made at most 25 times a second, whatever the rate.
func BenchmarkSnapshot(b *testing.B) {
	src := &fakeSource{SourceInfo{Kind: "fake", RateHz: 192000, Channels: []string{"resp"}}}
	drv := &fakeDrive{}
	bench, err := NewBench(src, drv, BenchConfig{Harmonics: []lockin.Harmonic{{Num: 1, Den: 1}, {Num: 2, Den: 1}, {Num: 3, Den: 1}, {Num: 5, Den: 1}, {Num: 1, Den: 2}},
		Reference: -1, VoltsPerUnit: 1, Unit: "V", DriveAmp: 0.5, SettleCycles: 4,
		Plan: Plan{StartHz: 1000, StopHz: 1100, StepHz: 10, Direction: Up, MaxDwell: time.Minute, MeasureCycles: 20, SettleTol: 0.002}})
	if err != nil {
		b.Fatal(err)
	}
	bench.setDrive(1000, 0.5, true)
	const frames = 4096
	blk := &Block{RateHz: 192000, Channels: 1, Frames: frames, Data: make([]float64, frames), PhaseCyc: make([]float64, frames), DriveHz: 1000, DriveAmp: 0.5}
	for s := 0; s < 40; s++ {
		for i := range blk.PhaseCyc {
			ph := float64(s*frames+i) * 1000 / 192000
			blk.PhaseCyc[i], blk.Data[i] = ph, 0.3*math.Cos(2*math.Pi*ph)
		}
		blk.StartS = float64(s*frames) / 192000
		bench.onBlock(blk)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		_ = bench.snapshot()
	}
}
