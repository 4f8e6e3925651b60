package serialadc

import (
	"context"
	"testing"
)

// The benchmarks report samples per second (frames × channels) decoded from
// a buffer: the target is 4 MS/s, 100× a 10 kS/s × 4-channel device.

func BenchmarkBinaryDecode(b *testing.B) {
	for _, c := range []struct {
		name          string
		width, frames int
	}{{"16bit-1frame", 2, 1}, {"16bit-32frames", 2, 32}, {"32bit-32frames", 4, 32}} {
		b.Run(c.name, func(b *testing.B) {
			const nch = 4
			var stream []byte
			s := make([]int32, nch*c.frames)
			nfr := 0
			for seq := 0; len(stream) < 1<<16; seq += c.frames {
				for i := range s {
					s[i] = int32((seq*7 + i) % 1024)
				}
				var err error
				stream, err = AppendPacket(stream, uint16(seq), nch, c.width, s)
				if err != nil {
					b.Fatal(err)
				}
				nfr += c.frames
			}
			d, err := NewBinaryDecoder(nch, FrameSinkFunc(func(*Frame) {}))
			if err != nil {
				b.Fatal(err)
			}
			b.SetBytes(int64(len(stream)))
			b.ReportAllocs()
			b.ResetTimer()
			for range b.N {
				d.Reset()
				d.Write(stream)
			}
			b.ReportMetric(float64(nfr*nch)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
		})
	}
}

func BenchmarkTextDecode(b *testing.B) {
	for _, c := range []struct {
		name string
		ts   bool
	}{{"4ch", false}, {"4ch-timestamps", true}} {
		b.Run(c.name, func(b *testing.B) {
			opt := TextOptions{Channels: []string{"a", "b", "c", "d"}, Timestamps: c.ts, CountsMin: 0, CountsMax: 1023}
			if c.ts {
				opt.IntervalUS = 100
			}
			var stream []byte
			nfr := 0
			for i := 0; len(stream) < 1<<16; i++ {
				stream = AppendLine(stream, uint32(i*100), c.ts, []int64{int64(i % 1024), int64(i * 3 % 1024), int64(i * 7 % 1024), 512})
				nfr++
			}
			d, err := NewTextDecoder(opt, FrameSinkFunc(func(*Frame) {}))
			if err != nil {
				b.Fatal(err)
			}
			b.SetBytes(int64(len(stream)))
			b.ReportAllocs()
			b.ResetTimer()
			for range b.N {
				d.Reset()
				d.Write(stream)
			}
			b.ReportMetric(float64(nfr*4)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
		})
	}
}

// BenchmarkSourcePath measures decode + calibration + block building +
// hand-off, everything the reader goroutine does after a read, with a
// consumer that releases each block at once.
func BenchmarkSourcePath(b *testing.B) {
	cfg := ptyConfig("/dev/null", FormatBinary)
	cfg.Channels = []string{"a", "b", "c", "d"}
	cfg.Calibration = map[string]Calibration{
		"a": {Gain: gain}, "b": {Gain: gain}, "c": {Gain: gain},
		"d": {Table: []CalPoint{{0, 0}, {300, 1.4}, {700, 3.5}, {1023, 5}}},
	}
	cfg.Reference = ""
	cfg.BlockFrames = 256
	src, err := New(cfg)
	if err != nil {
		b.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go func() {
		for {
			select {
			case blk := <-src.blocks:
				src.Release(blk)
			case <-ctx.Done():
				return
			}
		}
	}()
	var stream []byte
	s := make([]int32, 4*32)
	nfr := 0
	for seq := 0; len(stream) < 1<<16; seq += 32 {
		for i := range s {
			s[i] = int32((seq*5 + i) % 1024)
		}
		stream, err = AppendPacket(stream, uint16(seq), 4, 2, s)
		if err != nil {
			b.Fatal(err)
		}
		nfr += 32
	}
	b.SetBytes(int64(len(stream)))
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		src.dec.Write(stream)
	}
	b.ReportMetric(float64(nfr*4)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
}

func BenchmarkCRC16(b *testing.B) {
	p := make([]byte, 4096)
	for i := range p {
		p[i] = byte(i * 31)
	}
	tab := newCRCTable()
	var sum uint16 // keeps the compiler from dropping the unused results
	b.Run("table", func(b *testing.B) {
		b.SetBytes(int64(len(p)))
		for range b.N {
			p[0]++
			sum += tab.checksum(p)
		}
	})
	b.Run("bitwise", func(b *testing.B) {
		b.SetBytes(int64(len(p)))
		for range b.N {
			p[0]++
			sum += CRC16(p)
		}
	})
	if sum == 1 {
		b.Log(sum)
	}
}
