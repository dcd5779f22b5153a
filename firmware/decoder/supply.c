#include "supply.h"
#include <avr/io.h>

#define BAD_READINGS_TO_REPORT 3
#define SETTLING_READINGS 2
#define REPEAT_EVERY_TICKS 610 /* ≈ 60 s at 98.304 ms */

static uint8_t settling;
static uint8_t bad_in_row;
static uint16_t ticks_since_report;
static uint8_t reported;

void supply_start(void)
{
	ADMUX = _BV(REFS0) | 0x0E;                               /* reference AVcc, input: the 1.1 V bandgap */
	ADCSRA = _BV(ADEN) | _BV(ADPS2) | _BV(ADPS1) | _BV(ADPS0); /* 16 MHz / 128 = 125 kHz */
	ADCSRA |= _BV(ADSC);
	settling = SETTLING_READINGS;
}

uint8_t supply_on_tick(void)
{
	if (ADCSRA & _BV(ADSC)) return 0; /* still converting (never, at one reading per 98 ms) */
	uint16_t adc = ADC;
	ADCSRA |= _BV(ADSC);
	if (settling) {
		settling--;
		return 0;
	}
	uint8_t bad = adc > SUPPLY_ADC_AT_LOW_LIMIT || adc < SUPPLY_ADC_AT_HIGH_LIMIT;
	if (!bad) {
		bad_in_row = 0;
		reported = 0;
		return 0;
	}
	if (bad_in_row < BAD_READINGS_TO_REPORT) bad_in_row++;
	if (bad_in_row < BAD_READINGS_TO_REPORT) return 0;
	if (!reported || ++ticks_since_report >= REPEAT_EVERY_TICKS) {
		reported = 1;
		ticks_since_report = 0;
		return 1;
	}
	return 0;
}
