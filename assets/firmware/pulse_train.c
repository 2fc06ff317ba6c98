/* Servo pulses timed in software from Timer1.
 *
 * Timer1 runs free in normal mode at 0.5 µs a tick (16 MHz, prescaler 8). Each edge has an
 * exact tick; the compare-match interrupt is set to fire EARLY_TICKS before it, prepares
 * the port values, then waits for the counter to reach the edge and writes the ports. That
 * way a receive interrupt that delays the compare interrupt does not move the edge.
 *
 * A frame: channel 0 rises at the frame start; when channel i falls, channel i + 1 rises
 * in the same port write; after the last channel falls, nothing until the next frame
 * start, FRAME_TICKS after the previous one. Seven channels of at most 2.5 ms take 17.5 ms
 * of the 20 ms frame. A new setpoint is only taken at a frame start, so a frame never
 * mixes two setpoints. A channel set to PULSE_NONE keeps its pin low for the shortest
 * pulse's time, so the channels after it keep their place in the frame.
 *
 * Pins: channels 0–5 on PD2–PD7, channel 6 (gripper) on PB0. */
#include "pulse_train.h"

#include <avr/interrupt.h>
#include <avr/io.h>

#define EARLY_TICKS 40u /* 20 µs: longer than any other interrupt can take */

static volatile uint16_t pending_ticks[PULSE_CHANNELS];
static volatile uint8_t pending_ready;
static volatile uint8_t pending_on;

/* Owned by the interrupt. */
static uint16_t active_ticks[PULSE_CHANNELS];
static uint8_t output_on;
static uint8_t step; /* 0: next edge is a frame start; i: next edge ends channel i - 1 */
static uint16_t next_edge;
static uint16_t frame_start;

void pulse_train_init(void) {
    DDRD |= 0xFC; /* PD2–PD7 */
    DDRB |= _BV(PB0);
    PORTD &= 0x03;
    PORTB &= (uint8_t)~_BV(PB0);
    for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
        active_ticks[i] = 3000u;
    }
    TCCR1A = 0;
    TCCR1B = _BV(CS11);
    next_edge = (uint16_t)(TCNT1 + 2000u);
    OCR1A = (uint16_t)(next_edge - EARLY_TICKS);
    TIFR1 = _BV(OCF1A);
    TIMSK1 = _BV(OCIE1A);
}

void pulse_train_set(const uint16_t ticks[PULSE_CHANNELS]) {
    uint8_t sreg = SREG;
    cli();
    for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
        pending_ticks[i] = ticks[i];
    }
    pending_on = 1;
    pending_ready = 1;
    SREG = sreg;
}

void pulse_train_hold(void) {
    pending_ready = 0; /* one byte: atomic */
}

void pulse_train_release(void) {
    uint8_t sreg = SREG;
    cli();
    pending_on = 0;
    pending_ready = 1;
    SREG = sreg;
}

uint8_t pulse_train_pending(void) {
    return pending_ready; /* one byte: atomic */
}

uint8_t pulse_train_active(void) {
    uint8_t sreg = SREG;
    cli();
    uint8_t active = pending_ready ? pending_on : output_on;
    SREG = sreg;
    return active;
}

uint8_t pulse_train_output(uint16_t ticks[PULSE_CHANNELS]) {
    uint8_t sreg = SREG;
    cli();
    uint8_t on = output_on;
    for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
        ticks[i] = active_ticks[i];
    }
    SREG = sreg;
    return on;
}

/* Port D bit of channel `ch` (0 for the gripper, which is on port B). */
static inline uint8_t port_d_bit(uint8_t ch) {
    return ch < 6 ? (uint8_t)(1u << (ch + 2)) : 0;
}

ISR(TIMER1_COMPA_vect) {
    uint16_t edge = next_edge;
    uint8_t fall_d = 0, rise_d = 0, fall_b = 0, rise_b = 0;
    uint16_t interval;

    if (step == 0) {
        if (pending_ready) {
            for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
                active_ticks[i] = pending_ticks[i];
            }
            output_on = pending_on;
            pending_ready = 0;
        }
        frame_start = edge;
        if (output_on) {
            if (active_ticks[0] != PULSE_NONE) {
                rise_d = port_d_bit(0);
            }
            interval = active_ticks[0] != PULSE_NONE ? active_ticks[0] : PULSE_MIN_TICKS;
            step = 1;
        } else {
            interval = FRAME_TICKS;
        }
    } else {
        uint8_t ending = (uint8_t)(step - 1);
        if (ending < 6) {
            fall_d = port_d_bit(ending);
        } else {
            fall_b = _BV(PB0);
        }
        if (step < PULSE_CHANNELS) {
            uint16_t width = active_ticks[step];
            if (width == PULSE_NONE) {
                width = PULSE_MIN_TICKS;
            } else if (step < 6) {
                rise_d = port_d_bit(step);
            } else {
                rise_b = _BV(PB0);
            }
            interval = width;
            step++;
        } else {
            interval = (uint16_t)(frame_start + FRAME_TICKS - edge);
            step = 0;
        }
    }
    uint8_t port_d = (uint8_t)((PORTD & (uint8_t)~fall_d) | rise_d);
    uint8_t port_b = (uint8_t)((PORTB & (uint8_t)~fall_b) | rise_b);

    while ((int16_t)(TCNT1 - edge) < 0) {
    }
    PORTD = port_d;
    PORTB = port_b;

    next_edge = (uint16_t)(edge + interval);
    OCR1A = (uint16_t)(next_edge - EARLY_TICKS);
}
