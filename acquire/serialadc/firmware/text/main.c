/*
 * Text line firmware for sweeplock's serial ADC source (ATmega328P, Arduino
 * Uno class, 16 MHz).
 *
 * Samples ADC0 (response) and ADC1 (reference) at RATE_HZ frames per second,
 * timer-driven, and prints one line per frame at BAUD (8N1):
 *   "t_us,resp,ref\r\n"
 * where t_us counts microseconds of the sample clock (Timer1) in an unsigned
 * 32-bit counter that wraps after 4294967295. It starts with a comment line
 * and a header line. A frame that had to be dropped because the line was
 * busy leaves a hole in the timestamps, which the host marks as a gap.
 *
 * Host config for this firmware:
 *   format = "text", baud = 115200, timestamps = true, rate_hz = 200,
 *   channels = ["resp", "ref"], counts_min = 0, counts_max = 1023,
 *   calibration gain = 5.0 / 1024 (volts per count with AVcc = 5 V).
 *
 * Wiring and cautions: see ../common/board.h.
 */
#ifndef RATE_HZ
#define RATE_HZ 200UL
#endif
#ifndef BAUD
#define BAUD 115200UL
#endif

#if (1000000UL % RATE_HZ) != 0
#error "RATE_HZ must divide 1000000 so timestamps are whole microseconds"
#endif

#include "../common/board.h"
#include "line.h"

#define NCH 2u
#define RING 16u /* frames; a power of two */
#define PERIOD_US (1000000UL / RATE_HZ)

#if (RING & (RING - 1u)) != 0
#error "RING must be a power of two"
#endif

static volatile uint16_t ring_v[RING][NCH];
static volatile uint32_t ring_t[RING];
static volatile uint8_t ring_head; /* written by the ADC interrupt only */
static volatile uint8_t ring_tail; /* written by the main loop only */

static volatile uint8_t adc_ch;
static volatile uint32_t clock_us; /* time of the latest tick */
static uint16_t cur[NCH];

/* Each timer tick advances the clock and starts a frame with ADC0. */
ISR(TIMER1_COMPA_vect)
{
	clock_us += PERIOD_US; /* wraps modulo 2^32, as the format says */
	adc_ch = 0;
	ADMUX = (uint8_t)(1 << REFS0);
	ADCSRA |= (uint8_t)(1 << ADSC);
}

ISR(ADC_vect)
{
	uint8_t c = adc_ch, next, k;
	cur[c] = ADC;
	if ((uint8_t)(c + 1u) < NCH) {
		adc_ch = (uint8_t)(c + 1u);
		ADMUX = (uint8_t)((1 << REFS0) | (c + 1u));
		ADCSRA |= (uint8_t)(1 << ADSC);
		return;
	}
	next = (uint8_t)((ring_head + 1u) & (RING - 1u));
	if (next != ring_tail) {
		for (k = 0; k < NCH; k++) {
			ring_v[ring_head][k] = cur[k];
		}
		ring_t[ring_head] = clock_us;
		ring_head = next;
	}
}

int main(void)
{
	static char line[LINE_MAX_LEN];
	static uint16_t vals[NCH];
	uart_init();
	uart_puts("# sweeplock text example: ADC0 = resp, ADC1 = ref, counts 0..1023\r\n");
	uart_puts("t_us,resp,ref\r\n");
	sampler_init();
	sei();
	for (;;) {
		uint8_t t = ring_tail, k;
		uint32_t t_us;
		if (t == ring_head) {
			continue;
		}
		t_us = ring_t[t];
		for (k = 0; k < NCH; k++) {
			vals[k] = ring_v[t][k];
		}
		ring_tail = (uint8_t)((t + 1u) & (RING - 1u));
		uart_write((const uint8_t *)line, line_build(line, t_us, (uint8_t)NCH, vals));
	}
}
