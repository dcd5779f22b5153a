/*
 * Capture: the pin-change and timer interrupts and the ring they fill. Every pin change becomes a
 * snapshot of all three input ports with its 32-bit microsecond time; the timer adds a TICK
 * snapshot every 3 overflows (98.304 ms); the main loop adds supply faults. The ring keeps time
 * order because every entry is stamped with interrupts off at the moment it is pushed.
 */
#ifndef CAPTURE_H
#define CAPTURE_H

#include <stdint.h>

enum { ENTRY_CHANGE = 0, ENTRY_TICK = 1, ENTRY_SUPPLY = 2 };
/* Set on the newest entry when something after it had to be thrown away: FAULT OVERRUN follows it. */
#define ENTRY_OVERRUN_AFTER 0x80
#define ENTRY_KIND_MASK 0x0F

typedef struct {
	uint32_t time_us;
	uint8_t ports[3]; /* PINB, PINC, PIND */
	uint8_t kind;
	uint8_t weight; /* lines it may still produce, counted against the ring's line budget */
} entry_t;

/* Ring size: a power of two; the line budget in capture.c is what limits it in a burst. */
#define RING_SIZE 64

/* Starts the clock at clock_start_us; fills ports with the inputs as they were when watching began
 * (interrupts still off) and returns the time of that instant. */
uint32_t capture_start(uint32_t clock_start_us, uint8_t ports[3]);
/* True while the ring holds an entry. */
uint8_t capture_has_entries(void);
/* Copies the oldest entry out; returns 0 when the ring is empty. */
uint8_t capture_pop(entry_t *out);
/* From the main loop: a supply fault stamped now, in order with the edges. Returns 0 if no room. */
uint8_t capture_push_supply(void);
/* TICK snapshots pushed so far (wraps); the main loop paces the supply check by it. */
uint8_t capture_ticks(void);
/* Entries thrown away since start (for the benchmark; never reset). */
extern volatile uint32_t capture_lost;

#endif
