/*
 * line.h - one data line of sweeplock's text format, plain C with no AVR
 * dependencies (the Go test compiles it on the host to check it against the
 * decoder): the microsecond timestamp, then one unsigned count per channel,
 * separated by commas, ended by CR LF, e.g. "4294967000,512,498\r\n".
 */
#ifndef SWEEPLOCK_LINE_H
#define SWEEPLOCK_LINE_H

#include <stdint.h>

/* LINE_MAX_LEN bounds a line of up to 16 channels: 10 digits of timestamp,
 * 16 times a comma and 5 digits, CR LF. */
#define LINE_MAX_LEN (10u + 16u * 6u + 2u)

/* put_u32 writes v in decimal without leading zeros and returns the number
 * of characters written (1..10). */
static inline uint8_t put_u32(char *out, uint32_t v)
{
	char tmp[10];
	uint8_t n = 0, i;
	do {
		tmp[n++] = (char)('0' + (char)(v % 10u));
		v /= 10u;
	} while (v != 0u);
	for (i = 0; i < n; i++) {
		out[i] = tmp[n - 1u - i];
	}
	return n;
}

/* line_build writes "t_us,v0,v1,...\r\n" for nch values (nch <= 16) and
 * returns its length. */
static inline uint8_t line_build(char *out, uint32_t t_us, uint8_t nch, const uint16_t *vals)
{
	uint8_t n = put_u32(out, t_us), c;
	for (c = 0; c < nch; c++) {
		out[n++] = ',';
		n = (uint8_t)(n + put_u32(out + n, vals[c]));
	}
	out[n++] = '\r';
	out[n++] = '\n';
	return n;
}

#endif
