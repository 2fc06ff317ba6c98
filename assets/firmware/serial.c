/* Serial port: 115 200 baud 8N1 on the on-chip UART, both directions through rings.
 *
 * The interrupts only move one byte (a few dozen cycles), so they can never delay a pulse
 * edge by more than the pulse timer's early-wake margin (see pulse_train.c). Sending never
 * makes the main loop wait unless the send ring is full, so an emergency-stop line is read
 * and acted on within a fraction of a millisecond of its arrival. */
#include "serial.h"

#include <avr/interrupt.h>
#include <avr/io.h>

/* 16 MHz / (8 × (16 + 1)) = 117 647 baud with double speed: 2.1 % from 115 200, inside
 * the receiver's tolerance (common practice for 16 MHz parts). */
#define SERIAL_UBRR 16

static volatile uint8_t rx_ring[256];
static volatile uint8_t rx_head; /* written by the interrupt; uint8_t wraps at 256 */
static volatile uint8_t rx_tail; /* written by the main loop */
static volatile uint8_t rx_overflow;

#define TX_MASK 127u
static volatile uint8_t tx_ring[TX_MASK + 1];
static volatile uint8_t tx_head; /* written by the main loop */
static volatile uint8_t tx_tail; /* written by the interrupt */

void serial_init(void) {
    /* Speed mode and frame format first, divider last: some simulators work out the byte
     * time when the divider is written. */
    UCSR0A = _BV(U2X0);
    UCSR0C = _BV(UCSZ01) | _BV(UCSZ00);
    UBRR0 = SERIAL_UBRR;
    UCSR0B = _BV(RXEN0) | _BV(TXEN0) | _BV(RXCIE0);
}

ISR(USART_RX_vect) {
    uint8_t byte = UDR0;
    uint8_t next = (uint8_t)(rx_head + 1);
    if (next == rx_tail) {
        rx_overflow = 1;
        return;
    }
    rx_ring[rx_head] = byte;
    rx_head = next;
}

int16_t serial_read(void) {
    uint8_t tail = rx_tail;
    if (tail == rx_head) {
        return -1;
    }
    uint8_t byte = rx_ring[tail];
    rx_tail = (uint8_t)(tail + 1);
    return byte;
}

uint8_t serial_free(void) {
    return (uint8_t)(255 - (uint8_t)(rx_head - rx_tail));
}

uint8_t serial_take_overflow(void) {
    uint8_t seen = rx_overflow;
    rx_overflow = 0;
    return seen;
}

void serial_write(const uint8_t *bytes, uint8_t len) {
    for (uint8_t i = 0; i < len; i++) {
        uint8_t next = (uint8_t)((tx_head + 1) & TX_MASK);
        while (next == tx_tail) {
            /* ring full: wait for the interrupt to make room */
        }
        tx_ring[tx_head] = bytes[i];
        tx_head = next;
        UCSR0B |= _BV(UDRIE0);
    }
}

ISR(USART_UDRE_vect) {
    uint8_t tail = tx_tail;
    if (tail == tx_head) {
        UCSR0B &= (uint8_t)~_BV(UDRIE0);
        return;
    }
    UDR0 = tx_ring[tail];
    tx_tail = (uint8_t)((tail + 1) & TX_MASK);
}
