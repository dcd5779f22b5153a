#include "uart.h"
#include <avr/interrupt.h>
#include <avr/io.h>

#define UBRR_VALUE (F_CPU / (8UL * UART_BAUD) - 1)
#if (F_CPU / (8UL * (UBRR_VALUE + 1))) != UART_BAUD
#error "UART_BAUD is not exact from F_CPU with U2X; choose another speed"
#endif

static char tx[UART_TX_SIZE];
static volatile uint8_t tx_write; /* free-running counters, index = counter % UART_TX_SIZE */
static volatile uint8_t tx_read;

ISR(USART_UDRE_vect)
{
	if (tx_read == tx_write) {
		UCSR0B &= (uint8_t)~_BV(UDRIE0);
		return;
	}
	UDR0 = tx[tx_read % UART_TX_SIZE];
	tx_read++;
}

void uart_start(void)
{
	UCSR0A = _BV(U2X0); /* before UBRR0: simavr works the rate out when UBRR0 is written */
	UBRR0 = UBRR_VALUE;
	UCSR0C = _BV(UCSZ01) | _BV(UCSZ00); /* 8 data bits, no parity, 1 stop bit */
	UCSR0B = _BV(TXEN0);
}

uint8_t uart_room(void)
{
	return (uint8_t)(UART_TX_SIZE - (uint8_t)(tx_write - tx_read));
}

void uart_queue(const char *bytes, uint8_t n)
{
	for (uint8_t i = 0; i < n; i++) tx[(uint8_t)(tx_write + i) % UART_TX_SIZE] = bytes[i];
	cli();
	tx_write += n;
	UCSR0B |= _BV(UDRIE0);
	sei();
}

uint8_t uart_idle(void)
{
	return tx_read == tx_write && (UCSR0A & _BV(UDRE0));
}
