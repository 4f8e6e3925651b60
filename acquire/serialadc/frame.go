package serialadc

// Frame is one decoded sample frame, handed to a FrameSink.
type Frame struct {
	// Values holds one value per channel, in the config's channel order:
	// ADC counts, or volts when text values are volts. The slice belongs to
	// the decoder and is only valid during the FrameSink call.
	Values []float64
	// TimeUS is the frame's timestamp in microseconds, unwrapped (it keeps
	// growing past the device counter's 2^32 wrap), when HasTime is true.
	// Its origin is the device counter's value at the first frame.
	TimeUS  int64
	HasTime bool
	// Gap is true when frames were, or may have been, lost just before this
	// one (a sequence or timestamp gap, a dropped line, a device restart).
	Gap bool
	// Lost is the number of frames known to be missing just before this one,
	// 0 when none are or when the number is unknown.
	Lost int64
}

// FrameSink receives decoded frames. Frame is called synchronously from the
// decoder's Write, once per good frame, in order.
type FrameSink interface {
	Frame(f *Frame)
}

// FrameSinkFunc adapts a function to FrameSink.
type FrameSinkFunc func(f *Frame)

// Frame calls fn(f).
func (fn FrameSinkFunc) Frame(f *Frame) { fn(f) }

// DecodeStats counts what a decoder has seen since it was made. Counters
// that do not apply to a format stay 0.
type DecodeStats struct {
	Bytes  uint64 // bytes fed in
	Frames uint64 // frames delivered to the sink

	// Binary format.
	Garbage         uint64 // bytes that ended up in no delivered packet
	BadHeaders      uint64 // sync words followed by impossible header fields
	CRCErrors       uint64 // packets whose CRC did not match
	ChannelMismatch uint64 // packets with a good CRC but another channel count
	SeqGaps         uint64 // discontinuities of the sequence counter
	LostFrames      uint64 // frames known lost (sequence or timestamp gaps)

	// Text format.
	Lines          uint64 // data lines read (good or bad)
	BadLines       uint64 // lines with a field that is not a number, or too long
	ColumnErrors   uint64 // lines with the wrong number of columns
	RangeErrors    uint64 // counts outside counts_min..counts_max, timestamps ≥ 2^32
	Headers        uint64 // header lines accepted
	HeaderMismatch uint64 // header lines naming other channels
	TimeJumps      uint64 // timestamps far from one expected interval after the last
	TimeRejects    uint64 // frames dropped because their jump was not confirmed
}

// Rejected is the number of frames, packets or lines thrown away as bad:
// CRC failures, channel mismatches, bad lines, column and range errors,
// mismatched headers and unconfirmed timestamp jumps.
func (s DecodeStats) Rejected() uint64 {
	return s.CRCErrors + s.ChannelMismatch + s.BadLines + s.ColumnErrors +
		s.RangeErrors + s.HeaderMismatch + s.TimeRejects
}

// Trouble is the kind of the latest problem a decoder met.
type Trouble uint8

const (
	TroubleNone     Trouble = iota
	TroubleGarbage          // bytes that are not part of a packet
	TroubleCRC              // a packet failed its CRC
	TroubleSeqGap           // the sequence counter skipped
	TroubleChannels         // a packet has another channel count than the config
	TroubleBadLine          // a line has a field that is not a number, or is too long
	TroubleColumns          // a line has the wrong number of columns
	TroubleRange            // a value is outside the ADC's count range
	TroubleHeader           // a header names channels the config does not have
	TroubleTimeJump         // a timestamp jumped
)

// String says what went wrong in plain words.
func (t Trouble) String() string {
	switch t {
	case TroubleNone:
		return "no trouble"
	case TroubleGarbage:
		return "bytes that are not packets arrived (wrong format or baud rate?)"
	case TroubleCRC:
		return "a packet failed its checksum"
	case TroubleSeqGap:
		return "packets went missing (the sequence counter skipped)"
	case TroubleChannels:
		return "the device sends another number of channels than the config names"
	case TroubleBadLine:
		return "a line could not be read as numbers"
	case TroubleColumns:
		return "a line had the wrong number of columns"
	case TroubleRange:
		return "a value was outside the ADC's count range"
	case TroubleHeader:
		return "a header line named channels the config does not have"
	case TroubleTimeJump:
		return "a timestamp jumped (lines lost or damaged)"
	default:
		return "unknown trouble"
	}
}
