/*
 * packet.h - the binary packet format of sweeplock's serial ADC source,
 * plain C with no AVR dependencies, so the host can compile it too (the Go
 * test does, to check it against the decoder).
 *
 *   offset size field
 *   0      1    0xA5  sync word, first byte
 *   1      1    0x5A  sync word, second byte
 *   2      2    seq   index of the packet's first frame, modulo 65536
 *   4      1    nch   channels per frame, 1..16
 *   5      1    width bytes per sample: 2 (int16) here
 *   6      1    nfr   frames in the packet, 1..255, nch*2*nfr <= 4096
 *   7      N    data  N = nch*2*nfr bytes, frame-major, two's complement
 *   7+N    2    crc   CRC-16/CCITT-FALSE of bytes 2..6+N, low byte first
 *
 * All multi-byte fields are little-endian.
 */
#ifndef SWEEPLOCK_PACKET_H
#define SWEEPLOCK_PACKET_H

#include <stdint.h>

#define PACKET_SYNC0 0xA5u
#define PACKET_SYNC1 0x5Au
#define PACKET_HEADER 7u
#define PACKET_WIDTH16 2u

/* crc16_update adds one byte to a CRC-16/CCITT-FALSE register: polynomial
 * 0x1021, initial value 0xFFFF, no reflection, no final XOR. The check value
 * for "123456789" is 0x29B1. */
static inline uint16_t crc16_update(uint16_t crc, uint8_t b)
{
	uint8_t i;
	crc ^= (uint16_t)((uint16_t)b << 8);
	for (i = 0; i < 8; i++) {
		if (crc & 0x8000u) {
			crc = (uint16_t)((uint16_t)(crc << 1) ^ 0x1021u);
		} else {
			crc = (uint16_t)(crc << 1);
		}
	}
	return crc;
}

/* packet_size is the length in bytes of a packet of nfr frames of nch
 * 16-bit channels. */
static inline uint16_t packet_size(uint8_t nch, uint8_t nfr)
{
	return (uint16_t)(PACKET_HEADER + 2u * (uint16_t)nch * nfr + 2u);
}

/* packet_build writes one packet into out (packet_size(nch, nfr) bytes):
 * seq is the index of the first frame, samples holds nfr*nch values,
 * frame-major. It returns the number of bytes written. */
static inline uint16_t packet_build(uint8_t *out, uint16_t seq, uint8_t nch, uint8_t nfr, const int16_t *samples)
{
	uint16_t n = 0, i, crc = 0xFFFFu;
	uint16_t count = (uint16_t)nch * nfr;
	out[n++] = PACKET_SYNC0;
	out[n++] = PACKET_SYNC1;
	out[n++] = (uint8_t)(seq & 0xFFu);
	out[n++] = (uint8_t)(seq >> 8);
	out[n++] = nch;
	out[n++] = PACKET_WIDTH16;
	out[n++] = nfr;
	for (i = 0; i < count; i++) {
		uint16_t u = (uint16_t)samples[i];
		out[n++] = (uint8_t)(u & 0xFFu);
		out[n++] = (uint8_t)(u >> 8);
	}
	for (i = 2; i < n; i++) {
		crc = crc16_update(crc, out[i]);
	}
	out[n++] = (uint8_t)(crc & 0xFFu);
	out[n++] = (uint8_t)(crc >> 8);
	return n;
}

#endif
