/*
 * pairwatch line decoder, protocol v1, for an ATmega328P at 16 MHz (README, "The decoder firmware").
 * Interrupts capture every comparator change with its time (capture.c); this loop turns the captured
 * entries into lines, one at a time as the UART has room, so a slow link backs up into the ring, whose
 * overflow is reported (FAULT OVERRUN), never hidden.
 */
#include "capture.h"
#include "lines.h"
#include "pins.h"
#include "supply.h"
#include "uart.h"
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/pgmspace.h>
#include <avr/sleep.h>
#include <avr/wdt.h>

/*
 * Test hooks, inert on a real board. The simulator harness writes clock_start_us in flash before
 * the first instruction (to start the clock just before its 32-bit wrap) and sets hang_for_test in RAM
 * to stand for a firmware hang (to prove the watchdog restart). Nothing in this firmware writes either.
 */
const uint32_t clock_start_us PROGMEM __attribute__((used)) = 0;
volatile uint8_t hang_for_test __attribute__((used));

/* MCUSR as it was at reset; cleared early so a watchdog reset cannot loop (datasheet: WDRF forces WDE). */
uint8_t reset_cause __attribute__((section(".noinit")));
void read_reset_cause(void) __attribute__((naked, used, section(".init3")));
void read_reset_cause(void)
{
	reset_cause = MCUSR;
	MCUSR = 0;
	wdt_disable();
}

static uint16_t seq;
static char reported[LOOPS];
static char line[LINE_MAX];

static char band_of(const uint8_t ports[3], uint8_t loop)
{
	const loop_pins_t *p = &LOOP_PINS[loop];
	if (ports[p->pulse_port] & _BV(p->pulse_bit)) return 'H';
	if (ports[p->standby_port] & _BV(p->standby_bit)) return 'N';
	return 'O';
}

static void send(uint8_t n)
{
	uart_queue(line, n);
}

/* Where the main loop is in turning one entry into lines. */
enum { PHASE_EDGES, PHASE_OWN_LINE, PHASE_OVERRUN, PHASE_DONE };
static entry_t current;
static uint8_t phase = PHASE_DONE;
static uint8_t next_loop;

/* Writes the next line the current entry calls for; the caller has made room for one line. */
static void next_line(void)
{
	uint8_t kind = current.kind & ENTRY_KIND_MASK;
	for (;;) {
		switch (phase) {
		case PHASE_EDGES:
			if (kind != ENTRY_SUPPLY) {
				/* A TICK also catches a change it saw before that change's own interrupt ran. */
				while (next_loop < LOOPS) {
					uint8_t i = next_loop++;
					char band = band_of(current.ports, i);
					if (band != reported[i]) {
						reported[i] = band;
						send(line_edge(line, seq++, current.time_us, (uint8_t)(i + 1), band));
						return;
					}
				}
			}
			phase = PHASE_OWN_LINE;
			break;
		case PHASE_OWN_LINE:
			phase = PHASE_OVERRUN;
			if (kind == ENTRY_TICK) {
				send(line_tick(line, seq++, current.time_us, reported));
				return;
			}
			if (kind == ENTRY_SUPPLY) {
				send(line_fault(line, seq++, current.time_us, "SUPPLY"));
				return;
			}
			break;
		case PHASE_OVERRUN:
			phase = PHASE_DONE;
			if (current.kind & ENTRY_OVERRUN_AFTER) {
				send(line_fault(line, seq++, current.time_us, "OVERRUN"));
				return;
			}
			break;
		default:
			return;
		}
	}
}

int main(void)
{
	uart_start();
	uint8_t start_ports[3];
	uint32_t started_us = capture_start(pgm_read_dword(&clock_start_us), start_ports);
	for (uint8_t i = 0; i < LOOPS; i++) reported[i] = band_of(start_ports, i);
	supply_start();
	sei();

	send(line_hello(line));
	if (reset_cause & _BV(WDRF)) send(line_fault(line, seq++, started_us, "RESTART"));
	wdt_enable(WDTO_250MS);

	uint8_t seen_ticks = capture_ticks();
	uint8_t supply_due = 0;
	set_sleep_mode(SLEEP_MODE_IDLE);
	for (;;) {
		wdt_reset();
		while (hang_for_test) {
		}

		if (phase == PHASE_DONE && capture_pop(&current)) {
			phase = PHASE_EDGES;
			next_loop = 0;
		}
		if (phase != PHASE_DONE && uart_room() >= LINE_MAX) next_line();

		uint8_t ticks = capture_ticks();
		if (ticks != seen_ticks) {
			seen_ticks = ticks;
			if (supply_on_tick()) supply_due = 1;
		}
		if (supply_due && capture_push_supply()) supply_due = 0;

		/* Sleep until an interrupt when there is nothing to write, or no room to write it. */
		cli();
		uint8_t work = (phase != PHASE_DONE && uart_room() >= LINE_MAX) || (phase == PHASE_DONE && capture_has_entries()) || capture_ticks() != seen_ticks;
		if (!work) {
			sleep_enable();
			sei();
			sleep_cpu();
			sleep_disable();
		}
		sei();
	}
}
