package serialadc

import (
	"bytes"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

// pkt builds a packet or fails the test.
func pkt(t testing.TB, seq uint16, channels, width int, samples ...int32) []byte {
	t.Helper()
	p, err := AppendPacket(nil, seq, channels, width, samples)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func cat(parts ...[]byte) []byte { return bytes.Join(parts, nil) }

func frames(vals ...[]float64) []gotFrame {
	out := make([]gotFrame, len(vals))
	for i, v := range vals {
		out[i] = gotFrame{vals: v}
	}
	return out
}

// TestAppendPacketLayout checks the byte layout written down in the package
// documentation, field by field, for one 2-channel 16-bit frame.
func TestAppendPacketLayout(t *testing.T) {
	p := pkt(t, 0x1234, 2, 2, 1000, -2)
	head := []byte{0xA5, 0x5A, 0x34, 0x12, 2, 2, 1, 0xE8, 0x03, 0xFE, 0xFF}
	if !bytes.Equal(p[:len(head)], head) {
		t.Fatalf("packet starts % x, want % x", p[:len(head)], head)
	}
	crc := CRC16(head[2:])
	if got := uint16(p[11]) | uint16(p[12])<<8; got != crc || len(p) != 13 {
		t.Fatalf("crc field %#04x (len %d), want %#04x low byte first (len 13)", got, len(p), crc)
	}
}

func TestAppendPacketRejects(t *testing.T) {
	cases := []struct {
		name          string
		channels, w   int
		samples       []int32
		wantSubstring string
	}{
		{"no channels", 0, 2, []int32{1}, "channels"},
		{"too many channels", 17, 2, make([]int32, 17), "channels"},
		{"width 3", 1, 3, []int32{1}, "width"},
		{"partial frame", 2, 2, []int32{1, 2, 3}, "whole number"},
		{"too many frames", 1, 2, make([]int32, 256), "at most"},
		{"payload too big", 16, 4, make([]int32, 16*65), "at most"},
		{"sample beyond 16 bits", 1, 2, []int32{40000}, "16 bits"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dst := []byte{1, 2}
			out, err := AppendPacket(dst, 0, c.channels, c.w, c.samples)
			if err == nil || !bytes.Contains([]byte(err.Error()), []byte(c.wantSubstring)) {
				t.Fatalf("err = %v, want one mentioning %q", err, c.wantSubstring)
			}
			if !bytes.Equal(out, dst) {
				t.Fatalf("dst changed to % x", out)
			}
		})
	}
}

func TestBinaryDecoder(t *testing.T) {
	noA5 := func(n int, seed uint64) []byte {
		rng := rand.New(rand.NewPCG(seed, 9))
		b := make([]byte, n)
		for i := range b {
			for b[i] = byte(rng.IntN(256)); b[i] == Sync0; b[i] = byte(rng.IntN(256)) {
			}
		}
		return b
	}
	good0 := pkt(t, 0, 2, 2, 100, -200)
	good1 := pkt(t, 1, 2, 2, 101, -201)
	good2 := pkt(t, 2, 2, 2, 102, -202)
	flip := func(p []byte, at int) []byte {
		q := append([]byte(nil), p...)
		q[at] ^= 0x01
		return q
	}
	falseHdr := []byte{Sync0, Sync1, 0, 0, 2, 2, 5} // claims 20 payload bytes
	cases := []struct {
		name   string
		stream []byte
		want   []gotFrame
		stats  DecodeStats // Bytes and Frames are filled in by the test
	}{
		{"one packet", good0, frames([]float64{100, -200}), DecodeStats{}},
		{"several frames, 32-bit extremes",
			pkt(t, 7, 2, 4, math.MinInt32, math.MaxInt32, -1, 0),
			frames([]float64{math.MinInt32, math.MaxInt32}, []float64{-1, 0}), DecodeStats{}},
		{"sequence wraps at 65536 without a gap",
			cat(pkt(t, 65534, 2, 2, 1, 2, 3, 4), pkt(t, 0, 2, 2, 5, 6)),
			frames([]float64{1, 2}, []float64{3, 4}, []float64{5, 6}), DecodeStats{}},
		{"sequence gap counts the lost frames",
			cat(pkt(t, 0, 2, 2, 1, 2, 3, 4, 5, 6), pkt(t, 10, 2, 2, 7, 8)),
			[]gotFrame{{vals: []float64{1, 2}}, {vals: []float64{3, 4}}, {vals: []float64{5, 6}}, {vals: []float64{7, 8}, gap: true, lost: 7}},
			DecodeStats{SeqGaps: 1, LostFrames: 7}},
		{"sequence going back is a restart with unknown loss",
			cat(pkt(t, 1000, 2, 2, 1, 2), pkt(t, 5, 2, 2, 3, 4)),
			[]gotFrame{{vals: []float64{1, 2}}, {vals: []float64{3, 4}, gap: true}},
			DecodeStats{SeqGaps: 1}},
		{"garbage before and between packets",
			cat(noA5(37, 1), good0, noA5(5, 2), good1, noA5(3, 3)),
			frames([]float64{100, -200}, []float64{101, -201}), DecodeStats{Garbage: 45}},
		{"payload byte corrupted: packet dropped, next one marks the gap",
			cat(good0, flip(good1, 8), good2),
			[]gotFrame{{vals: []float64{100, -200}}, {vals: []float64{102, -202}, gap: true, lost: 1}},
			DecodeStats{CRCErrors: 1, Garbage: uint64(len(good1)), SeqGaps: 1, LostFrames: 1}},
		{"CRC field corrupted",
			cat(good0, flip(good1, len(good1)-1), good2),
			[]gotFrame{{vals: []float64{100, -200}}, {vals: []float64{102, -202}, gap: true, lost: 1}},
			DecodeStats{CRCErrors: 1, Garbage: uint64(len(good1)), SeqGaps: 1, LostFrames: 1}},
		{"false sync word with a plausible header is rescanned",
			cat(falseHdr, good0, good1, good2),
			frames([]float64{100, -200}, []float64{101, -201}, []float64{102, -202}),
			DecodeStats{CRCErrors: 1, Garbage: uint64(len(falseHdr))}},
		{"impossible header fields",
			cat([]byte{Sync0, Sync1, 0, 0, 2, 3, 1}, good0),
			frames([]float64{100, -200}), DecodeStats{BadHeaders: 1, Garbage: 7}},
		{"sync first byte without second",
			cat([]byte{Sync0, 0x00, Sync0}, good0),
			frames([]float64{100, -200}), DecodeStats{Garbage: 3}},
		{"another channel count is dropped and marks a gap",
			cat(good0, pkt(t, 1, 3, 2, 1, 2, 3), good2),
			[]gotFrame{{vals: []float64{100, -200}}, {vals: []float64{102, -202}, gap: true}},
			DecodeStats{ChannelMismatch: 1}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var col collector
			d, err := NewBinaryDecoder(2, &col)
			if err != nil {
				t.Fatal(err)
			}
			n, err := d.Write(c.stream)
			if n != len(c.stream) || err != nil {
				t.Fatalf("Write = %d, %v", n, err)
			}
			if !reflect.DeepEqual(col.frames, c.want) {
				t.Errorf("frames\n got %+v\nwant %+v", col.frames, c.want)
			}
			want := c.stats
			want.Bytes = uint64(len(c.stream))
			want.Frames = uint64(len(c.want))
			if got := d.Stats(); got != want {
				t.Errorf("stats\n got %+v\nwant %+v", got, want)
			}
		})
	}
}

// TestBinaryDecoderPieces: how the bytes are cut into Writes must not
// change what is decoded (one Write, single bytes, random pieces).
func TestBinaryDecoderPieces(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	var stream []byte
	for seq := range 400 {
		if rng.IntN(5) == 0 {
			g := make([]byte, rng.IntN(30))
			for i := range g {
				g[i] = byte(rng.IntN(256))
			}
			stream = append(stream, g...)
		}
		nfr := 1 + rng.IntN(8)
		s := make([]int32, 3*nfr)
		for i := range s {
			s[i] = int32(rng.IntN(1<<16) - 1<<15)
		}
		p := pkt(t, uint16(seq*8), 3, 2, s...)
		if rng.IntN(10) == 0 {
			p[HeaderLen+rng.IntN(len(p)-HeaderLen)] ^= byte(1 + rng.IntN(255))
		}
		stream = append(stream, p...)
	}
	decode := func(cut func(rest int) int) ([]gotFrame, DecodeStats) {
		var col collector
		d, err := NewBinaryDecoder(3, &col)
		if err != nil {
			t.Fatal(err)
		}
		for rest := stream; len(rest) > 0; {
			k := min(cut(len(rest)), len(rest))
			d.Write(rest[:k])
			rest = rest[k:]
		}
		return col.frames, d.Stats()
	}
	whole, wholeStats := decode(func(rest int) int { return rest })
	if len(whole) == 0 || wholeStats.CRCErrors == 0 {
		t.Fatalf("test stream too tame: %d frames, stats %+v", len(whole), wholeStats)
	}
	for name, cut := range map[string]func(int) int{
		"single bytes":  func(int) int { return 1 },
		"random pieces": func(int) int { return 1 + rng.IntN(3*MaxPacket) },
	} {
		got, st := decode(cut)
		if !reflect.DeepEqual(got, whole) || st != wholeStats {
			t.Errorf("%s: %d frames (stats %+v), whole stream %d frames (stats %+v)", name, len(got), st, len(whole), wholeStats)
		}
	}
}

// TestBinaryDecoderAllocs: steady-state decoding allocates nothing (STYLE §9, §15).
func TestBinaryDecoderAllocs(t *testing.T) {
	var stream []byte
	for seq := range 64 {
		stream = append(stream, pkt(t, uint16(seq*16), 4, 2, make([]int32, 64)...)...)
	}
	d, err := NewBinaryDecoder(4, FrameSinkFunc(func(*Frame) {}))
	if err != nil {
		t.Fatal(err)
	}
	d.Write(stream)
	d.Reset()
	if a := testing.AllocsPerRun(20, func() { d.Reset(); d.Write(stream) }); a != 0 {
		t.Errorf("%v allocations per Write, want 0", a)
	}
}
