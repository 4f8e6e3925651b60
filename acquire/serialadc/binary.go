package serialadc

import (
	"bytes"
	"encoding/binary"
	"fmt"
)

// Binary packet layout; see the package documentation.
const (
	Sync0       = 0xA5 // first byte of the sync word
	Sync1       = 0x5A // second byte of the sync word
	HeaderLen   = 7    // sync(2) seq(2) channels(1) width(1) frames(1)
	MaxChannels = 16   // most channels a frame may carry
	MaxFrames   = 255  // most frames one packet may carry
	MaxPayload  = 4096 // most sample bytes one packet may carry
	// MaxPacket is the longest packet: header, payload and CRC.
	MaxPacket = HeaderLen + MaxPayload + 2
)

// binBufSize is the decoder's buffer: two packets, so every refill after a
// scan adds at least one packet's worth of bytes.
const binBufSize = 2 * MaxPacket

// BinaryDecoder decodes the binary packet format. Feed it bytes with Write;
// it calls the sink once per frame of each packet that passes its CRC.
// It is not safe for concurrent use.
type BinaryDecoder struct {
	channels int
	sink     FrameSink
	table    *crcTable

	buf [binBufSize]byte
	n   int

	haveSeq bool
	nextSeq uint16
	gapNext bool

	vals  []float64
	frame Frame

	stats   DecodeStats
	trouble Trouble
	// lastChannels is the channel count of the latest mismatched packet.
	lastChannels int
}

// NewBinaryDecoder returns a decoder for packets of the given number of
// channels (1..MaxChannels) that hands good frames to sink.
func NewBinaryDecoder(channels int, sink FrameSink) (*BinaryDecoder, error) {
	if channels < 1 || channels > MaxChannels {
		return nil, fmt.Errorf("serialadc: binary decoder for %d channels: allowed are 1 to %d", channels, MaxChannels)
	}
	if sink == nil {
		return nil, fmt.Errorf("serialadc: binary decoder needs a frame sink")
	}
	d := &BinaryDecoder{
		channels: channels,
		sink:     sink,
		table:    newCRCTable(),
		vals:     make([]float64, channels),
	}
	d.frame.Values = d.vals
	return d, nil
}

// Write feeds bytes in any pieces; it never fails and always returns
// len(p), nil. Frames are handed to the sink before it returns; an
// incomplete packet at the end waits for the next Write.
func (d *BinaryDecoder) Write(p []byte) (int, error) {
	total := len(p)
	d.stats.Bytes += uint64(total)
	for len(p) > 0 {
		k := copy(d.buf[d.n:], p)
		d.n += k
		p = p[k:]
		d.scan()
	}
	return total, nil
}

// Reset forgets buffered bytes and the sequence counter (as after a
// reconnect); counters are kept.
func (d *BinaryDecoder) Reset() {
	d.n = 0
	d.haveSeq = false
	d.gapNext = false
}

// Stats returns the counters.
func (d *BinaryDecoder) Stats() DecodeStats { return d.stats }

// Trouble returns the kind of the latest problem.
func (d *BinaryDecoder) Trouble() Trouble { return d.trouble }

// MismatchedChannels returns the channel count of the latest packet that
// had a good CRC but another channel count than the decoder's, 0 if none.
func (d *BinaryDecoder) MismatchedChannels() int { return d.lastChannels }

func (d *BinaryDecoder) garbage(n int) {
	if n > 0 {
		d.stats.Garbage += uint64(n)
		d.trouble = TroubleGarbage
	}
}

// scan decodes every complete packet in buf and keeps the unfinished tail.
// After it returns fewer than MaxPacket bytes remain.
func (d *BinaryDecoder) scan() {
	buf := d.buf[:d.n]
	n := len(buf)
	i := 0
	for i < n {
		k := bytes.IndexByte(buf[i:], Sync0)
		if k < 0 {
			d.garbage(n - i)
			i = n
			break
		}
		d.garbage(k)
		i += k
		if i+1 >= n {
			break // a lone first sync byte at the end: wait for more
		}
		if buf[i+1] != Sync1 {
			d.garbage(1)
			i++
			continue
		}
		if n-i < HeaderLen {
			break
		}
		nch := int(buf[i+4])
		width := int(buf[i+5])
		nfr := int(buf[i+6])
		payload := nch * width * nfr
		if nch < 1 || nch > MaxChannels || (width != 2 && width != 4) || nfr < 1 || payload > MaxPayload {
			d.stats.BadHeaders++
			d.garbage(1)
			i++
			continue
		}
		size := HeaderLen + payload + 2
		if n-i < size {
			break
		}
		pkt := buf[i : i+size]
		want := binary.LittleEndian.Uint16(pkt[size-2:])
		if d.table.checksum(pkt[2:size-2]) != want {
			d.stats.CRCErrors++
			d.trouble = TroubleCRC
			d.garbage(1)
			i++
			continue
		}
		d.accept(pkt, nch, width, nfr)
		i += size
	}
	d.n = copy(d.buf[:], buf[i:n])
}

// accept hands the frames of a packet that passed its CRC to the sink.
func (d *BinaryDecoder) accept(pkt []byte, nch, width, nfr int) {
	seq := binary.LittleEndian.Uint16(pkt[2:])
	gap := d.gapNext
	var lost int64
	if d.haveSeq && seq != d.nextSeq {
		d.stats.SeqGaps++
		d.trouble = TroubleSeqGap
		gap = true
		if diff := seq - d.nextSeq; diff < 1<<15 {
			lost = int64(diff)
			d.stats.LostFrames += uint64(diff)
		}
	}
	d.haveSeq = true
	d.nextSeq = seq + uint16(nfr)
	if nch != d.channels {
		d.stats.ChannelMismatch++
		d.trouble = TroubleChannels
		d.lastChannels = nch
		d.gapNext = true
		return
	}
	d.gapNext = false
	data := pkt[HeaderLen : len(pkt)-2]
	vals := d.vals[:nch]
	f := &d.frame
	for fr := range nfr {
		if width == 2 {
			row := data[fr*nch*2 : (fr+1)*nch*2]
			for c := range vals {
				vals[c] = float64(int16(binary.LittleEndian.Uint16(row[2*c:])))
			}
		} else {
			row := data[fr*nch*4 : (fr+1)*nch*4]
			for c := range vals {
				vals[c] = float64(int32(binary.LittleEndian.Uint32(row[4*c:])))
			}
		}
		f.Gap = gap && fr == 0
		if fr == 0 {
			f.Lost = lost
		} else {
			f.Lost = 0
		}
		d.stats.Frames++
		d.sink.Frame(f)
	}
}

// AppendPacket appends one binary packet to dst and returns the extended
// slice. samples holds frames·channels values, frame-major; width is 2
// (int16) or 4 (int32) bytes per sample. It returns an error, leaving dst as
// it was, when the sizes break the format's limits or a sample does not fit
// the width.
func AppendPacket(dst []byte, seq uint16, channels, width int, samples []int32) ([]byte, error) {
	if channels < 1 || channels > MaxChannels {
		return dst, fmt.Errorf("serialadc: packet with %d channels: allowed are 1 to %d", channels, MaxChannels)
	}
	if width != 2 && width != 4 {
		return dst, fmt.Errorf("serialadc: packet sample width %d: allowed are 2 and 4 bytes", width)
	}
	if len(samples) == 0 || len(samples)%channels != 0 {
		return dst, fmt.Errorf("serialadc: packet of %d samples is not a whole number of %d-channel frames", len(samples), channels)
	}
	frames := len(samples) / channels
	if frames > MaxFrames || len(samples)*width > MaxPayload {
		return dst, fmt.Errorf("serialadc: packet of %d frames × %d channels × %d bytes: at most %d frames and %d bytes", frames, channels, width, MaxFrames, MaxPayload)
	}
	if width == 2 {
		for i, s := range samples {
			if s < -1<<15 || s >= 1<<15 {
				return dst, fmt.Errorf("serialadc: sample %d is %d, which does not fit 16 bits", i, s)
			}
		}
	}
	start := len(dst)
	dst = append(dst, Sync0, Sync1, byte(seq), byte(seq>>8), byte(channels), byte(width), byte(frames))
	for _, s := range samples {
		if width == 2 {
			dst = binary.LittleEndian.AppendUint16(dst, uint16(int16(s)))
		} else {
			dst = binary.LittleEndian.AppendUint32(dst, uint32(s))
		}
	}
	crc := CRC16(dst[start+2:])
	return binary.LittleEndian.AppendUint16(dst, crc), nil
}
