/* Analog inputs: the on-chip converter reads ADC0–ADC5 (pins PC0–PC5) in turn, for a
 * hand-guided input arm of potentiometers (or servos with their feedback wire brought out). */
#ifndef ARMWRIGHT_ANALOG_INPUTS_H
#define ARMWRIGHT_ANALOG_INPUTS_H

#include <stdint.h>

#define ANALOG_INPUTS 6

void analog_inputs_init(void);
/* Call from the main loop: takes a finished conversion and starts the next input's. Never
 * waits. */
void analog_inputs_poll(void);
/* The newest reading of every input, input 0 first, on the protocol's 12-bit scale (0–4095). */
void analog_inputs_read(uint16_t readings[ANALOG_INPUTS]);

#endif
