/*
 * board.h - shared set-up for the sweeplock serial ADC firmware examples
 * (ATmega328P, e.g. an Arduino Uno, 16 MHz crystal).
 *
 * Wiring
 *   ADC0 (Arduino pin A0)  response: the displacement sensor's output
 *   ADC1 (Arduino pin A1)  reference: the drive signal, if you measure it
 *   GND                    common ground with the sensor electronics and the drive
 *
 * Bring each signal into 0..5 V before it reaches the pin: a resistor
 * divider to scale it (and, for a bipolar signal, a bias to mid-scale), then
 * an RC low-pass (for example 1 kOhm and 100 nF, corner near 1.6 kHz) to
 * keep out what the sample rate cannot represent and to give the ADC a low
 * source impedance (the datasheet asks for 10 kOhm or less). AVcc is the
 * reference, so 5 V reads as 1023 counts.
 *
 * Cautions
 *   - Never let a pin go below GND or above the supply (5 V): it damages the
 *     ADC and the sensor's protection may not save it. A series resistor of
 *     a few kOhm limits the current if it happens.
 *   - Keep mains-powered gear (amplifiers, shakers, signal generators)
 *     isolated from the board and the computer; share only a signal ground
 *     where the equipment is meant for it, and mind ground loops.
 *   - A driven resonator can break and coils and amplifiers heat: keep the
 *     drive limited and switched off when unattended.
 *   - Follow your local rules and your lab's safety officer; they come first.
 *
 * Timing: Timer1 in CTC mode ticks at RATE_HZ. Each tick starts a conversion
 * of ADC0; when it completes the ADC interrupt switches to ADC1 and converts
 * it, so ADC1 is sampled one conversion later than ADC0 (13 ADC clocks,
 * 104 us with the ADC clock at F_CPU/128 = 125 kHz): a reference channel
 * lags by that fixed delay, which the host can correct as a phase of
 * 2*pi*f*104e-6 rad at the drive frequency f. One conversion pair takes
 * 208 us, so RATE_HZ must stay below about 4500.
 */
#ifndef SWEEPLOCK_BOARD_H
#define SWEEPLOCK_BOARD_H

#include <stdint.h>
#include <avr/io.h>
#include <avr/interrupt.h>

#ifndef F_CPU
#error "F_CPU must be defined (e.g. -DF_CPU=16000000UL)"
#endif

#if (F_CPU / 8UL / RATE_HZ) > 65536UL || (F_CPU / 8UL / RATE_HZ) < 2UL
#error "RATE_HZ out of range for Timer1 with a prescaler of 8"
#endif

#if (F_CPU % (8UL * RATE_HZ)) != 0
#error "RATE_HZ must divide F_CPU/8 so the sample clock is exact"
#endif

/* uart_init sets 8 data bits, no parity, 1 stop bit at BAUD, with the
 * double-speed divider (U2X0), rounding the divider to the nearest value. */
static inline void uart_init(void)
{
	const uint16_t ubrr = (uint16_t)((F_CPU + 4UL * BAUD) / (8UL * BAUD) - 1UL);
	UBRR0H = (uint8_t)(ubrr >> 8);
	UBRR0L = (uint8_t)ubrr;
	UCSR0A = (uint8_t)(1 << U2X0);
	UCSR0B = (uint8_t)(1 << TXEN0);
	UCSR0C = (uint8_t)((1 << UCSZ01) | (1 << UCSZ00));
}

/* uart_put sends one byte, waiting for the transmit register. */
static inline void uart_put(uint8_t b)
{
	while (!(UCSR0A & (1 << UDRE0))) {
	}
	UDR0 = b;
}

static inline void uart_write(const uint8_t *p, uint16_t n)
{
	while (n--) {
		uart_put(*p++);
	}
}

static inline void uart_puts(const char *s)
{
	while (*s) {
		uart_put((uint8_t)*s++);
	}
}

/* sampler_init starts Timer1 (CTC, TOP = OCR1A, prescaler 8) and the ADC
 * (AVcc reference, ADC0 first, clock F_CPU/128, interrupt on completion). */
static inline void sampler_init(void)
{
	ADMUX = (uint8_t)(1 << REFS0);
	ADCSRA = (uint8_t)((1 << ADEN) | (1 << ADIE) | (1 << ADPS2) | (1 << ADPS1) | (1 << ADPS0));
	DIDR0 = (uint8_t)((1 << ADC0D) | (1 << ADC1D)); /* digital input off on A0, A1 */
	TCCR1A = 0;
	TCCR1B = (uint8_t)((1 << WGM12) | (1 << CS11));
	OCR1A = (uint16_t)(F_CPU / 8UL / RATE_HZ - 1UL);
	TIMSK1 = (uint8_t)(1 << OCIE1A);
}

#endif
