package sim

import (
	"io"
	"strconv"
)

// driveLogHeader is the first line of a drive log.
const driveLogHeader = "t_s,freq_hz,amp\n"

// driveLog writes one CSV line "t_s,freq_hz,amp" per block: the time of the
// block's last frame in seconds since the rig started, and the drive's
// frequency in hertz and amplitude in drive units at that frame. Each line
// goes out in a single Write with no buffering of its own, so over an
// *os.File a killed process leaves the log readable up to its last line.
// After the first write error it writes nothing more and keeps the error.
type driveLog struct {
	w   io.Writer
	buf []byte
	err error
}

func (l *driveLog) header() {
	if l.w == nil || l.err != nil {
		return
	}
	_, l.err = io.WriteString(l.w, driveLogHeader)
}

func (l *driveLog) line(tS, freqHz, amp float64) {
	if l.w == nil || l.err != nil {
		return
	}
	b := l.buf[:0]
	b = strconv.AppendFloat(b, tS, 'f', 6, 64)
	b = append(b, ',')
	b = strconv.AppendFloat(b, freqHz, 'g', -1, 64)
	b = append(b, ',')
	b = strconv.AppendFloat(b, amp, 'g', -1, 64)
	b = append(b, '\n')
	l.buf = b
	_, l.err = l.w.Write(b)
}

// sync asks the writer to flush to stable storage when it can (an *os.File
// on disk). Best effort: a pipe or terminal refuses, which is no fault.
func (l *driveLog) sync() {
	if s, ok := l.w.(interface{ Sync() error }); ok && l.err == nil {
		_ = s.Sync()
	}
}
