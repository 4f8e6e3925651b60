package acquire

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
)

// The raw capture is a WAV file of 32-bit IEEE float samples (format tag
// 3, as the WAVE format defines for floating point), one channel per source
// channel followed by three channels that carry the drive: the fractional
// part of its phase in cycles, its frequency in hertz and its amplitude in
// drive units. Sizes in the header are brought up to date at every Sync, so
// a run that crashes leaves a file readable up to its last logged point.

const (
	wavHeaderSize = 58 // RIFF(12) + fmt(8+18) + fact(8+4) + data(8)
	// RawDriveChannels is the number of drive channels after the source's.
	RawDriveChannels = 3
)

// WAVWriter appends frames to a float32 WAV file.
type WAVWriter struct {
	f        *os.File
	w        *bufio.Writer
	channels int
	rate     uint32
	frames   int64
	buf      []byte
}

// CreateWAV creates a new float32 WAV file; it never overwrites.
func CreateWAV(path string, channels int, rateHz float64) (*WAVWriter, error) {
	if channels < 1 || channels > 64 {
		return nil, fmt.Errorf("acquire: raw capture: %d channels (want 1..64)", channels)
	}
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, os.ErrExist) {
			return nil, fmt.Errorf("%w: %s", ErrExists, path)
		}
		return nil, fmt.Errorf("acquire: raw capture: %w", err)
	}
	w := &WAVWriter{f: f, w: bufio.NewWriterSize(f, 1<<16), channels: channels, rate: uint32(math.Round(rateHz))}
	if _, err := w.w.Write(wavHeader(channels, w.rate, 0)); err != nil {
		f.Close()
		return nil, fmt.Errorf("acquire: raw capture: %w", err)
	}
	return w, nil
}

func wavHeader(channels int, rate uint32, frames int64) []byte {
	h := make([]byte, wavHeaderSize)
	le := binary.LittleEndian
	data := uint32(frames) * uint32(channels) * 4
	copy(h[0:], "RIFF")
	le.PutUint32(h[4:], wavHeaderSize-8+data)
	copy(h[8:], "WAVE")
	copy(h[12:], "fmt ")
	le.PutUint32(h[16:], 18)
	le.PutUint16(h[20:], 3) // IEEE float
	le.PutUint16(h[22:], uint16(channels))
	le.PutUint32(h[24:], rate)
	le.PutUint32(h[28:], rate*uint32(channels)*4)
	le.PutUint16(h[32:], uint16(channels*4))
	le.PutUint16(h[34:], 32)
	le.PutUint16(h[36:], 0) // cbSize
	copy(h[38:], "fact")
	le.PutUint32(h[42:], 4)
	le.PutUint32(h[46:], uint32(frames))
	copy(h[50:], "data")
	le.PutUint32(h[54:], data)
	return h
}

// Frames is the number of frames written so far.
func (w *WAVWriter) Frames() int64 { return w.frames }

// WriteBlock appends a block's frames with the drive's phase, frequency
// and amplitude. phase may be nil (written as NaN).
func (w *WAVWriter) WriteBlock(b *Block) error {
	if b.Channels+RawDriveChannels != w.channels {
		return fmt.Errorf("acquire: raw capture: block has %d channels, file %d", b.Channels, w.channels-RawDriveChannels)
	}
	need := w.channels * 4
	if cap(w.buf) < need {
		w.buf = make([]byte, need)
	}
	buf := w.buf[:need]
	le := binary.LittleEndian
	for i := 0; i < b.Frames; i++ {
		for c := 0; c < b.Channels; c++ {
			le.PutUint32(buf[4*c:], math.Float32bits(float32(b.Data[i*b.Channels+c])))
		}
		ph := math.NaN()
		if b.PhaseCyc != nil {
			ph = b.PhaseCyc[i] - math.Floor(b.PhaseCyc[i])
		}
		k := 4 * b.Channels
		le.PutUint32(buf[k:], math.Float32bits(float32(ph)))
		le.PutUint32(buf[k+4:], math.Float32bits(float32(b.DriveHz)))
		le.PutUint32(buf[k+8:], math.Float32bits(float32(b.DriveAmp)))
		if _, err := w.w.Write(buf); err != nil {
			return fmt.Errorf("acquire: raw capture: %w", err)
		}
		w.frames++
	}
	return nil
}

// Sync flushes the frames written, brings the header's sizes up to date
// and syncs the file.
func (w *WAVWriter) Sync() error {
	if err := w.w.Flush(); err != nil {
		return fmt.Errorf("acquire: raw capture: %w", err)
	}
	fresh := wavHeader(w.channels, w.rate, w.frames)
	if _, err := w.f.WriteAt(fresh, 0); err != nil {
		return fmt.Errorf("acquire: raw capture: %w", err)
	}
	return w.f.Sync()
}

// Close syncs and closes the file; safe twice.
func (w *WAVWriter) Close() error {
	if w.f == nil {
		return nil
	}
	err := w.Sync()
	if cerr := w.f.Close(); err == nil {
		err = cerr
	}
	w.f = nil
	return err
}

// WAV is a float32 WAV file read back.
type WAV struct {
	RateHz   float64
	Channels int
	Frames   int
	Data     []float32 // interleaved
}

// ReadWAV reads a float32 WAV file written by WAVWriter (or any WAV with
// format tag 3 and 32-bit samples). A data chunk longer than the file (a
// crash before the last Sync) is read as far as the file goes.
func ReadWAV(r io.Reader) (*WAV, error) {
	all, err := io.ReadAll(r)
	if err != nil {
		return nil, fmt.Errorf("acquire: wav: %w", err)
	}
	if len(all) < 12 || string(all[0:4]) != "RIFF" || string(all[8:12]) != "WAVE" {
		return nil, errors.New("acquire: wav: not a RIFF/WAVE file")
	}
	le := binary.LittleEndian
	var out WAV
	var bits, tag uint16
	pos := 12
	for pos+8 <= len(all) {
		id := string(all[pos : pos+4])
		size := int(le.Uint32(all[pos+4:]))
		body := pos + 8
		switch id {
		case "fmt ":
			if body+16 > len(all) {
				return nil, errors.New("acquire: wav: short fmt chunk")
			}
			tag = le.Uint16(all[body:])
			out.Channels = int(le.Uint16(all[body+2:]))
			out.RateHz = float64(le.Uint32(all[body+4:]))
			bits = le.Uint16(all[body+14:])
		case "data":
			if tag != 3 || bits != 32 || out.Channels < 1 {
				return nil, fmt.Errorf("acquire: wav: format tag %d, %d bits: want 32-bit float (tag 3)", tag, bits)
			}
			end := body + size
			if end > len(all) || size == 0 {
				end = len(all)
			}
			n := (end - body) / 4 / out.Channels
			out.Frames = n
			out.Data = make([]float32, n*out.Channels)
			for i := range out.Data {
				out.Data[i] = math.Float32frombits(le.Uint32(all[body+4*i:]))
			}
			return &out, nil
		}
		pos = body + size + size%2
	}
	return nil, errors.New("acquire: wav: no data chunk")
}
