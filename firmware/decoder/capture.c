#include "capture.h"
#include "pins.h"
#include <avr/interrupt.h>
#include <avr/io.h>

/*
 * Timer 1 runs free at 16 MHz / 8 = 2 MHz, so one count is 0.5 µs and one overflow 32768 µs exactly:
 * decoder time = epoch_us + TCNT1 / 2, and epoch_us simply wraps at 2^32 as the protocol's time does.
 */
static volatile uint32_t epoch_us;
static volatile uint8_t overflows;
static volatile uint8_t ticks;
volatile uint32_t capture_lost;

static entry_t ring[RING_SIZE];
static volatile uint8_t ring_write; /* free-running counters; index = counter % RING_SIZE */
static volatile uint8_t ring_read;

#define TICK_EVERY_OVERFLOWS 3

/* Interrupts must be off. Reads the counter and a pending overflow the ISR has not counted yet. */
static inline uint32_t now_us_locked(void)
{
	uint16_t count = TCNT1;
	uint8_t flags = TIFR1;
	uint32_t epoch = epoch_us;
	if ((flags & _BV(TOV1)) && count < 0x8000) epoch += 32768;
	return epoch + (count >> 1);
}

/*
 * The ring is bounded by the lines its entries can still produce, not by entries: a change entry can
 * make at most one EDGE per changed input pin, so each entry carries that count (its weight) and the
 * ring takes no more than LINE_BUDGET lines' worth. That keeps a TICK at most about LINE_BUDGET lines
 * behind on the wire even in a burst, so the 200 ms cadence holds on the wire as in the time field.
 */
#define LINE_BUDGET 32
static volatile uint8_t budget_used;
static uint8_t last_ports[3];

static const uint8_t BITS_IN_NIBBLE[16] = {0, 1, 1, 2, 1, 2, 2, 3, 1, 2, 2, 3, 2, 3, 3, 4};
static inline uint8_t bits_in(uint8_t v) { return BITS_IN_NIBBLE[v & 0x0F] + BITS_IN_NIBBLE[v >> 4]; }

/*
 * Interrupts must be off. A TICK may use the reserve kept back from everything else (one slot and one
 * TICK plus its catch-up EDGEs), so the cadence survives a burst. When there is no room, the newest
 * entry is marked: the loss is reported right after it as FAULT OVERRUN, never silently.
 */
static inline uint8_t push_locked(uint8_t kind, uint32_t time_us, uint8_t b, uint8_t c, uint8_t d)
{
	uint8_t used = (uint8_t)(ring_write - ring_read);
	uint8_t weight;
	uint8_t room;
	if (kind == ENTRY_TICK) {
		weight = 1 + LOOPS; /* the TICK and, at worst, one catch-up EDGE per loop */
		room = (uint8_t)(RING_SIZE - used) >= 1; /* never refused for budget: the cadence comes first */
	} else {
		weight = kind == ENTRY_CHANGE ? bits_in((uint8_t)(b ^ last_ports[0])) + bits_in((uint8_t)(c ^ last_ports[1])) + bits_in((uint8_t)(d ^ last_ports[2])) : 1;
		room = (uint8_t)(RING_SIZE - used) >= 2 && (uint8_t)(budget_used + weight) <= LINE_BUDGET;
	}
	if (!room) {
		entry_t *newest = &ring[(uint8_t)(ring_write - 1) % RING_SIZE];
		if (used && !(newest->kind & ENTRY_OVERRUN_AFTER)) {
			newest->kind |= ENTRY_OVERRUN_AFTER;
			newest->weight++; /* its FAULT OVERRUN line */
			budget_used++;
		}
		capture_lost++;
		return 0;
	}
	if (kind != ENTRY_SUPPLY) {
		last_ports[0] = b;
		last_ports[1] = c;
		last_ports[2] = d;
	}
	entry_t *e = &ring[ring_write % RING_SIZE];
	e->time_us = time_us;
	e->ports[0] = b;
	e->ports[1] = c;
	e->ports[2] = d;
	e->kind = kind;
	e->weight = weight;
	budget_used += weight;
	ring_write++;
	return 1;
}

/*
 * All three pin-change vectors run this one routine: the flags of all three ports are cleared before
 * the ports are read, so changes that land together are one snapshot with one time, and a change
 * after the read raises its flag again and gets its own snapshot. No filtering: every change counts.
 */
ISR(PCINT0_vect)
{
	PCIFR = _BV(PCIF0) | _BV(PCIF1) | _BV(PCIF2);
	uint8_t b = PINB, c = PINC, d = PIND;
	/* Stamped after the read, so a change in the snapshot is never dated before it happened. */
	uint32_t t = now_us_locked();
	push_locked(ENTRY_CHANGE, t, b & INPUTS_B, c & INPUTS_C, d & INPUTS_D);
}
ISR(PCINT1_vect, ISR_ALIASOF(PCINT0_vect));
ISR(PCINT2_vect, ISR_ALIASOF(PCINT0_vect));

ISR(TIMER1_OVF_vect)
{
	epoch_us += 32768;
	if (++overflows >= TICK_EVERY_OVERFLOWS) {
		overflows = 0;
		uint32_t t = now_us_locked();
		push_locked(ENTRY_TICK, t, PINB & INPUTS_B, PINC & INPUTS_C, PIND & INPUTS_D);
		ticks++;
	}
}

uint32_t capture_start(uint32_t clock_start_us, uint8_t ports[3])
{
	DDRB &= (uint8_t)~INPUTS_B;
	DDRC &= (uint8_t)~INPUTS_C;
	DDRD &= (uint8_t)~INPUTS_D;
	/* No internal pull-ups: the front end drives the lines (README: comparator outputs need their own pull-up). */
	PORTB &= (uint8_t)~INPUTS_B;
	PORTC &= (uint8_t)~INPUTS_C;
	PORTD &= (uint8_t)~INPUTS_D;
	PCMSK0 = INPUTS_B;
	PCMSK1 = INPUTS_C;
	PCMSK2 = INPUTS_D;

	/* The start value is whole overflows' worth below it plus the counter, so any start µs is exact. */
	epoch_us = clock_start_us - (clock_start_us % 32768UL);
	TCCR1A = 0;
	TIMSK1 = _BV(TOIE1);
	PCIFR = _BV(PCIF0) | _BV(PCIF1) | _BV(PCIF2);
	PCICR = _BV(PCIE0) | _BV(PCIE1) | _BV(PCIE2);
	TCCR1B = _BV(CS11); /* clk/8: the clock starts here */
	/* The part of the start value below one overflow goes into the running counter (simavr, like the
	 * part, honours a TCNT1 write while the timer runs; the two cycles before it are overwritten). */
	TCNT1 = (uint16_t)((clock_start_us % 32768UL) * 2);
	TIFR1 = _BV(TOV1);
	/* Changes from here on raise a flag and are captured once interrupts are on; earlier ones are in this sample. */
	uint32_t t = now_us_locked();
	ports[0] = last_ports[0] = PINB & INPUTS_B;
	ports[1] = last_ports[1] = PINC & INPUTS_C;
	ports[2] = last_ports[2] = PIND & INPUTS_D;
	return t;
}

uint8_t capture_has_entries(void)
{
	return ring_read != ring_write;
}

uint8_t capture_pop(entry_t *out)
{
	uint8_t got = 0;
	cli();
	if (ring_read != ring_write) {
		*out = ring[ring_read % RING_SIZE];
		ring_read++;
		budget_used -= out->weight;
		got = 1;
	}
	sei();
	return got;
}

uint8_t capture_push_supply(void)
{
	cli();
	uint8_t ok = push_locked(ENTRY_SUPPLY, now_us_locked(), 0, 0, 0);
	sei();
	return ok;
}

uint8_t capture_ticks(void)
{
	return ticks;
}
