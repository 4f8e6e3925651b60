package serialadc

import (
	"context"
	"io"
	"math"
	"strings"
	"testing"
	"time"

	"go.bug.st/serial"

	"github.com/sweeplock/sweeplock/acquire"
)

// gain is the calibration used on the pty tests: 5 V over 1024 counts. It is
// 5·2⁻¹⁰, so counts·gain is exact in float64 and counts come back exactly.
const gain = 5.0 / 1024

// hangGuard bounds how long a test waits for the source before failing; it
// only stops a broken test from hanging, it is not a speed requirement.
const hangGuard = 20 * time.Second

// sample is the synthetic response in counts: a fundamental with 3rd and
// 5th harmonics, as a hardening resonator gives, around mid-scale of a
// 10-bit ADC, plus a reference cosine. base shifts the reference so two
// device sessions can be told apart.
func sample(i int, base int64) (resp, ref int64) {
	ph := 2 * math.Pi * 37.3 * float64(i) / 10000
	resp = int64(math.Round(512 + 300*math.Sin(ph) + 60*math.Sin(3*ph+0.4) + 25*math.Sin(5*ph+1.1)))
	ref = base + int64(math.Round(120*math.Cos(ph)))
	return resp, ref
}

// paced writes p in pieces of 128 bytes at least 1 ms apart (at most
// 128 kB/s, about what a 10 kS/s × 4-channel device sends in packets), as a
// device streams. Written all at once, a pty hands the source tens of blocks
// in one read and the consumer goroutine is behind by construction; paced,
// it would have to stall for over 100 ms on a loaded machine to lose one of
// the 16 queued blocks.
func paced(w io.Writer, p []byte) {
	for len(p) > 0 {
		k := min(128, len(p))
		if _, err := w.Write(p[:k]); err != nil {
			return
		}
		p = p[k:]
		time.Sleep(time.Millisecond)
	}
}

func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(hangGuard)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("gave up waiting for %s", what)
		}
		time.Sleep(5 * time.Millisecond)
	}
}

// rxBlock is a copy of a delivered block.
type rxBlock struct {
	seq    uint64
	startS float64
	rateHz float64
	flags  acquire.Flags
	frames int
	data   []float64
	timeS  []float64
}

// consume copies every block from src until its channel closes; the
// returned function waits for that and returns the copies.
func consume(src *Source) func() []rxBlock {
	done := make(chan []rxBlock, 1)
	go func() {
		var out []rxBlock
		for b := range src.Blocks() {
			rb := rxBlock{seq: b.Seq, startS: b.StartS, rateHz: b.RateHz, flags: b.Flags, frames: b.Frames,
				data: append([]float64(nil), b.Data...)}
			if b.TimeS != nil {
				rb.timeS = append([]float64(nil), b.TimeS...)
			}
			if b.Channels != 2 || len(b.Data) != 2*b.Frames || (b.TimeS != nil && len(b.TimeS) != b.Frames) {
				rb.frames = -1 // malformed: the test reports it
			}
			src.Release(b)
			out = append(out, rb)
		}
		done <- out
	}()
	return func() []rxBlock { return <-done }
}

func newSource(t *testing.T, cfg Config) *Source {
	t.Helper()
	src, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return src
}

func ptyConfig(port, format string) Config {
	return Config{
		Port:         port,
		Format:       format,
		Channels:     []string{"resp", "ref"},
		Reference:    "ref",
		RateHz:       10000,
		CountsMin:    0,
		CountsMax:    1023,
		BlockFrames:  128,
		StallTimeout: 3 * time.Second,
		Calibration:  map[string]Calibration{"resp": {Gain: gain}, "ref": {Gain: gain}},
	}
}

// binaryStream packs frames 0..n-1 of sample() into packets of per frames.
func binaryStream(t *testing.T, n, per int, base int64, clip func(i int) bool) []byte {
	var out []byte
	s := make([]int32, 0, 2*per)
	for i := 0; i < n; i += per {
		s = s[:0]
		for j := i; j < min(i+per, n); j++ {
			r, f := sample(j, base)
			if clip != nil && clip(j) {
				r = 1023
			}
			s = append(s, int32(r), int32(f))
		}
		var err error
		out, err = AppendPacket(out, uint16(i), 2, 2, s)
		if err != nil {
			t.Fatal(err)
		}
	}
	return out
}

// checkFrame compares delivered volts with sent counts, exactly.
func checkFrame(t *testing.T, where string, got []float64, resp, ref int64) {
	t.Helper()
	if got[0] != float64(resp)*gain || got[1] != float64(ref)*gain || got[0]/gain != float64(resp) {
		t.Fatalf("%s: got %v V (%v counts), sent %d,%d counts", where, got, []float64{got[0] / gain, got[1] / gain}, resp, ref)
	}
}

// TestPtyRawBytes: with the pty in raw mode every byte value, including
// LF 0x0A, CR 0x0D, XON 0x11 and XOFF 0x13, passes unchanged from the
// leader to a go.bug.st/serial port on the follower.
func TestPtyRawBytes(t *testing.T) {
	leader, follower := rawPty(t)
	port, err := serial.Open(follower.Name(), &serial.Mode{BaudRate: 115200})
	if err != nil {
		t.Fatal(err)
	}
	defer port.Close()
	port.SetReadTimeout(100 * time.Millisecond)
	var sent []byte
	for rep := range 4 {
		for b := range 256 {
			sent = append(sent, byte(b+rep))
		}
	}
	sent = append(sent, 0x0D, 0x0A, 0x11, 0x13, 0x0D, 0x0D, 0x0A, 0x0A)
	go leader.Write(sent)
	var got []byte
	buf := make([]byte, 512)
	deadline := time.Now().Add(hangGuard)
	for len(got) < len(sent) && time.Now().Before(deadline) {
		n, err := port.Read(buf)
		if err != nil {
			t.Fatal(err)
		}
		got = append(got, buf[:n]...)
	}
	if string(got) != string(sent) {
		t.Fatalf("received %d bytes, sent %d; first difference at %d", len(got), len(sent), firstDiff(got, sent))
	}
}

func firstDiff(a, b []byte) int {
	for i := range min(len(a), len(b)) {
		if a[i] != b[i] {
			return i
		}
	}
	return min(len(a), len(b))
}

// TestSourceBinaryClean streams 100 blocks of binary packets through a pty
// and checks every delivered sample, the uniform times and the overload flag.
func TestSourceBinaryClean(t *testing.T) {
	leader, follower := rawPty(t)
	const n = 100 * 128
	clip := func(i int) bool { return i >= 5000 && i < 5010 } // inside block 39
	stream := binaryStream(t, n, 10, 400, clip)
	src := newSource(t, ptyConfig(follower.Name(), FormatBinary))
	blocks := consume(src)
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go paced(leader, stream)
	waitFor(t, "all bytes decoded", func() bool { return src.DecodeStats().Bytes >= uint64(len(stream)) })
	waitFor(t, "all blocks", func() bool { return src.Stats().Blocks+src.Stats().Dropped >= n/128 })
	st := src.Stats()
	src.Close()
	got := blocks()
	if len(got) != n/128 {
		t.Fatalf("%d blocks, want %d", len(got), n/128)
	}
	for k, b := range got {
		if b.frames != 128 || b.seq != uint64(k) || b.rateHz != 10000 || b.timeS != nil {
			t.Fatalf("block %d: frames %d seq %d rate %v times %v", k, b.frames, b.seq, b.rateHz, b.timeS != nil)
		}
		// StartS = frame index / rate, the uniform clock of a stream without timestamps.
		if b.startS != float64(k*128)/10000 {
			t.Fatalf("block %d StartS %v, want %v", k, b.startS, float64(k*128)/10000)
		}
		wantFlags := acquire.FlagClockUnknown
		if k == 5000/128 {
			wantFlags |= acquire.FlagOverload
		}
		if b.flags != wantFlags {
			t.Fatalf("block %d flags %v, want %v", k, b.flags, wantFlags)
		}
		for j := range b.frames {
			i := k*128 + j
			r, f := sample(i, 400)
			if clip(i) {
				r = 1023
			}
			checkFrame(t, "frame "+itoa(int64(i)), b.data[2*j:2*j+2], r, f)
		}
	}
	if st.Overloads != 1 || st.Gaps != 0 || st.Dropped != 0 || st.Errors != 0 || !st.Connected {
		t.Fatalf("stats %+v", st)
	}
}

// TestSourceTextTimestamps streams text lines with a header that puts the
// columns in another order, a timestamp counter that wraps at 2^32 after
// 300 lines, and no configured rate: the rate is estimated and TimeS is
// the unwrapped time.
func TestSourceTextTimestamps(t *testing.T) {
	leader, follower := rawPty(t)
	const n = 20 * 128
	const iv = 1000 // µs
	start := uint32(1<<32 - 300*iv + 137)
	var stream []byte
	stream = append(stream, "# demo firmware\r\nt_us,ref,resp\r\n"...)
	for i := range n {
		r, f := sample(i, 400)
		stream = AppendLine(stream, start+uint32(i*iv), true, []int64{f, r})
	}
	cfg := ptyConfig(follower.Name(), FormatText)
	cfg.Timestamps = true
	cfg.RateHz = 0
	src := newSource(t, cfg)
	blocks := consume(src)
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go paced(leader, stream)
	waitFor(t, "all bytes decoded", func() bool { return src.DecodeStats().Bytes >= uint64(len(stream)) })
	waitFor(t, "all blocks", func() bool { return src.Stats().Blocks+src.Stats().Dropped >= n/128 })
	if r := src.Info().RateHz; r != 1e6/iv {
		t.Errorf("estimated rate %v Hz, want %v", r, 1e6/iv)
	}
	src.Close()
	got := blocks()
	if len(got) != n/128 {
		t.Fatalf("%d blocks, want %d", len(got), n/128)
	}
	for k, b := range got {
		if b.frames != 128 || b.flags != acquire.FlagClockUnknown || b.rateHz != 1e6/iv {
			t.Fatalf("block %d: frames %d flags %v rate %v", k, b.frames, b.flags, b.rateHz)
		}
		for j := range b.frames {
			i := k*128 + j
			// TimeS is (unwrapped µs − first µs)·1e-6, here exactly i·iv·1e-6.
			if want := float64(int64(i)*iv) * 1e-6; b.timeS[j] != want {
				t.Fatalf("frame %d TimeS %v, want %v", i, b.timeS[j], want)
			}
			r, f := sample(i, 400)
			checkFrame(t, "frame "+itoa(int64(i)), b.data[2*j:2*j+2], r, f)
		}
		if b.startS != b.timeS[0] {
			t.Fatalf("block %d StartS %v, TimeS[0] %v", k, b.startS, b.timeS[0])
		}
	}
	if ds := src.DecodeStats(); ds.Headers != 1 || ds.Rejected() != 0 || ds.TimeJumps != 0 {
		t.Fatalf("decode stats %+v", ds)
	}
}

// TestSourceTextPlain streams lines without timestamps, separated by spaces
// and ended by CRLF, at a configured rate.
func TestSourceTextPlain(t *testing.T) {
	leader, follower := rawPty(t)
	const n = 10 * 128
	var stream []byte
	for i := range n {
		r, f := sample(i, 400)
		stream = append(stream, strings.Join([]string{itoa(r), itoa(f)}, "  ")+"\r\n"...)
	}
	cfg := ptyConfig(follower.Name(), FormatText)
	cfg.RateHz = 500
	src := newSource(t, cfg)
	blocks := consume(src)
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go paced(leader, stream)
	waitFor(t, "all blocks", func() bool { return src.Stats().Blocks+src.Stats().Dropped >= n/128 })
	src.Close()
	got := blocks()
	if len(got) != n/128 {
		t.Fatalf("%d blocks, want %d", len(got), n/128)
	}
	for k, b := range got {
		if b.frames != 128 || b.timeS != nil || b.startS != float64(k*128)/500 || b.flags != acquire.FlagClockUnknown {
			t.Fatalf("block %d: frames %d times %v StartS %v flags %v", k, b.frames, b.timeS != nil, b.startS, b.flags)
		}
		for j := range b.frames {
			r, f := sample(k*128+j, 400)
			checkFrame(t, "frame "+itoa(int64(k*128+j)), b.data[2*j:2*j+2], r, f)
		}
	}
}

// TestSourceConsumerBehind: when the consumer does not read, the source
// keeps its channel's blocks, drops the rest (counting them) and marks the
// next delivered block FlagGap with a jump in Seq (STYLE §15).
func TestSourceConsumerBehind(t *testing.T) {
	leader, follower := rawPty(t)
	const per = 128
	stream := binaryStream(t, 24*per, 8, 400, nil)
	split := 20 * per / 8 * (HeaderLen + 8*2*2 + 2) // bytes of the first 20 blocks
	src := newSource(t, ptyConfig(follower.Name(), FormatBinary))
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go leader.Write(stream[:split])
	waitFor(t, "20 blocks made", func() bool { return src.Stats().Blocks+src.Stats().Dropped == 20 })
	if st := src.Stats(); st.Blocks != queueBlocks || st.Dropped != 20-queueBlocks {
		t.Fatalf("stats %+v, want %d delivered and %d dropped", st, queueBlocks, 20-queueBlocks)
	}
	for k := range queueBlocks {
		b := <-src.Blocks()
		if b.Seq != uint64(k) || b.Flags&acquire.FlagGap != 0 {
			t.Fatalf("queued block %d: seq %d flags %v", k, b.Seq, b.Flags)
		}
		src.Release(b)
	}
	go leader.Write(stream[split:])
	b := <-src.Blocks()
	if b.Seq != 20 || b.Flags&acquire.FlagGap == 0 || b.StartS != float64(20*per)/10000 {
		t.Fatalf("first block after the drops: seq %d flags %v StartS %v", b.Seq, b.Flags, b.StartS)
	}
	r, f := sample(20*per, 400)
	checkFrame(t, "first frame after the drops", b.Data[:2], r, f)
	src.Release(b)
}

func TestSourceLifecycle(t *testing.T) {
	src := newSource(t, ptyConfig("/nonexistent/tty", FormatBinary))
	if st := src.Stats(); st.Connected || st.Detail == "" {
		t.Fatalf("before Start: %+v", st)
	}
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	if err := src.Start(context.Background()); err == nil {
		t.Fatal("second Start succeeded")
	}
	waitFor(t, "open failure reported", func() bool {
		return strings.Contains(src.Stats().Detail, "cannot open /nonexistent/tty")
	})
	if src.Err() != nil {
		t.Fatalf("Err = %v for a missing port, want nil (it keeps retrying)", src.Err())
	}
	src.Close()
	src.Close()
	if _, ok := <-src.Blocks(); ok {
		t.Fatal("Blocks not closed after Close")
	}
	if err := src.Start(context.Background()); err != ErrClosed {
		t.Fatalf("Start after Close = %v, want ErrClosed", err)
	}

	never := newSource(t, ptyConfig("/dev/null", FormatText))
	never.Close()
	if _, ok := <-never.Blocks(); ok {
		t.Fatal("Blocks not closed after Close without Start")
	}

	ctx, cancel := context.WithCancel(context.Background())
	byCtx := newSource(t, ptyConfig("/nonexistent/tty", FormatBinary))
	byCtx.Start(ctx)
	cancel()
	for range byCtx.Blocks() {
	}
	if byCtx.Err() != nil {
		t.Fatalf("Err after the context ended = %v", byCtx.Err())
	}
}

func TestSourceInfo(t *testing.T) {
	cfg := ptyConfig("/dev/ttyACM0", FormatBinary)
	cfg.Calibration["resp"] = Calibration{Gain: gain, Offset: -2.5}
	src := newSource(t, cfg)
	info := src.Info()
	// Full scale of the response: the larger of |cal(0)| = 2.5 and |cal(1023)| = 1023·5/1024 − 2.5.
	if info.Kind != "serial" || info.Name != "/dev/ttyACM0" || info.RateHz != 10000 ||
		strings.Join(info.Channels, ",") != "resp,ref" || info.FullScale != 2.5 {
		t.Fatalf("info %+v", info)
	}
}
