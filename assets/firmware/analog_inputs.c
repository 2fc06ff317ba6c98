/* Analog inputs on the on-chip 10-bit converter, referenced to AVCC.
 *
 * The converter runs at 16 MHz / 128 = 125 kHz (inside the 50–200 kHz the part needs for its
 * full resolution, common practice for this chip), 13 converter clocks a conversion: 104 µs
 * an input, 0.6 ms for all six. The main loop polls it, so nothing waits and no interrupt can
 * delay a pulse edge. Each count goes out on the protocol's 12-bit scale with its top bits
 * repeated below (v → 4v + v / 256: 0 → 0, 1023 → 4095; PROTOCOL.md §4). */
#include "analog_inputs.h"

#include <avr/io.h>

static uint16_t readings[ANALOG_INPUTS];
static uint8_t input;

static void start(uint8_t next) {
    input = next;
    ADMUX = (uint8_t)(_BV(REFS0) | next); /* AVCC reference, right-adjusted, ADCn */
    ADCSRA |= _BV(ADSC);
}

void analog_inputs_init(void) {
    DIDR0 = 0x3F; /* PC0–PC5: no digital input buffers, which would draw current */
    ADCSRA = _BV(ADEN) | _BV(ADPS2) | _BV(ADPS1) | _BV(ADPS0);
    start(0);
}

void analog_inputs_poll(void) {
    if (ADCSRA & _BV(ADSC)) {
        return;
    }
    uint16_t count = ADC; /* read before the multiplexer changes */
    readings[input] = (uint16_t)((count << 2) | (count >> 8));
    start((uint8_t)(input + 1 < ANALOG_INPUTS ? input + 1 : 0));
}

void analog_inputs_read(uint16_t out[ANALOG_INPUTS]) {
    for (uint8_t i = 0; i < ANALOG_INPUTS; i++) {
        out[i] = readings[i];
    }
}
