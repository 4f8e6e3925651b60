package serialadc

import (
	"encoding/binary"
	"math"
	"reflect"
	"testing"
)

// validPackets is an independent oracle for the binary format: it tries
// every offset of data, keeps each span that is a well-formed packet whose
// CRC (computed bit by bit with CRC16) matches, and returns their frames in
// order of offset. Packets may overlap; the decoder can only deliver a
// subsequence of this list.
func validPackets(data []byte, channels int) [][]float64 {
	var out [][]float64
	for i := 0; i+HeaderLen+2 <= len(data); i++ {
		if data[i] != Sync0 || data[i+1] != Sync1 {
			continue
		}
		nch, w, nfr := int(data[i+4]), int(data[i+5]), int(data[i+6])
		if nch != channels || (w != 2 && w != 4) || nfr < 1 || nch*w*nfr > MaxPayload {
			continue
		}
		end := i + HeaderLen + nch*w*nfr + 2
		if end > len(data) || CRC16(data[i+2:end-2]) != binary.LittleEndian.Uint16(data[end-2:]) {
			continue
		}
		body := data[i+HeaderLen : end-2]
		for k := 0; k < nch*nfr; k += nch {
			fr := make([]float64, nch)
			for c := range nch {
				if w == 2 {
					fr[c] = float64(int16(binary.LittleEndian.Uint16(body[2*(k+c):])))
				} else {
					fr[c] = float64(int32(binary.LittleEndian.Uint32(body[4*(k+c):])))
				}
			}
			out = append(out, fr)
		}
	}
	return out
}

// FuzzBinary: the decoder must not panic, must deliver the same frames
// however the input is split, and must deliver only frames of packets that
// pass the CRC (a subsequence of the oracle's frames).
func FuzzBinary(f *testing.F) {
	f.Add([]byte{Sync0, Sync1, 0, 0, 2, 2, 1, 1, 0, 2, 0, 0, 0})
	f.Fuzz(func(t *testing.T, data []byte) {
		decode := func(split int) ([]gotFrame, DecodeStats) {
			var col collector
			d, err := NewBinaryDecoder(2, &col)
			if err != nil {
				t.Fatal(err)
			}
			d.Write(data[:split])
			d.Write(data[split:])
			return col.frames, d.Stats()
		}
		whole, ws := decode(len(data))
		if ws.Bytes != uint64(len(data)) || ws.Frames != uint64(len(whole)) {
			t.Fatalf("stats %+v for %d bytes, %d frames", ws, len(data), len(whole))
		}
		split := 0
		if len(data) > 0 {
			split = int(data[0]) % (len(data) + 1)
		}
		if parts, ps := decode(split); !reflect.DeepEqual(parts, whole) || ps != ws {
			t.Fatalf("split at %d changes the result: %d vs %d frames", split, len(parts), len(whole))
		}
		oracle := validPackets(data, 2)
		k := 0
		for _, fr := range whole {
			for k < len(oracle) && !reflect.DeepEqual(oracle[k], fr.vals) {
				k++
			}
			if k == len(oracle) {
				t.Fatalf("delivered frame %v is not in a packet with a good CRC", fr.vals)
			}
			k++
		}
	})
}

// FuzzText: the decoder must not panic, must give the same result however
// the input is split, and every delivered frame must have one value per
// channel, counts within range (or finite volts) and, with timestamps, a
// time that grows strictly. The first byte picks the options.
func FuzzText(f *testing.F) {
	f.Add([]byte("\x00t_us,resp,ref\n1000,1,2\n1100,3,4\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) == 0 {
			return
		}
		mode, in := data[0], data[1:]
		opt := TextOptions{
			Channels:   []string{"resp", "ref"},
			Timestamps: mode&1 != 0,
			Volts:      mode&2 != 0,
			CountsMin:  -512,
			CountsMax:  511,
		}
		if mode&4 != 0 {
			opt.IntervalUS = 100
		}
		decode := func(split int) ([]gotFrame, DecodeStats) {
			var col collector
			d, err := NewTextDecoder(opt, &col)
			if err != nil {
				t.Fatal(err)
			}
			d.Write(in[:split])
			d.Write(in[split:])
			return col.frames, d.Stats()
		}
		whole, ws := decode(len(in))
		split := int(mode>>3) % (len(in) + 1)
		if parts, ps := decode(split); !reflect.DeepEqual(parts, whole) || ps != ws {
			t.Fatalf("split at %d changes the result", split)
		}
		if ws.Frames != uint64(len(whole)) {
			t.Fatalf("Frames %d, delivered %d", ws.Frames, len(whole))
		}
		for i, fr := range whole {
			if len(fr.vals) != 2 || fr.hasTime != opt.Timestamps {
				t.Fatalf("frame %d: %+v", i, fr)
			}
			for _, v := range fr.vals {
				if opt.Volts && (math.IsNaN(v) || math.IsInf(v, 0)) {
					t.Fatalf("frame %d: value %v", i, v)
				}
				if !opt.Volts && (v != math.Trunc(v) || v < -512 || v > 511) {
					t.Fatalf("frame %d: count %v outside -512..511", i, v)
				}
			}
			if opt.Timestamps && i > 0 && fr.us <= whole[i-1].us {
				t.Fatalf("frame %d: time %d after %d", i, fr.us, whole[i-1].us)
			}
		}
	})
}
