/* Servo pulses timed in software from Timer1 (0.5 µs a tick), one channel after another
 * in a 20 ms frame. */
#ifndef ARMWRIGHT_PULSE_TRAIN_H
#define ARMWRIGHT_PULSE_TRAIN_H

#include <stdint.h>

#define PULSE_CHANNELS 7          /* six joints and the gripper */
#define PULSE_UNIT_NS 500         /* one Timer1 tick: 16 MHz / 8 */
#define PULSE_MIN_TICKS 1000u     /* 500 µs */
#define PULSE_MAX_TICKS 5000u     /* 2500 µs */
#define FRAME_TICKS 40000u        /* 20 ms */
#define FRAME_PERIOD_US 20000u

/* A width of 0 ticks: the channel sends no pulse in that frame (its servo is limp). */
#define PULSE_NONE 0u

void pulse_train_init(void);
/* Starts `ticks` (each within range, or PULSE_NONE) at the next frame. */
void pulse_train_set(const uint16_t ticks[PULSE_CHANNELS]);
/* 1 while a setpoint waits for the next frame start (pulse_train_set since the last one). */
uint8_t pulse_train_pending(void);
/* Forgets a setpoint that has not started yet: the current pulses go on. */
void pulse_train_hold(void);
/* Stops all pulses from the next frame (the servos go limp). */
void pulse_train_release(void);
/* 1 while pulses are being sent (or are about to start at the next frame). */
uint8_t pulse_train_active(void);
/* What the current frame sends: copies the widths into `ticks` (PULSE_NONE for a channel
 * without a pulse) and returns 1, or returns 0 while no pulses are sent at all (limp). A
 * setpoint waiting for the next frame is not included. */
uint8_t pulse_train_output(uint16_t ticks[PULSE_CHANNELS]);

#endif
