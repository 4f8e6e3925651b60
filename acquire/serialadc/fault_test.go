package serialadc

import (
	"context"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/sweeplock/sweeplock/acquire"
)

// TestSourceBinaryFaults streams binary packets through a pty with garbage
// bytes between packets, dropped packets and packets with a corrupted byte.
// Every delivered sample must be the one sent at that frame index, every
// good frame must arrive, every discontinuity must carry FlagGap (and no
// other block), and each fault must be counted exactly.
func TestSourceBinaryFaults(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	const packets, per = 1500, 8
	var stream []byte
	good := make([]bool, packets*per)
	var garbageBytes, corrupted, dropped, runs, lostFrames uint64
	inRun := false
	s := make([]int32, 2*per)
	for p := range packets {
		for j := range per {
			r, f := sample(p*per+j, 400)
			s[2*j], s[2*j+1] = int32(r), int32(f)
		}
		pk := pkt(t, uint16(p*per), 2, 2, s...)
		fault := -1
		if p >= 10 && p < packets-10 {
			fault = rng.IntN(20) // 0: garbage before, 1: dropped, 2: corrupted
		}
		if fault == 0 {
			// Garbage without the sync byte 0xA5, so the exact count below
			// holds; sync words in garbage are TestBinaryAdversarial's job.
			g := make([]byte, 1+rng.IntN(40))
			for i := range g {
				for g[i] = byte(rng.IntN(256)); g[i] == Sync0; g[i] = byte(rng.IntN(256)) {
				}
			}
			stream = append(stream, g...)
			garbageBytes += uint64(len(g))
		}
		switch fault {
		case 1:
			dropped++
		case 2:
			// Flip the lowest bit of a sample's low byte: the value stays a
			// 10-bit count, so no sync word can appear inside the packet.
			at := HeaderLen + 2*rng.IntN(2*per)
			pk[at] ^= 0x01
			stream = append(stream, pk...)
			corrupted++
			garbageBytes += uint64(len(pk))
		default:
			stream = append(stream, pk...)
		}
		if fault == 1 || fault == 2 {
			lostFrames += per
			if !inRun {
				runs++
			}
			inRun = true
			continue
		}
		inRun = false
		for j := range per {
			good[p*per+j] = true
		}
	}
	if dropped == 0 || corrupted == 0 || garbageBytes == 0 {
		t.Fatalf("fault schedule too tame: %d dropped, %d corrupted, %d garbage bytes", dropped, corrupted, garbageBytes)
	}

	leader, follower := rawPty(t)
	src := newSource(t, ptyConfig(follower.Name(), FormatBinary))
	blocks := consume(src)
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go paced(leader, stream)
	waitFor(t, "all bytes decoded", func() bool { return src.DecodeStats().Bytes >= uint64(len(stream)) })
	src.Close()
	got := blocks()
	st, ds := src.Stats(), src.DecodeStats()

	seen := checkIndexed(t, got, good, func(b rxBlock, j int) int {
		return int(math.Round(b.startS*10000)) + j
	}, func(i int) (int64, int64) { return sample(i, 400) })
	want := 0
	for _, g := range good {
		if g {
			want++
		}
	}
	// On a loaded machine the test's consumer can fall behind the reader:
	// the source then drops whole blocks, counts them and flags the next
	// block (checkIndexed above checks the flag). Those frames are missing
	// by design; every other count stays exact.
	cfg := src.Config()
	if lost := want - seen; lost < 0 || lost > int(st.Dropped)*cfg.BlockFrames || (st.Dropped == 0 && lost != 0) {
		t.Errorf("%d good frames delivered, %d sent, %d blocks dropped", seen, want, st.Dropped)
	}
	if ds.CRCErrors != corrupted || ds.Garbage != garbageBytes || ds.SeqGaps != runs || ds.LostFrames != lostFrames ||
		ds.BadHeaders != 0 || ds.ChannelMismatch != 0 {
		t.Errorf("decode stats %+v; want CRCErrors %d, Garbage %d, SeqGaps %d, LostFrames %d", ds, corrupted, garbageBytes, runs, lostFrames)
	}
	if st.Errors != corrupted || st.Gaps < runs || st.Gaps > runs+st.Dropped {
		t.Errorf("source stats %+v; want Errors %d, Gaps %d (plus one per dropped block at most)", st, corrupted, runs)
	}
	if st.Dropped > 0 {
		t.Logf("the consumer fell behind: %d blocks dropped and flagged", st.Dropped)
	}
}

// checkIndexed checks delivered blocks against the sent frames: index(b, j)
// gives the sent index of frame j of block b, which must be a good frame
// whose samples match; indices must grow; a block must carry FlagGap
// exactly when it does not continue the previous one. It returns how many
// frames were delivered.
func checkIndexed(t *testing.T, got []rxBlock, good []bool, index func(b rxBlock, j int) int, want func(i int) (int64, int64)) int {
	t.Helper()
	seen := 0
	prev := -1
	for k, b := range got {
		if b.frames <= 0 {
			t.Fatalf("block %d malformed (%d frames)", k, b.frames)
		}
		first := index(b, 0)
		gap := b.flags&acquire.FlagGap != 0
		if k > 0 && gap != (first != prev+1) {
			t.Fatalf("block %d starts at frame %d after frame %d, flags %v", k, first, prev, b.flags)
		}
		if b.flags&acquire.FlagClockUnknown == 0 || b.flags&acquire.FlagOverload != 0 {
			t.Fatalf("block %d flags %v", k, b.flags)
		}
		for j := range b.frames {
			i := index(b, j)
			if i <= prev || i >= len(good) || !good[i] {
				t.Fatalf("block %d frame %d: index %d (previous %d) is not a good sent frame", k, j, i, prev)
			}
			r, f := want(i)
			checkFrame(t, "frame "+itoa(int64(i)), b.data[2*j:2*j+2], r, f)
			prev = i
			seen++
		}
	}
	return seen
}

// TestSourceTextFaults streams timestamped text lines through a pty, with a
// counter that wraps at 2^32 in the middle, and injects garbage lines,
// garbage glued in front of a line, dropped lines and cut lines (the end of
// a line lost with its LF, so it runs into the next). Every delivered frame
// must sit at the time of the sent frame with the same samples, every
// untouched frame must arrive, gaps must be flagged exactly where frames
// are missing, and the faults must be counted.
func TestSourceTextFaults(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	const n, iv = 6000, 500 // frames, µs
	start := uint32(1<<32 - 2000*iv + 321)
	garbage := func() []byte {
		g := []byte{'!'}
		for range rng.IntN(60) {
			c := byte(rng.IntN(256))
			if c == '\n' {
				c = '?'
			}
			g = append(g, c)
		}
		return g
	}
	clean := make([]bool, n)
	for i := range clean {
		clean[i] = true
	}
	var stream []byte
	var garbageLines, glued, drops, cuts uint64
	last := 0
	for i := 0; i < n; i++ {
		r, f := sample(i, 400)
		line := AppendLine(nil, start+uint32(i*iv), true, []int64{r, f})
		if i < 20 || i >= n-20 || i-last < 5 || rng.IntN(12) != 0 {
			stream = append(stream, line...)
			continue
		}
		last = i
		switch rng.IntN(4) {
		case 0: // a garbage line of its own
			stream = append(stream, garbage()...)
			stream = append(stream, '\n')
			stream = append(stream, line...)
			garbageLines++
		case 1: // garbage glued in front of the line
			stream = append(stream, garbage()...)
			stream = append(stream, line...)
			clean[i] = false
			glued++
		case 2: // the line never arrives
			clean[i] = false
			drops++
		case 3: // the line is cut and runs into the next one
			stream = append(stream, line[:1+rng.IntN(len(line)-1)]...)
			clean[i], clean[i+1] = false, false
			cuts++
		}
	}
	if garbageLines == 0 || glued == 0 || drops == 0 || cuts == 0 {
		t.Fatalf("fault schedule too tame: %d %d %d %d", garbageLines, glued, drops, cuts)
	}

	leader, follower := rawPty(t)
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
	src.Close()
	got := blocks()
	st, ds := src.Stats(), src.DecodeStats()

	delivered := make([]bool, n)
	seen := checkIndexed(t, got, delivered, func(b rxBlock, j int) int {
		i := int(math.Round(b.timeS[j] * 1e6 / iv))
		if i >= 0 && i < n {
			delivered[i] = true // checkIndexed then demands it is a sent frame
		}
		return i
	}, func(i int) (int64, int64) { return sample(i, 400) })
	missing := 0
	for i := range n {
		if clean[i] && !delivered[i] {
			missing++
		}
	}
	// Frames of blocks dropped because the test's consumer fell behind on
	// a loaded machine are missing by design (counted, next block flagged).
	if missing > int(st.Dropped)*src.Config().BlockFrames {
		t.Errorf("%d untouched frames were not delivered (%d delivered, %d blocks dropped)", missing, seen, st.Dropped)
	}
	// A line starting with '!' is bad: counted as BadLines, or as
	// ColumnErrors when the garbage happens to hold ",," before the first
	// number is read. A drop makes at least one timestamp jump; a cut line
	// is rejected one way or another (column count, range, or an
	// unconfirmed jump).
	if ds.BadLines+ds.ColumnErrors < garbageLines+glued || ds.TimeJumps < drops || ds.Rejected() < garbageLines+glued+cuts {
		t.Errorf("decode stats %+v for %d garbage lines, %d glued, %d drops, %d cuts", ds, garbageLines, glued, drops, cuts)
	}
	if st.Errors != ds.Rejected() {
		t.Errorf("source stats %+v", st)
	}
}

// TestBinaryAdversarial feeds the binary decoder frames whose samples encode
// their own index, between bursts of garbage full of sync words and
// plausible headers, with random multi-byte corruption. No delivered frame
// may be anything but a sent frame, in order, and each gap in the indices
// must be flagged.
func TestBinaryAdversarial(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	var stream []byte
	idx := 0
	for range 3000 {
		switch rng.IntN(6) {
		case 0: // garbage shaped like headers
			for range 1 + rng.IntN(4) {
				stream = append(stream, Sync0, Sync1, byte(rng.IntN(256)), byte(rng.IntN(256)), 2,
					byte(2+2*rng.IntN(2)), byte(1+rng.IntN(8)))
				for range rng.IntN(40) {
					stream = append(stream, byte(rng.IntN(256)))
				}
			}
		case 1: // random bytes
			for range rng.IntN(64) {
				stream = append(stream, byte(rng.IntN(256)))
			}
		}
		nfr := 1 + rng.IntN(6)
		s := make([]int32, 0, 2*nfr)
		for j := range nfr {
			s = append(s, int32(idx+j), int32(^(idx + j)))
		}
		p, err := AppendPacket(nil, uint16(idx), 2, 4, s)
		if err != nil {
			t.Fatal(err)
		}
		if rng.IntN(8) == 0 {
			for range 1 + rng.IntN(3) {
				p[2+rng.IntN(len(p)-2)] ^= byte(1 + rng.IntN(255))
			}
		}
		stream = append(stream, p...)
		idx += nfr
	}
	prev := -1
	var delivered int
	d, err := NewBinaryDecoder(2, FrameSinkFunc(func(f *Frame) {
		i := int(f.Values[0])
		if f.Values[1] != float64(^i) || i <= prev || i >= idx {
			t.Fatalf("delivered frame %v after %d is not a sent frame", f.Values, prev)
		}
		if prev >= 0 && (i != prev+1) != f.Gap {
			t.Fatalf("frame %d after %d has Gap=%v", i, prev, f.Gap)
		}
		prev = i
		delivered++
	}))
	if err != nil {
		t.Fatal(err)
	}
	for rest := stream; len(rest) > 0; {
		k := min(1+rng.IntN(700), len(rest))
		d.Write(rest[:k])
		rest = rest[k:]
	}
	ds := d.Stats()
	if delivered < idx/2 || ds.CRCErrors == 0 || ds.BadHeaders == 0 {
		t.Fatalf("%d of %d frames delivered; stats %+v", delivered, idx, ds)
	}
}

// TestSourceUnplug pulls the cable: the writer closes the pty, so reads
// fail and the port's path vanishes; then a new pty appears behind the same
// path (a symlink the test owns). The source must say it is disconnected,
// come back, and flag the first block after the break.
func TestSourceUnplug(t *testing.T) {
	dir := t.TempDir()
	link := filepath.Join(dir, "ttyADC")
	leaderA, followerA := rawPty(t)
	if err := os.Symlink(followerA.Name(), link); err != nil {
		t.Fatal(err)
	}
	const blocksA, blocksB = 12, 8
	streamA := binaryStream(t, blocksA*128, 8, 200, nil)
	streamB := binaryStream(t, blocksB*128, 8, 800, nil)

	src := newSource(t, ptyConfig(link, FormatBinary))
	blocks := consume(src)
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go paced(leaderA, streamA)
	waitFor(t, "session A delivered", func() bool { return src.Stats().Blocks == blocksA })
	if !src.Stats().Connected {
		t.Fatalf("not connected while data flows: %+v", src.Stats())
	}

	leaderA.Close()
	followerA.Close()
	waitFor(t, "disconnect noticed", func() bool { return !src.Stats().Connected })
	waitFor(t, "reopening fails", func() bool {
		d := src.Stats().Detail
		return strings.Contains(d, "cannot open "+link) && !src.Stats().Connected
	})

	leaderB, followerB := rawPty(t)
	tmp := link + ".new"
	if err := os.Symlink(followerB.Name(), tmp); err != nil {
		t.Fatal(err)
	}
	if err := os.Rename(tmp, link); err != nil {
		t.Fatal(err)
	}
	go paced(leaderB, streamB)
	waitFor(t, "session B delivered", func() bool { return src.Stats().Blocks == blocksA+blocksB })
	st := src.Stats()
	if !st.Connected || !strings.Contains(st.Detail, "reconnected") {
		t.Errorf("after resuming: %+v", st)
	}
	src.Close()
	got := blocks()
	if len(got) != blocksA+blocksB {
		t.Fatalf("%d blocks, want %d", len(got), blocksA+blocksB)
	}
	for k, b := range got {
		base, i0 := int64(200), k*128
		wantGap := false
		if k >= blocksA {
			base, i0 = 800, (k-blocksA)*128
			wantGap = k == blocksA
		}
		if (b.flags&acquire.FlagGap != 0) != wantGap || b.frames != 128 || b.seq != uint64(k) {
			t.Fatalf("block %d: flags %v frames %d seq %d", k, b.flags, b.frames, b.seq)
		}
		if k > 0 && b.startS <= got[k-1].startS {
			t.Fatalf("block %d StartS %v not after %v", k, b.startS, got[k-1].startS)
		}
		for j := range b.frames {
			r, f := sample(i0+j, base)
			checkFrame(t, "block "+itoa(int64(k))+" frame "+itoa(int64(j)), b.data[2*j:2*j+2], r, f)
		}
	}
	if st.Gaps != 1 || st.Dropped != 0 || src.Err() != nil {
		t.Errorf("stats %+v, err %v", st, src.Err())
	}
}

// TestSourceStall: the port stays open but the device goes quiet for longer
// than the stall timeout: the source reports it, reopens, and flags the
// first block once data flows again.
func TestSourceStall(t *testing.T) {
	leader, follower := rawPty(t)
	cfg := ptyConfig(follower.Name(), FormatBinary)
	cfg.StallTimeout = 300 * time.Millisecond // well above the writer's 1 ms pacing
	stream := binaryStream(t, 8*128, 8, 400, nil)
	half := len(stream) / 2
	src := newSource(t, cfg)
	blocks := consume(src)
	if err := src.Start(context.Background()); err != nil {
		t.Fatal(err)
	}
	go paced(leader, stream[:half])
	waitFor(t, "first half delivered", func() bool { return src.Stats().Blocks == 4 })
	waitFor(t, "stall noticed", func() bool {
		st := src.Stats()
		return !st.Connected && strings.Contains(st.Detail, "no data from")
	})
	go paced(leader, stream[half:])
	waitFor(t, "second half delivered", func() bool { return src.Stats().Blocks == 8 })
	if st := src.Stats(); !st.Connected || st.Gaps != 1 {
		t.Errorf("after the stall: %+v", st)
	}
	src.Close()
	got := blocks()
	for k, b := range got {
		if (b.flags&acquire.FlagGap != 0) != (k == 4) || b.frames != 128 {
			t.Fatalf("block %d flags %v frames %d", k, b.flags, b.frames)
		}
		for j := range b.frames {
			r, f := sample(k*128+j, 400)
			checkFrame(t, "frame "+itoa(int64(k*128+j)), b.data[2*j:2*j+2], r, f)
		}
	}
}
