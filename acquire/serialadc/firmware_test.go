package serialadc

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// firmwareHarness drives the firmware's own packing code (firmware/binary/
// packet.h and firmware/text/line.h, plain C) on the host: "crc" prints the
// CRC of "123456789", "binary" writes 40 packets, "text" writes 40 lines.
// The sample patterns are repeated in Go below.
const firmwareHarness = `
#include <stdio.h>
#include <string.h>
#include <stdint.h>
#include "packet.h"
#include "line.h"

static int16_t pattern16(uint32_t i) { return (int16_t)(uint16_t)((i * 7919u + 12345u) & 0xFFFFu); }
static uint16_t patternU(uint32_t i) { return (uint16_t)((i * 7919u) % 65536u); }

int main(int argc, char **argv)
{
	uint32_t i, k = 0;
	if (argc != 2) return 2;
	if (strcmp(argv[1], "crc") == 0) {
		const char *s = "123456789";
		uint16_t crc = 0xFFFFu;
		for (i = 0; s[i]; i++) crc = crc16_update(crc, (uint8_t)s[i]);
		printf("%04X\n", crc);
		return 0;
	}
	if (strcmp(argv[1], "binary") == 0) {
		static uint8_t out[PACKET_HEADER + 2u * 2u * 10u + 2u];
		static int16_t s[2 * 10];
		uint16_t seq = 65500u; /* wraps inside the run */
		for (i = 0; i < 40; i++) {
			uint8_t nfr = (uint8_t)(1u + i % 10u), j;
			uint16_t n;
			for (j = 0; j < 2u * nfr; j++) s[j] = pattern16(k++);
			n = packet_build(out, seq, 2, nfr, s);
			if (n != packet_size(2, nfr)) return 3;
			fwrite(out, 1, n, stdout);
			seq = (uint16_t)(seq + nfr);
		}
		return 0;
	}
	if (strcmp(argv[1], "text") == 0) {
		static char line[LINE_MAX_LEN];
		uint16_t v[2];
		uint32_t t = 4294967295u - 3u * 5000u + 1u; /* wraps after 3 lines */
		for (i = 0; i < 40; i++) {
			v[0] = patternU(k++);
			v[1] = patternU(k++);
			if (i == 0) { v[0] = 0; v[1] = 65535u; }
			fwrite(line, 1, line_build(line, t, 2, v), stdout);
			t += 5000u;
		}
		return 0;
	}
	return 2;
}
`

func buildHarness(t *testing.T) string {
	t.Helper()
	cc, err := exec.LookPath("gcc")
	if err != nil {
		t.Skip("host gcc not found: cannot compile the firmware's packing code to check it against the decoder")
	}
	dir := t.TempDir()
	src := filepath.Join(dir, "harness.c")
	if err := os.WriteFile(src, []byte(firmwareHarness), 0o644); err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(dir, "harness")
	out, err := exec.Command(cc, "-std=c99", "-Wall", "-Wextra", "-Werror",
		"-I", filepath.Join("firmware", "binary"), "-I", filepath.Join("firmware", "text"),
		"-o", bin, src).CombinedOutput()
	if err != nil {
		t.Fatalf("compiling the firmware harness: %v\n%s", err, out)
	}
	return bin
}

func runHarness(t *testing.T, bin, mode string) []byte {
	t.Helper()
	out, err := exec.Command(bin, mode).Output()
	if err != nil {
		t.Fatalf("harness %s: %v", mode, err)
	}
	return out
}

// TestFirmwareMatchesDecoder compiles the firmware's packet and line code
// with the host gcc and checks that (1) its CRC gives the published check
// value 0x29B1 for "123456789" (Ewing, catalogue of parametrised CRC
// algorithms, CRC-16/CCITT-FALSE), (2) its packets are byte for byte those
// of AppendPacket and decode to the samples it packed, and (3) its lines
// are those of AppendLine (with CR LF) and decode to the values it printed,
// across a wrap of the sequence counter and of the timestamp.
func TestFirmwareMatchesDecoder(t *testing.T) {
	bin := buildHarness(t)
	if got := strings.TrimSpace(string(runHarness(t, bin, "crc"))); got != "29B1" {
		t.Errorf("firmware CRC of \"123456789\" = %s, want 29B1", got)
	}

	pattern16 := func(i uint32) int32 { return int32(int16(uint16((i*7919 + 12345) & 0xFFFF))) }
	var want []byte
	var wantFrames []gotFrame
	k := uint32(0)
	seq := uint16(65500)
	for i := range 40 {
		nfr := 1 + i%10
		s := make([]int32, 2*nfr)
		for j := range s {
			s[j] = pattern16(k)
			k++
		}
		for j := 0; j < len(s); j += 2 {
			wantFrames = append(wantFrames, gotFrame{vals: []float64{float64(s[j]), float64(s[j+1])}})
		}
		var err error
		if want, err = AppendPacket(want, seq, 2, 2, s); err != nil {
			t.Fatal(err)
		}
		seq += uint16(nfr)
	}
	got := runHarness(t, bin, "binary")
	if !bytes.Equal(got, want) {
		t.Fatalf("firmware packets differ from AppendPacket at byte %d of %d", firstDiff(got, want), len(want))
	}
	var col collector
	d, err := NewBinaryDecoder(2, &col)
	if err != nil {
		t.Fatal(err)
	}
	d.Write(got)
	if !reflect.DeepEqual(col.frames, wantFrames) || d.Stats().Rejected() != 0 || d.Stats().SeqGaps != 0 {
		t.Fatalf("decoded %d frames (stats %+v), want %d", len(col.frames), d.Stats(), len(wantFrames))
	}

	patternU := func(i uint32) int64 { return int64((i * 7919) % 65536) }
	var wantText []byte
	var wantLines []gotFrame
	k = 0
	ts := uint32(4294967295 - 3*5000 + 1)
	us := int64(ts)
	for i := range 40 {
		v0, v1 := patternU(k), patternU(k+1)
		k += 2
		if i == 0 {
			v0, v1 = 0, 65535
		}
		line := AppendLine(nil, ts, true, []int64{v0, v1})
		wantText = append(wantText, line[:len(line)-1]...)
		wantText = append(wantText, '\r', '\n')
		wantLines = append(wantLines, tf(us, false, 0, float64(v0), float64(v1)))
		ts += 5000
		us += 5000
	}
	gotText := runHarness(t, bin, "text")
	if !bytes.Equal(gotText, wantText) {
		t.Fatalf("firmware lines differ at byte %d:\n%s", firstDiff(gotText, wantText), gotText)
	}
	col = collector{}
	td, err := NewTextDecoder(TextOptions{Channels: []string{"resp", "ref"}, Timestamps: true, CountsMin: 0, CountsMax: 65535, IntervalUS: 5000}, &col)
	if err != nil {
		t.Fatal(err)
	}
	td.Write(gotText)
	if !reflect.DeepEqual(col.frames, wantLines) || td.Stats().Rejected() != 0 {
		t.Fatalf("decoded %d lines (stats %+v), want %d", len(col.frames), td.Stats(), len(wantLines))
	}
}

// TestFirmwareBuilds runs the firmware Makefile with avr-gcc (-Wall -Wextra
// -Werror) into a temporary directory, when the AVR toolchain is installed.
func TestFirmwareBuilds(t *testing.T) {
	for _, tool := range []string{"make", "avr-gcc", "avr-objcopy"} {
		if _, err := exec.LookPath(tool); err != nil {
			t.Skipf("%s not found: install Debian's gcc-avr and avr-libc to build the firmware", tool)
		}
	}
	dir := t.TempDir()
	out, err := exec.Command("make", "-C", "firmware", "BUILD="+dir).CombinedOutput()
	if err != nil {
		t.Fatalf("make: %v\n%s", err, out)
	}
	for _, name := range []string{"text.hex", "binary.hex"} {
		b, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil || !bytes.HasPrefix(b, []byte(":")) || !bytes.Contains(b, []byte(":00000001FF")) {
			t.Errorf("%s: not an Intel HEX file with an end record (%v)", name, err)
		}
	}
}
