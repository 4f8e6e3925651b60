package serialadc

import (
	"math/rand/v2"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

func countsOpt(ts bool, intervalUS float64) TextOptions {
	return TextOptions{Channels: []string{"resp", "ref"}, Timestamps: ts, CountsMin: 0, CountsMax: 1023, IntervalUS: intervalUS}
}

func tf(us int64, gap bool, lost int64, vals ...float64) gotFrame {
	return gotFrame{vals: vals, us: us, hasTime: true, gap: gap, lost: lost}
}

func TestTextDecoder(t *testing.T) {
	plain := countsOpt(false, 0)
	timed := countsOpt(true, 100)
	volts := TextOptions{Channels: []string{"resp", "ref"}, Volts: true}
	signed := TextOptions{Channels: []string{"a"}, CountsMin: -2048, CountsMax: 2047}
	long := "1," + strings.Repeat("0", MaxLine) + "\n"
	cases := []struct {
		name  string
		opt   TextOptions
		in    string
		want  []gotFrame
		stats DecodeStats // Bytes and Frames filled in by the test
	}{
		{"commas, LF", plain, "1,2\n3,4\n", frames([]float64{1, 2}, []float64{3, 4}), DecodeStats{Lines: 2}},
		{"spaces, tabs, comma with spaces, CRLF", plain, "1 2\r\n3\t\t4\r\n 5 , 6 \n7,\t8\n",
			frames([]float64{1, 2}, []float64{3, 4}, []float64{5, 6}, []float64{7, 8}), DecodeStats{Lines: 4}},
		{"rails are inside the range", plain, "0,1023\n", frames([]float64{0, 1023}), DecodeStats{Lines: 1}},
		{"header reorders columns", plain, "ref,resp\n1,2\n", frames([]float64{2, 1}), DecodeStats{Lines: 1, Headers: 1}},
		{"header with spaces", plain, "resp ref\n1 2\n", frames([]float64{1, 2}), DecodeStats{Lines: 1, Headers: 1}},
		{"header naming an unknown channel is ignored", plain, "ref,force\n1,2\n", frames([]float64{1, 2}),
			DecodeStats{Lines: 1, HeaderMismatch: 1}},
		{"letters in front of a data line: dropped, and without timestamps a gap", plain, "1,2\nxq3,4\n5,6\n",
			[]gotFrame{{vals: []float64{1, 2}}, {vals: []float64{5, 6}, gap: true}}, DecodeStats{Lines: 2, HeaderMismatch: 1}},
		{"header naming a channel twice is ignored", plain, "ref,ref\n1,2\n", frames([]float64{1, 2}),
			DecodeStats{Lines: 1, HeaderMismatch: 1}},
		{"comments and blank lines are skipped", plain, "# adc0 adc1\n\n  \r\n1,2\n", frames([]float64{1, 2}), DecodeStats{Lines: 1}},
		{"bad number drops the line and marks a gap", plain, "1,2\n1x,5\n3,4\n",
			[]gotFrame{{vals: []float64{1, 2}}, {vals: []float64{3, 4}, gap: true}}, DecodeStats{Lines: 3, BadLines: 1}},
		{"decimal point in counts is bad", plain, "1.0,2\n", nil, DecodeStats{Lines: 1, BadLines: 1}},
		{"too many columns", plain, "1,2,3\n3,4\n", []gotFrame{{vals: []float64{3, 4}, gap: true}}, DecodeStats{Lines: 2, ColumnErrors: 1}},
		{"too few columns", plain, "1\n", nil, DecodeStats{Lines: 1, ColumnErrors: 1}},
		{"empty field", plain, "1,,2\n", nil, DecodeStats{Lines: 1, ColumnErrors: 1}},
		{"comma at the end", plain, "1,2,\n", nil, DecodeStats{Lines: 1, ColumnErrors: 1}},
		{"count above the range", plain, "1024,5\n", nil, DecodeStats{Lines: 1, RangeErrors: 1}},
		{"count below the range", plain, "-1,5\n", nil, DecodeStats{Lines: 1, RangeErrors: 1}},
		{"signs", signed, "+5\n-2048\n", frames([]float64{5}, []float64{-2048}), DecodeStats{Lines: 2}},
		{"line too long", plain, long + "1,2\n", []gotFrame{{vals: []float64{1, 2}, gap: true}}, DecodeStats{Lines: 2, BadLines: 1}},
		{"volts", volts, "1.25,-0.5\n.5,2.5e-3\n-3,+4E+1\n",
			frames([]float64{1.25, -0.5}, []float64{0.5, 0.0025}, []float64{-3, 40}), DecodeStats{Lines: 3}},
		{"a line starting with a letter is a header", volts, "nan,1\n", nil, DecodeStats{HeaderMismatch: 1}},
		{"volts refuses nan, inf, hex and stray letters", volts, "-nan,1\n+inf,1\n0x1p3,1\n1e,1\n1.5v,1\n.,1\n", nil,
			DecodeStats{Lines: 6, BadLines: 6}},

		// Timestamps, expected interval 100 µs.
		{"steady timestamps", timed, "1000,1,2\n1100,3,4\n1199,5,6\n",
			[]gotFrame{tf(1000, false, 0, 1, 2), tf(1100, false, 0, 3, 4), tf(1199, false, 0, 5, 6)}, DecodeStats{Lines: 3}},
		{"counter wraps at 2^32", timed, "4294967200,1,2\n4,3,4\n104,5,6\n",
			[]gotFrame{tf(4294967200, false, 0, 1, 2), tf(4294967300, false, 0, 3, 4), tf(4294967400, false, 0, 5, 6)}, DecodeStats{Lines: 3}},
		{"dropped line: gap, one frame lost", timed, "1000,1,2\n1100,3,4\n1300,7,8\n1400,9,10\n",
			[]gotFrame{tf(1000, false, 0, 1, 2), tf(1100, false, 0, 3, 4), tf(1300, true, 1, 7, 8), tf(1400, false, 0, 9, 10)},
			DecodeStats{Lines: 4, TimeJumps: 1, LostFrames: 1}},
		{"damaged timestamp is dropped", timed, "1000,1,2\n1100,3,4\n1200,5,6\n91300,7,8\n1400,9,10\n1500,11,12\n",
			[]gotFrame{tf(1000, false, 0, 1, 2), tf(1100, false, 0, 3, 4), tf(1200, false, 0, 5, 6), tf(1400, true, 1, 9, 10), tf(1500, false, 0, 11, 12)},
			DecodeStats{Lines: 6, TimeJumps: 2, TimeRejects: 1, LostFrames: 1}},
		{"damaged first line is never delivered", timed, "99999,1,2\n1000,3,4\n1100,5,6\n",
			[]gotFrame{tf(1000, false, 0, 3, 4), tf(1100, false, 0, 5, 6)}, DecodeStats{Lines: 3, TimeRejects: 1}},
		{"device restart: header again, counter from 0", timed, "t_us,resp,ref\n5000,1,2\n5100,3,4\nt_us,resp,ref\n0,5,6\n100,7,8\n",
			[]gotFrame{tf(5000, false, 0, 1, 2), tf(5100, false, 0, 3, 4), tf(5200, true, 0, 5, 6), tf(5300, false, 0, 7, 8)},
			DecodeStats{Lines: 4, Headers: 2, TimeJumps: 1}},
		{"timestamp header reorders", timed, "time ref resp\n1000 1 2\n1100 3 4\n",
			[]gotFrame{tf(1000, false, 0, 2, 1), tf(1100, false, 0, 4, 3)}, DecodeStats{Lines: 2, Headers: 1}},
		{"timestamp beyond 32 bits", timed, "4294967296,1,2\n", nil, DecodeStats{Lines: 1, RangeErrors: 1}},
		{"negative timestamp", timed, "-100,1,2\n", nil, DecodeStats{Lines: 1, BadLines: 1}},
		{"bad line between good ones: no gap, the timestamps show nothing was lost", timed,
			"1000,1,2\n!!\n1100,3,4\n", []gotFrame{tf(1000, false, 0, 1, 2), tf(1100, false, 0, 3, 4)},
			DecodeStats{Lines: 3, BadLines: 1}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var col collector
			d, err := NewTextDecoder(c.opt, &col)
			if err != nil {
				t.Fatal(err)
			}
			d.Write([]byte(c.in))
			if !reflect.DeepEqual(col.frames, c.want) {
				t.Errorf("frames\n got %+v\nwant %+v", col.frames, c.want)
			}
			want := c.stats
			want.Bytes = uint64(len(c.in))
			want.Frames = uint64(len(c.want))
			if got := d.Stats(); got != want {
				t.Errorf("stats\n got %+v\nwant %+v", got, want)
			}
		})
	}
}

// TestTextIntervalEstimate: with no configured rate the interval is the
// median of the first 16 intervals, so jitter and one damaged timestamp do
// not move it (the median's breakdown point is 50 %; common practice).
func TestTextIntervalEstimate(t *testing.T) {
	var in strings.Builder
	var want []gotFrame
	// Jitter of 0, 4, 0, 4, … µs makes the intervals alternate 1004, 996;
	// the line of frame 6 is damaged, which spoils two of the 16 intervals
	// (one far too long, one negative) and leaves 7 of each value: the
	// median is (996+1004)/2 = 1000 exactly.
	const tUS = 1000
	for i := range 20 {
		ts := tUS + int64(i)*1000 + 4*int64(i%2)
		raw := ts
		if i == 6 {
			in.WriteString("7") // a damaged line: a digit glued in front
		}
		in.WriteString(strings.Join([]string{itoa(raw), itoa(int64(i)), itoa(int64(2 * i))}, ","))
		in.WriteString("\n")
		if i != 6 {
			gap, lost := false, int64(0)
			if i == 7 {
				gap, lost = true, 1
			}
			want = append(want, tf(ts, gap, lost, float64(i), float64(2*i)))
		}
	}
	var col collector
	d, err := NewTextDecoder(countsOpt(true, 0), &col)
	if err != nil {
		t.Fatal(err)
	}
	d.Write([]byte(in.String()))
	if got := d.IntervalUS(); got != 1000 {
		t.Errorf("IntervalUS = %v, want 1000 (the median)", got)
	}
	if !reflect.DeepEqual(col.frames, want) {
		t.Errorf("frames\n got %+v\nwant %+v", col.frames, want)
	}
}

func itoa(v int64) string { return strconv.FormatInt(v, 10) }

// TestTextDecoderPieces: line ends may fall anywhere between Writes.
func TestTextDecoderPieces(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	var stream []byte
	tUS := uint32(4294900000)
	for i := range 2000 {
		switch rng.IntN(20) {
		case 0:
			stream = append(stream, "#note\n"...)
		case 1:
			stream = append(stream, "12,x,5\n"...)
		case 2:
			continue // a lost line
		}
		stream = AppendLine(stream, tUS+uint32(i)*250, true, []int64{int64(rng.IntN(1024)), int64(rng.IntN(1024))})
	}
	decode := func(cut func() int) ([]gotFrame, DecodeStats) {
		var col collector
		d, err := NewTextDecoder(countsOpt(true, 0), &col)
		if err != nil {
			t.Fatal(err)
		}
		for rest := stream; len(rest) > 0; {
			k := min(cut(), len(rest))
			d.Write(rest[:k])
			rest = rest[k:]
		}
		return col.frames, d.Stats()
	}
	whole, ws := decode(func() int { return len(stream) })
	if len(whole) < 1500 || ws.TimeJumps == 0 || ws.BadLines == 0 {
		t.Fatalf("test stream too tame: %d frames, %+v", len(whole), ws)
	}
	for name, cut := range map[string]func() int{
		"single bytes":  func() int { return 1 },
		"random pieces": func() int { return 1 + rng.IntN(100) },
	} {
		got, st := decode(cut)
		if !reflect.DeepEqual(got, whole) || st != ws {
			t.Errorf("%s: %d frames %+v; whole: %d frames %+v", name, len(got), st, len(whole), ws)
		}
	}
}

// TestTextDecoderAllocs: steady-state decoding allocates nothing, for counts
// and for volts (strconv.ParseFloat on a short non-escaping string).
func TestTextDecoderAllocs(t *testing.T) {
	for _, volts := range []bool{false, true} {
		opt := countsOpt(true, 1000)
		var lines []byte
		for i := range 200 {
			if volts {
				lines = append(lines, itoa(int64(i*1000))...)
				lines = append(lines, ",1.2345,-0.25e-1\n"...)
			} else {
				lines = AppendLine(lines, uint32(i*1000), true, []int64{int64(i), 1023 - int64(i)})
			}
		}
		opt.Volts = volts
		d, err := NewTextDecoder(opt, FrameSinkFunc(func(*Frame) {}))
		if err != nil {
			t.Fatal(err)
		}
		if a := testing.AllocsPerRun(20, func() { d.Reset(); d.Write(lines) }); a != 0 {
			t.Errorf("volts=%v: %v allocations per Write, want 0", volts, a)
		}
		if d.Stats().Frames == 0 || d.Stats().Rejected() != 0 {
			t.Errorf("volts=%v: stats %+v", volts, d.Stats())
		}
	}
}
