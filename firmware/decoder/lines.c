#include "lines.h"
#include "pins.h"
#include "version.h"
#include <avr/pgmspace.h>

uint16_t crc16_ccitt_false(const char *data, uint8_t n)
{
	uint16_t crc = 0xFFFF;
	for (uint8_t i = 0; i < n; i++) {
		crc ^= (uint16_t)((uint8_t)data[i]) << 8;
		for (uint8_t bit = 0; bit < 8; bit++) crc = (crc & 0x8000) ? (uint16_t)((crc << 1) ^ 0x1021) : (uint16_t)(crc << 1);
	}
	return crc;
}

static char *put_text(char *p, const char *text)
{
	while (*text) *p++ = *text++;
	return p;
}

static char *put_text_P(char *p, PGM_P text)
{
	char c;
	while ((c = (char)pgm_read_byte(text++)) != 0) *p++ = c;
	return p;
}

/* Plain decimal, no leading zeros, as the protocol wants. */
static char *put_decimal(char *p, uint32_t value)
{
	char digits[10];
	uint8_t n = 0;
	do {
		digits[n++] = (char)('0' + value % 10);
		value /= 10;
	} while (value != 0);
	while (n) *p++ = digits[--n];
	return p;
}

static const char HEX[] PROGMEM = "0123456789ABCDEF";

/* Appends *CCCC and LF to the body that runs from start to p; returns the whole length. */
static uint8_t seal(char *start, char *p)
{
	uint16_t crc = crc16_ccitt_false(start, (uint8_t)(p - start));
	*p++ = '*';
	for (int8_t shift = 12; shift >= 0; shift -= 4) *p++ = (char)pgm_read_byte(&HEX[(crc >> shift) & 0xF]);
	*p++ = '\n';
	return (uint8_t)(p - start);
}

static char *put_seq_time(char *p, uint16_t seq, uint32_t time_us)
{
	p = put_decimal(p, seq);
	*p++ = ' ';
	p = put_decimal(p, time_us);
	*p++ = ' ';
	return p;
}

uint8_t line_hello(char *out)
{
	char *p = put_text_P(out, PSTR("HELLO 1 "));
	p = put_decimal(p, LOOPS);
	*p++ = ' ';
	p = put_text_P(p, PSTR(FIRMWARE_NAME));
	return seal(out, p);
}

uint8_t line_edge(char *out, uint16_t seq, uint32_t time_us, uint8_t loop, char band)
{
	char *p = put_text_P(out, PSTR("EDGE "));
	p = put_seq_time(p, seq, time_us);
	p = put_decimal(p, loop);
	*p++ = ' ';
	*p++ = band;
	return seal(out, p);
}

uint8_t line_tick(char *out, uint16_t seq, uint32_t time_us, const char *bands)
{
	char *p = put_text_P(out, PSTR("TICK "));
	p = put_seq_time(p, seq, time_us);
	for (uint8_t i = 0; i < LOOPS; i++) *p++ = bands[i];
	return seal(out, p);
}

uint8_t line_fault(char *out, uint16_t seq, uint32_t time_us, const char *code)
{
	char *p = put_text_P(out, PSTR("FAULT "));
	p = put_seq_time(p, seq, time_us);
	p = put_text(p, code);
	return seal(out, p);
}
