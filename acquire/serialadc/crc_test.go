package serialadc

import (
	"math/rand/v2"
	"testing"
)

// TestCRC16CheckValue checks the published check value of CRC-16/CCITT-FALSE
// (poly 0x1021, init 0xFFFF, refin=refout=false, xorout 0) for the nine ASCII
// bytes "123456789": 0x29B1. Source: R. Ewing, "Catalogue of parametrised CRC
// algorithms" (reveng), entry CRC-16/IBM-3740, alias CRC-16/CCITT-FALSE.
func TestCRC16CheckValue(t *testing.T) {
	const want = 0x29B1
	msg := []byte("123456789")
	if got := CRC16(msg); got != want {
		t.Errorf("CRC16(%q) = %#04x, want %#04x", msg, got, want)
	}
	if got := newCRCTable().checksum(msg); got != want {
		t.Errorf("table CRC(%q) = %#04x, want %#04x", msg, got, want)
	}
	// Feeding the bytes in two pieces must give the same register.
	if got := UpdateCRC16(CRC16(msg[:4]), msg[4:]); got != want {
		t.Errorf("UpdateCRC16 in two pieces = %#04x, want %#04x", got, want)
	}
}

// TestCRC16TableMatchesBitwise: the byte-at-a-time table is an optimisation
// of the bitwise definition checked above; they must agree on any input.
func TestCRC16TableMatchesBitwise(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	tab := newCRCTable()
	for n := range 300 {
		p := make([]byte, n)
		for i := range p {
			p[i] = byte(rng.IntN(256))
		}
		if a, b := CRC16(p), tab.checksum(p); a != b {
			t.Fatalf("len %d: bitwise %#04x, table %#04x", n, a, b)
		}
	}
}

// TestCRC16DetectsBurstErrors: a CRC whose generator has degree r and a
// non-zero constant term detects every error burst of length ≤ r bits
// (W. W. Peterson and D. T. Brown, "Cyclic codes for error detection",
// Proc. IRE 49(1), 1961). Here r = 16: flip every burst of 1..16 bits,
// first and last bit set, at every position of a 40-byte message.
func TestCRC16DetectsBurstErrors(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	msg := make([]byte, 40)
	for i := range msg {
		msg[i] = byte(rng.IntN(256))
	}
	ref := CRC16(msg)
	tab := newCRCTable()
	bad := make([]byte, len(msg))
	for length := 1; length <= 16; length++ {
		for start := 0; start+length <= 8*len(msg); start++ {
			copy(bad, msg)
			// burst: first and last bit flipped, inner bits random
			for b := 0; b < length; b++ {
				if b == 0 || b == length-1 || rng.IntN(2) == 1 {
					pos := start + b
					bad[pos/8] ^= 0x80 >> (pos % 8)
				}
			}
			if tab.checksum(bad) == ref {
				t.Fatalf("burst of %d bits at bit %d not detected", length, start)
			}
		}
	}
}
