/*
 * Binary packet firmware for sweeplock's serial ADC source (ATmega328P,
 * Arduino Uno class, 16 MHz).
 *
 * Samples ADC0 (response) and ADC1 (reference) at RATE_HZ frames per second,
 * timer-driven, and sends packets of up to FRAMES_PER_PACKET frames in the
 * binary format of packet.h at BAUD (8N1). seq counts sampled frames, so a
 * frame that had to be dropped because the line was busy shows up on the
 * host as a sequence gap; a packet never spans a dropped frame.
 *
 * Host config for this firmware:
 *   format = "binary", baud = 1000000, rate_hz = 4000,
 *   channels = ["resp", "ref"], counts_min = 0, counts_max = 1023,
 *   calibration gain = 5.0 / 1024 (volts per count with AVcc = 5 V).
 *
 * Wiring and cautions: see ../common/board.h.
 */
#ifndef RATE_HZ
#define RATE_HZ 4000UL
#endif
#ifndef BAUD
#define BAUD 1000000UL
#endif

#if RATE_HZ > 4000UL
#error "two conversions take 208 us: RATE_HZ must be at most 4000"
#endif

#include "../common/board.h"
#include "packet.h"

#define NCH 2u
#define FRAMES_PER_PACKET 10u
#define RING 64u /* frames; a power of two */

#if (RING & (RING - 1u)) != 0
#error "RING must be a power of two"
#endif

static volatile int16_t ring_s[RING][NCH];
static volatile uint16_t ring_idx[RING];
static volatile uint8_t ring_head; /* written by the ADC interrupt only */
static volatile uint8_t ring_tail; /* written by the main loop only */

static volatile uint8_t adc_ch;     /* channel being converted */
static volatile uint16_t frame_idx; /* frames sampled so far, mod 65536 */
static int16_t cur[NCH];

/* Each timer tick starts a frame with a conversion of ADC0. */
ISR(TIMER1_COMPA_vect)
{
	adc_ch = 0;
	ADMUX = (uint8_t)(1 << REFS0);
	ADCSRA |= (uint8_t)(1 << ADSC);
}

/* Each finished conversion stores its channel and starts the next one; the
 * last channel completes the frame, which goes into the ring if there is
 * room. */
ISR(ADC_vect)
{
	uint8_t c = adc_ch, next, k;
	cur[c] = (int16_t)ADC;
	if ((uint8_t)(c + 1u) < NCH) {
		adc_ch = (uint8_t)(c + 1u);
		ADMUX = (uint8_t)((1 << REFS0) | (c + 1u));
		ADCSRA |= (uint8_t)(1 << ADSC);
		return;
	}
	next = (uint8_t)((ring_head + 1u) & (RING - 1u));
	if (next != ring_tail) {
		for (k = 0; k < NCH; k++) {
			ring_s[ring_head][k] = cur[k];
		}
		ring_idx[ring_head] = frame_idx;
		ring_head = next;
	}
	frame_idx++;
}

int main(void)
{
	static int16_t samples[FRAMES_PER_PACKET * NCH];
	static uint8_t out[PACKET_HEADER + 2u * NCH * FRAMES_PER_PACKET + 2u];
	uart_init();
	sampler_init();
	sei();
	for (;;) {
		uint8_t nfr = 0, k;
		uint16_t seq = 0;
		while (nfr < FRAMES_PER_PACKET) {
			uint8_t t = ring_tail;
			uint16_t idx;
			if (t == ring_head) {
				continue; /* wait for the next frame */
			}
			idx = ring_idx[t];
			if (nfr > 0 && idx != (uint16_t)(seq + nfr)) {
				break; /* a frame was dropped: send what is consecutive */
			}
			if (nfr == 0) {
				seq = idx;
			}
			for (k = 0; k < NCH; k++) {
				samples[nfr * NCH + k] = ring_s[t][k];
			}
			ring_tail = (uint8_t)((t + 1u) & (RING - 1u));
			nfr++;
		}
		uart_write(out, packet_build(out, seq, (uint8_t)NCH, nfr, samples));
	}
}
