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

/* The interrupt also watches for emergency-stop lines ("x", 2 sequence digits, "/", 4 check
 * digits: 8 bytes before the line feed) and hands a copy to the main loop at once, so a stop
 * is acted on ahead of any line still waiting in the ring. The main loop checks it. */
static uint8_t isr_line_len;
static uint8_t isr_line[SERIAL_STOP_LINE_LEN + 1];
static volatile uint8_t stop_line[SERIAL_STOP_LINE_LEN];
static volatile uint8_t stop_ready;

ISR(USART_RX_vect) {
    uint8_t byte = UDR0;
    if (byte == '\n') {
        uint8_t len = isr_line_len;
        if (len == SERIAL_STOP_LINE_LEN + 1 && isr_line[SERIAL_STOP_LINE_LEN] == '\r') {
            len = SERIAL_STOP_LINE_LEN;
        }
        if (len == SERIAL_STOP_LINE_LEN && isr_line[0] == 'x') {
            for (uint8_t i = 0; i < SERIAL_STOP_LINE_LEN; i++) {
                stop_line[i] = isr_line[i];
            }
            stop_ready = 1;
        }
        isr_line_len = 0;
    } else {
        if (isr_line_len <= SERIAL_STOP_LINE_LEN) {
            isr_line[isr_line_len] = byte;
        }
        if (isr_line_len < 255) {
            isr_line_len++;
        }
    }
    uint8_t next = (uint8_t)(rx_head + 1);
    if (next == rx_tail) {
        rx_overflow = 1;
        return;
    }
    rx_ring[rx_head] = byte;
    rx_head = next;
}

uint8_t serial_take_stop_line(uint8_t line[SERIAL_STOP_LINE_LEN]) {
    uint8_t sreg = SREG;
    cli();
    uint8_t ready = stop_ready;
    if (ready) {
        for (uint8_t i = 0; i < SERIAL_STOP_LINE_LEN; i++) {
            line[i] = stop_line[i];
        }
        stop_ready = 0;
    }
    SREG = sreg;
    return ready;
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
