/*
 * Which pins carry which comparator line. Each loop has two lines, both active high (the pin reads 1
 * when the loop current is above that comparator's threshold):
 *   standby line: current above the open threshold   (0 here means band O)
 *   pulse line:   current above the high threshold   (1 here means band H)
 * Band = pulse ? H : standby ? N : O. PD0/PD1 are the UART, PB6/PB7 the crystal, PC6 reset,
 * PB5 (the board LED on common boards) and PC5 are left free, so all 16 lines fit on the rest.
 * The README's wiring table is this table; bench/firmwarePins.ts is its copy for the simulator harness.
 */
#ifndef PINS_H
#define PINS_H

#include <stdint.h>

#define LOOPS 8

/* Port letters as indexes into a 3-byte snapshot {PINB, PINC, PIND}. */
#define SNAP_B 0
#define SNAP_C 1
#define SNAP_D 2

typedef struct {
	uint8_t standby_port, standby_bit;
	uint8_t pulse_port, pulse_bit;
} loop_pins_t;

static const loop_pins_t LOOP_PINS[LOOPS] = {
	{SNAP_D, 2, SNAP_D, 3}, /* loop 1: D2 (standby), D3 (pulse) */
	{SNAP_D, 4, SNAP_D, 5}, /* loop 2: D4, D5 */
	{SNAP_D, 6, SNAP_D, 7}, /* loop 3: D6, D7 */
	{SNAP_B, 0, SNAP_B, 1}, /* loop 4: D8, D9 */
	{SNAP_B, 2, SNAP_B, 3}, /* loop 5: D10, D11 */
	{SNAP_B, 4, SNAP_C, 0}, /* loop 6: D12, A0 */
	{SNAP_C, 1, SNAP_C, 2}, /* loop 7: A1, A2 */
	{SNAP_C, 3, SNAP_C, 4}, /* loop 8: A3, A4 */
};

/* The pins above, per port, for the pin-change masks and the pull-up-free input setup. */
#define INPUTS_B 0x1F /* PB0..PB4 */
#define INPUTS_C 0x1F /* PC0..PC4 */
#define INPUTS_D 0xFC /* PD2..PD7 */

#endif
