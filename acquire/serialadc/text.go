package serialadc

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
)

// MaxLine is the longest text line, in bytes without the line end, that the
// text decoder reads; longer lines are dropped whole.
const MaxLine = 512

// warmFrames is how many frames the text decoder holds to estimate the
// interval from timestamps when no rate is configured: 16 intervals.
const warmFrames = 17

// TextOptions configures a TextDecoder.
type TextOptions struct {
	// Channels names the value columns in delivery order (at least 1, at
	// most MaxChannels). A header line may put them in another column order.
	Channels []string
	// Timestamps says the first column is a microsecond timestamp.
	Timestamps bool
	// Volts says values are decimal volts; otherwise they are integer counts
	// within CountsMin..CountsMax.
	Volts                bool
	CountsMin, CountsMax int64
	// IntervalUS is the expected time between frames in microseconds, used
	// to check timestamps; 0 means estimate it from the first 16 intervals.
	IntervalUS float64
}

// TextDecoder decodes the text line format. Feed it bytes with Write; it
// calls the sink once per good frame. It is not safe for concurrent use.
type TextDecoder struct {
	opt  TextOptions
	nch  int
	sink FrameSink

	line     [MaxLine]byte
	ln       int
	overflow bool

	colMap []int // value column j goes to channel colMap[j]
	spare  []int // scratch for header parsing

	vals []float64
	pend []float64
	warm []float64 // warmFrames × nch
	wts  [warmFrames]uint32
	nw   int

	expected float64 // µs
	stepLo   int64
	stepHi   int64

	haveLast bool
	lastRaw  uint32
	lastUS   int64
	havePend bool
	pendRaw  uint32

	gapNext  bool
	seenData bool

	frame   Frame
	stats   DecodeStats
	trouble Trouble
}

// NewTextDecoder returns a text decoder that hands good frames to sink.
func NewTextDecoder(opt TextOptions, sink FrameSink) (*TextDecoder, error) {
	nch := len(opt.Channels)
	if nch < 1 || nch > MaxChannels {
		return nil, fmt.Errorf("serialadc: text decoder for %d channels: allowed are 1 to %d", nch, MaxChannels)
	}
	if sink == nil {
		return nil, fmt.Errorf("serialadc: text decoder needs a frame sink")
	}
	if !opt.Volts && opt.CountsMin >= opt.CountsMax {
		return nil, fmt.Errorf("serialadc: text decoder count range %d..%d is empty", opt.CountsMin, opt.CountsMax)
	}
	if opt.IntervalUS < 0 || math.IsNaN(opt.IntervalUS) || math.IsInf(opt.IntervalUS, 0) {
		return nil, fmt.Errorf("serialadc: text decoder interval %g µs: must be 0 (estimate) or positive", opt.IntervalUS)
	}
	if !opt.Timestamps && opt.IntervalUS != 0 {
		opt.IntervalUS = 0 // not needed without timestamps
	}
	opt.Channels = append([]string(nil), opt.Channels...)
	d := &TextDecoder{
		opt:    opt,
		nch:    nch,
		sink:   sink,
		colMap: make([]int, nch),
		spare:  make([]int, nch),
		vals:   make([]float64, nch),
		pend:   make([]float64, nch),
	}
	for i := range d.colMap {
		d.colMap[i] = i
	}
	if opt.Timestamps && opt.IntervalUS == 0 {
		d.warm = make([]float64, warmFrames*nch)
	}
	d.setExpected(opt.IntervalUS)
	return d, nil
}

func (d *TextDecoder) setExpected(us float64) {
	d.expected = us
	d.stepLo = int64(math.Ceil(0.5 * us))
	d.stepHi = int64(math.Floor(1.5 * us))
}

// IntervalUS returns the expected interval between frames in microseconds:
// the configured one, or the estimate once 16 intervals were seen; 0 before
// that or without timestamps.
func (d *TextDecoder) IntervalUS() float64 { return d.expected }

// Stats returns the counters.
func (d *TextDecoder) Stats() DecodeStats { return d.stats }

// Trouble returns the kind of the latest problem.
func (d *TextDecoder) Trouble() Trouble { return d.trouble }

// Reset forgets a partial line, a held frame and the timestamp history (as
// after a reconnect). The header's column order, the interval estimate and
// the counters are kept.
func (d *TextDecoder) Reset() {
	d.ln = 0
	d.overflow = false
	d.nw = 0
	d.haveLast = false
	d.havePend = false
	d.gapNext = false
	d.seenData = false
}

// Write feeds bytes in any pieces; it never fails and always returns
// len(p), nil. Each complete line is decoded before it returns; a partial
// line waits for the next Write.
func (d *TextDecoder) Write(p []byte) (int, error) {
	total := len(p)
	d.stats.Bytes += uint64(total)
	for len(p) > 0 {
		k := bytes.IndexByte(p, '\n')
		if k < 0 {
			d.keep(p)
			break
		}
		if d.ln == 0 && !d.overflow {
			if k > MaxLine {
				d.longLine()
			} else {
				d.decodeLine(p[:k])
			}
		} else {
			d.keep(p[:k])
			if d.overflow {
				d.longLine()
			} else {
				d.decodeLine(d.line[:d.ln])
			}
			d.ln = 0
			d.overflow = false
		}
		p = p[k+1:]
	}
	return total, nil
}

// keep stores part of a line until its end arrives.
func (d *TextDecoder) keep(p []byte) {
	if d.overflow {
		return
	}
	if d.ln+len(p) > MaxLine {
		d.overflow = true
		d.ln = 0
		return
	}
	d.ln += copy(d.line[d.ln:], p)
}

func (d *TextDecoder) longLine() {
	d.stats.Lines++
	d.stats.BadLines++
	d.trouble = TroubleBadLine
	d.dropped()
}

// dropped notes that a data line was thrown away.
func (d *TextDecoder) dropped() {
	if !d.opt.Timestamps {
		d.gapNext = true
	}
}

func isSep(c byte) bool   { return c == ',' || c == ' ' || c == '\t' }
func isSpace(c byte) bool { return c == ' ' || c == '\t' || c == '\r' }

func isNameStart(c byte) bool {
	return c == '_' || (c|0x20 >= 'a' && c|0x20 <= 'z')
}

// decodeLine handles one line without its LF.
func (d *TextDecoder) decodeLine(b []byte) {
	for len(b) > 0 && isSpace(b[len(b)-1]) {
		b = b[:len(b)-1]
	}
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	if len(b) == 0 || b[0] == '#' {
		return
	}
	if isNameStart(b[0]) {
		d.header(b)
		return
	}
	d.stats.Lines++
	d.data(b)
}

// nextField returns the field starting at b[i] and the index of the next
// field, or ok=false for an empty field. end is true after the last field.
func nextField(b []byte, i int) (field []byte, next int, end, ok bool) {
	start := i
	for i < len(b) && !isSep(b[i]) {
		i++
	}
	field = b[start:i]
	if len(field) == 0 {
		return nil, i, false, false
	}
	if i == len(b) {
		return field, i, true, true
	}
	comma := false
	for i < len(b) && isSep(b[i]) {
		if b[i] == ',' {
			if comma {
				return nil, i, false, false
			}
			comma = true
		}
		i++
	}
	if i == len(b) {
		// a separator at the end: with a comma it leaves an empty field
		return field, i, true, !comma
	}
	return field, i, false, true
}

// header reads a header line.
func (d *TextDecoder) header(b []byte) {
	want := d.nch
	if d.opt.Timestamps {
		want++
	}
	col := 0
	m := d.spare
	for i := range m {
		m[i] = -1
	}
	i := 0
	good := true
	for {
		field, next, end, ok := nextField(b, i)
		if !ok || col >= want {
			good = false
			break
		}
		if !d.opt.Timestamps || col > 0 {
			ch := -1
			for k, name := range d.opt.Channels {
				if string(field) == name {
					ch = k
					break
				}
			}
			if ch < 0 {
				good = false
				break
			}
			j := col
			if d.opt.Timestamps {
				j--
			}
			for _, prev := range m[:j] {
				if prev == ch {
					good = false
				}
			}
			m[j] = ch
		}
		col++
		if end {
			break
		}
		i = next
	}
	if !good || col != want {
		d.stats.HeaderMismatch++
		d.trouble = TroubleHeader
		if d.seenData {
			// may be a data line damaged at its start
			d.dropped()
		}
		return
	}
	d.stats.Headers++
	d.colMap, d.spare = m, d.colMap
	if d.seenData {
		// data before a header: the device restarted
		d.gapNext = true
		d.havePend = false
		d.nw = 0
	}
}

// data reads a data line.
func (d *TextDecoder) data(b []byte) {
	want := d.nch
	if d.opt.Timestamps {
		want++
	}
	var raw uint32
	col := 0
	i := 0
	for {
		field, next, end, ok := nextField(b, i)
		if !ok {
			d.stats.ColumnErrors++
			d.trouble = TroubleColumns
			d.dropped()
			return
		}
		if col >= want {
			d.stats.ColumnErrors++
			d.trouble = TroubleColumns
			d.dropped()
			return
		}
		if d.opt.Timestamps && col == 0 {
			t, ok, syntax := parseUint32(field)
			if !ok {
				d.bad(syntax)
				return
			}
			raw = t
		} else {
			j := col
			if d.opt.Timestamps {
				j--
			}
			var v float64
			if d.opt.Volts {
				v, ok = parseDecimal(field)
				if !ok {
					d.bad(true)
					return
				}
			} else {
				n, ok := parseInt(field)
				if !ok {
					d.bad(true)
					return
				}
				if n < d.opt.CountsMin || n > d.opt.CountsMax {
					d.bad(false)
					return
				}
				v = float64(n)
			}
			d.vals[d.colMap[j]] = v
		}
		col++
		if end {
			break
		}
		i = next
	}
	if col != want {
		d.stats.ColumnErrors++
		d.trouble = TroubleColumns
		d.dropped()
		return
	}
	d.seenData = true
	if d.opt.Timestamps {
		d.timed(d.vals, raw)
		return
	}
	d.emit(d.vals, 0, false, false, 0)
}

// bad counts a line with a bad field: syntax (BadLines) or range.
func (d *TextDecoder) bad(syntax bool) {
	if syntax {
		d.stats.BadLines++
		d.trouble = TroubleBadLine
	} else {
		d.stats.RangeErrors++
		d.trouble = TroubleRange
	}
	d.dropped()
}

func (d *TextDecoder) emit(vals []float64, us int64, hasTime, gap bool, lost int64) {
	f := &d.frame
	f.Values = vals
	f.TimeUS = us
	f.HasTime = hasTime
	f.Gap = gap || d.gapNext
	f.Lost = lost
	d.gapNext = false
	d.stats.Frames++
	d.sink.Frame(f)
}

func (d *TextDecoder) isStep(dt int64) bool { return dt >= d.stepLo && dt <= d.stepHi }

// timed checks a timestamped frame against the last accepted one; see the
// package documentation for the rules.
func (d *TextDecoder) timed(vals []float64, raw uint32) {
	if d.expected == 0 {
		d.warmUp(vals, raw)
		return
	}
	if d.havePend {
		dp := int64(int32(raw - d.pendRaw))
		if d.isStep(dp) {
			d.confirm()
			d.lastRaw = raw
			d.lastUS += dp
			d.emit(vals, d.lastUS, true, false, 0)
			return
		}
		d.havePend = false
		d.stats.TimeRejects++
		d.trouble = TroubleTimeJump
	}
	if !d.haveLast {
		d.hold(vals, raw)
		return
	}
	dl := int64(int32(raw - d.lastRaw))
	if d.isStep(dl) {
		d.lastRaw = raw
		d.lastUS += dl
		d.emit(vals, d.lastUS, true, false, 0)
		return
	}
	d.stats.TimeJumps++
	d.trouble = TroubleTimeJump
	d.hold(vals, raw)
}

func (d *TextDecoder) hold(vals []float64, raw uint32) {
	copy(d.pend, vals)
	d.pendRaw = raw
	d.havePend = true
}

// confirm delivers the held frame, which the frame after it has confirmed.
func (d *TextDecoder) confirm() {
	d.havePend = false
	if !d.haveLast {
		d.haveLast = true
		d.lastRaw = d.pendRaw
		d.lastUS = int64(d.pendRaw)
		d.emit(d.pend, d.lastUS, true, false, 0)
		return
	}
	dl := int64(int32(d.pendRaw - d.lastRaw))
	var lost int64
	if dl > 0 {
		lost = int64(math.Round(float64(dl)/d.expected)) - 1
		if lost < 0 {
			lost = 0
		}
		d.stats.LostFrames += uint64(lost)
	} else {
		// backwards: the device restarted; the time in between is unknown
		dl = int64(math.Round(d.expected))
		if dl < 1 {
			dl = 1
		}
	}
	d.lastRaw = d.pendRaw
	d.lastUS += dl
	d.emit(d.pend, d.lastUS, true, true, lost)
}

// warmUp holds the first frames until the interval can be estimated as the
// median of their intervals, then replays them through the normal checks.
func (d *TextDecoder) warmUp(vals []float64, raw uint32) {
	copy(d.warm[d.nw*d.nch:], vals)
	d.wts[d.nw] = raw
	d.nw++
	if d.nw < warmFrames {
		return
	}
	var iv [warmFrames - 1]int64
	for k := range iv {
		iv[k] = int64(int32(d.wts[k+1] - d.wts[k]))
	}
	// insertion sort: 16 values
	for a := 1; a < len(iv); a++ {
		for b := a; b > 0 && iv[b] < iv[b-1]; b-- {
			iv[b], iv[b-1] = iv[b-1], iv[b]
		}
	}
	med := float64(iv[len(iv)/2-1]+iv[len(iv)/2]) / 2
	d.nw = 0
	if med < 1 {
		// no forward clock in these frames: drop them and try again
		d.stats.TimeRejects += warmFrames
		d.trouble = TroubleTimeJump
		return
	}
	d.setExpected(med)
	for k := range warmFrames {
		d.timed(d.warm[k*d.nch:(k+1)*d.nch], d.wts[k])
	}
}

// parseInt reads an optionally signed decimal integer of at most 18 digits.
func parseInt(b []byte) (int64, bool) {
	neg := false
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		neg = b[0] == '-'
		b = b[1:]
	}
	if len(b) == 0 || len(b) > 18 {
		return 0, false
	}
	var v int64
	for _, c := range b {
		c -= '0'
		if c > 9 {
			return 0, false
		}
		v = v*10 + int64(c)
	}
	if neg {
		v = -v
	}
	return v, true
}

// parseUint32 reads an unsigned decimal timestamp. When ok is false, syntax
// says whether the field is not a number at all (true) or a number that does
// not fit 32 bits (false).
func parseUint32(b []byte) (v uint32, ok, syntax bool) {
	if len(b) == 0 || len(b) > 20 {
		return 0, false, true
	}
	var x uint64
	for _, c := range b {
		c -= '0'
		if c > 9 {
			return 0, false, true
		}
		x = x*10 + uint64(c)
	}
	if x > math.MaxUint32 {
		return 0, false, false
	}
	return uint32(x), true, false
}

// parseDecimal reads [+-]digits[.digits][(e|E)[+-]digits] with at least one
// digit before the exponent. The syntax is checked here so strconv never
// fails (no error value is made) and "nan", "inf" and hex are refused.
func parseDecimal(b []byte) (float64, bool) {
	if len(b) == 0 || len(b) > 40 {
		return 0, false
	}
	i := 0
	if b[i] == '+' || b[i] == '-' {
		i++
	}
	digits := 0
	for i < len(b) && b[i] >= '0' && b[i] <= '9' {
		i++
		digits++
	}
	if i < len(b) && b[i] == '.' {
		i++
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i++
			digits++
		}
	}
	if digits == 0 {
		return 0, false
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		if i < len(b) && (b[i] == '+' || b[i] == '-') {
			i++
		}
		ed := 0
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i++
			ed++
		}
		if ed == 0 {
			return 0, false
		}
	}
	if i != len(b) {
		return 0, false
	}
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

// AppendLine appends one data line of the text format (comma-separated,
// LF-terminated) to dst: the timestamp first when hasTime, then the integer
// counts.
func AppendLine(dst []byte, tUS uint32, hasTime bool, counts []int64) []byte {
	if hasTime {
		dst = strconv.AppendUint(dst, uint64(tUS), 10)
		if len(counts) > 0 {
			dst = append(dst, ',')
		}
	}
	for i, c := range counts {
		if i > 0 {
			dst = append(dst, ',')
		}
		dst = strconv.AppendInt(dst, c, 10)
	}
	return append(dst, '\n')
}
