/*
 * USART0 transmit, interrupt driven: lines are queued whole into a byte ring and the data-register-
 * empty interrupt feeds the wire. 250000 baud, 8N1, double speed: UBRR = f/(8*baud) - 1 = 7 exactly
 * (ATmega328P datasheet, USART baud rate formula), so the rate error is 0.0 %.
 */
#ifndef UART_H
#define UART_H

#include <stdint.h>

#define UART_BAUD 250000UL
#define UART_TX_SIZE 128

void uart_start(void);
/* Bytes that can be queued now without waiting. */
uint8_t uart_room(void);
/* Queues n bytes; the caller has checked uart_room(). */
void uart_queue(const char *bytes, uint8_t n);
/* True once every queued byte has left the shift register. */
uint8_t uart_idle(void);

#endif
