/*
 * The decoder's own supply, measured against the internal 1.1 V bandgap: with AVcc as the reference,
 * reading the bandgap channel gives ADC = 1.1 V * 1024 / Vcc, so Vcc = 1126.4 V / ADC. Checked once a
 * TICK; out of range for 3 readings in a row queues FAULT SUPPLY, repeated every minute while it lasts.
 */
#ifndef SUPPLY_H
#define SUPPLY_H

#include <stdint.h>

/* Vcc window 4.4 V .. 5.6 V (the 16 MHz part wants 4.5..5.5 V; the bandgap is only ±9 %, so margin). */
#define SUPPLY_ADC_AT_LOW_LIMIT 256  /* 1126.4 / 4.4 V */
#define SUPPLY_ADC_AT_HIGH_LIMIT 201 /* 1126.4 / 5.6 V */

void supply_start(void);
/* Call on every new TICK; returns 1 when a FAULT SUPPLY is due. */
uint8_t supply_on_tick(void);

#endif
