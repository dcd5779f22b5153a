/*
 * Decoder protocol v1 lines (README, "Decoder protocol, version 1"): BODY*CCCC\n, where CCCC is the
 * CRC-16/CCITT-FALSE of BODY in upper-case hex. Every EDGE, TICK and FAULT carries the next seq.
 */
#ifndef LINES_H
#define LINES_H

#include <stdint.h>

/* The longest line this firmware writes: "FAULT 65535 4294967295 OVERRUN*CCCC\n" is 36 bytes. */
#define LINE_MAX 40

/* CRC-16/CCITT-FALSE: poly 0x1021, init 0xFFFF, no reflection, xorout 0; check value 0x29B1. */
uint16_t crc16_ccitt_false(const char *data, uint8_t n);

/* Each writes one whole line into out (at least LINE_MAX bytes) and returns its length. */
uint8_t line_hello(char *out);
uint8_t line_edge(char *out, uint16_t seq, uint32_t time_us, uint8_t loop, char band);
uint8_t line_tick(char *out, uint16_t seq, uint32_t time_us, const char *bands);
uint8_t line_fault(char *out, uint16_t seq, uint32_t time_us, const char *code);

#endif
