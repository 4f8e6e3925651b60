// Package serialadc reads a microcontroller ADC that streams samples over a
// USB serial port (or any tty, such as a pseudo-terminal), in one of two wire
// formats defined here, and hands them out as acquire.Blocks.
//
// The package has three layers, usable on their own:
//
//   - TextDecoder and BinaryDecoder are plain types fed with bytes through
//     Write. They know nothing of ports or goroutines, never allocate once
//     built, and hand each good frame to a FrameSink. Bad input is counted
//     (DecodeStats), never passed on.
//   - AppendLine and AppendPacket write the two formats; tests, firmware
//     checks and simulated devices use them.
//   - Source opens the port, reads it in its own goroutine, decodes, calibrates
//     counts into volts, builds pooled Blocks and reconnects when the cable
//     is pulled and put back.
//
// It must never block the reader on the consumer (a full channel drops the
// block, counts it and marks the next one FlagGap), never pass on a frame
// that failed its checksum or could not be parsed, and never measure
// anything: it only delivers samples.
//
// # Text lines
//
// One sample frame per line, for rates up to a few hundred frames per second
// at 115200 baud.
//
//   - A line ends with LF; a CR just before the LF is dropped, so CRLF works.
//     A line longer than 512 bytes is discarded whole.
//   - Fields are separated by a comma, or by one or more spaces or tabs, or by
//     a comma with spaces or tabs around it. An empty field (",,", or a comma
//     at the end of the line) makes the line bad. Leading and trailing spaces
//     and tabs are ignored.
//   - Blank lines and lines whose first character is '#' are ignored; firmware
//     may print notes that way.
//   - A line whose first character is a letter or '_' is a header naming the
//     columns, for example "t_us,resp,ref" or "resp ref". When the config has
//     timestamps = true the first header name is the timestamp column (any
//     name) and is skipped. The other names must be exactly the config's
//     channel names, in any order: from then on columns are taken in the
//     header's order and delivered in the config's order. A header with other
//     names is counted (HeaderMismatch) and ignored (after data it is taken
//     as a damaged data line, see below). A valid header after data means
//     the device restarted, so the next frame is marked as a gap. Headers are
//     optional; without one, columns are in the config's channel order.
//   - A data line holds, when timestamps = true, first a timestamp: an
//     unsigned decimal integer 0..4294967295, the microseconds of a
//     free-running 32-bit counter that wraps to 0 after 4294967295. Then one
//     value per channel.
//   - With values = "counts" (the default) each value is an integer ADC
//     reading: an optional sign and decimal digits, no decimal point, within
//     counts_min..counts_max inclusive. A value outside that range cannot come
//     from the ADC and makes the line bad (RangeErrors). With values = "volts"
//     each value is a decimal number: optional sign, digits, optional
//     fraction and optional exponent (1.25, -0.5, .5, 2.5e-3); "nan" and "inf"
//     are bad.
//   - A line with a bad number (BadLines), the wrong number of columns
//     (ColumnErrors) or a value out of range (RangeErrors) is dropped. Without
//     timestamps every dropped line marks the next frame as a gap, because a
//     frame may have been lost; note that without timestamps a line cut short
//     so that it merges with the next one into a line with the right number of
//     columns cannot be told from a good line: use timestamps, or the binary
//     format, when that matters.
//   - The sample rate is rate_hz from the config. With timestamps and no
//     rate_hz, the expected interval is the median of the first 16 intervals
//     (the first 17 frames are held until then).
//   - With timestamps, the difference d between a frame's timestamp and the
//     last accepted one is taken modulo 2^32 as a signed 32-bit number, which
//     unwraps the counter. d within 0.5..1.5 expected intervals is a normal
//     step. Anything else (backwards, zero, or more than 1.5 intervals ahead)
//     is a jump (TimeJumps): the frame is held until the next frame arrives.
//     If that one is a normal step after the held frame, the held frame is
//     delivered and marked as a gap (frames were lost, or the device
//     restarted); if not, the held frame is dropped (TimeRejects), since
//     either its timestamp or its line was damaged. The very first frame is
//     held the same way, so a damaged first line is never delivered.
//
// # Binary packets
//
// For high rates: 10 kS/s × 4 channels of 16-bit samples is 80 kB/s plus
// framing, which needs about 1 Mbaud. All multi-byte fields are
// little-endian, the CRC included.
//
//	offset  size  field
//	0       1     0xA5   sync word, first byte
//	1       1     0x5A   sync word, second byte
//	2       2     seq    uint16: index of this packet's first frame, modulo 65536
//	4       1     nch    channels per frame, 1..16; must equal the config's channel count
//	5       1     width  bytes per sample: 2 (int16) or 4 (int32)
//	6       1     nfr    frames in this packet, 1..255, with nch·width·nfr ≤ 4096
//	7       N     data   N = nch·width·nfr bytes: frame 0 channel 0, frame 0 channel 1, …,
//	                     frame 1 channel 0, …; each sample two's-complement signed
//	7+N     2     crc    CRC-16/CCITT-FALSE of bytes 2 … 6+N (after the sync word,
//	                     before the CRC), low byte first
//
// The CRC is CRC-16/CCITT-FALSE: polynomial 0x1021, initial value 0xFFFF, no
// input or output reflection, no final XOR; its check value for the ASCII
// bytes "123456789" is 0x29B1. Bitwise, per byte b:
//
//	crc ^= b << 8
//	repeat 8 times: crc = (crc & 0x8000) ? (crc << 1) ^ 0x1021 : crc << 1   (16 bits)
//
// The next packet's seq should be seq + nfr (modulo 65536). Any other value is
// a sequence gap (SeqGaps): the next frame is marked as a gap, and when the
// forward difference is below 32768 it is counted as that many lost frames
// (LostFrames); a larger difference is taken as a device restart, with an
// unknown number of frames lost. Samples are ADC counts; a sample at or
// beyond counts_min or counts_max marks the block as overloaded (a packet
// that passed its CRC is trusted, so out-of-range samples are not dropped).
//
// The decoder scans for the sync word, checks the header fields (a header
// outside the limits above is not a packet: BadHeaders, one byte skipped),
// waits for the whole packet and checks the CRC. A packet whose CRC fails is
// never delivered (CRCErrors); the decoder skips one byte and scans on, so a
// good packet that started inside the bad one is still found. Bytes that end
// up in no delivered packet are counted as Garbage. A packet with a good CRC
// but another channel count is dropped (ChannelMismatch).
//
// # Calibration and overload
//
// Each channel's value (counts, or volts read as text) becomes volts at the
// source's input through its calibration: either volts = gain·value + offset,
// or a table of (counts, volts) points with strictly increasing counts,
// interpolated linearly between points and extrapolated linearly along the
// first or last segment beyond the ends (not clamped, so an overload is not
// hidden). With values = "counts" every channel needs a calibration; with
// values = "volts" a channel without one is taken as it is. A frame with any
// channel at or beyond the rails (counts_min/counts_max, or volts_min/
// volts_max with values = "volts"), checked before calibration, marks its
// block FlagOverload. Every block carries FlagClockUnknown, since the
// microcontroller's clock is not the drive's clock.
//
// # Connection
//
// The Source opens the port at the configured baud rate (8 data bits, no
// parity, one stop bit) and reads with a short timeout. When opening fails,
// a read fails, or no byte arrives for stall_timeout, it reports
// Connected=false with a plain-words Detail, closes the port, and tries to
// open the same path again after 100 ms, doubling the wait up to 2 s. When
// data flows again the first block is marked FlagGap. Opening a USB serial
// port usually resets an Arduino-class board, so firmware should print its
// header again after reset.
package serialadc
