/* Serial port: 115 200 baud 8N1 on the on-chip UART, both directions through rings. */
#ifndef ARMWRIGHT_SERIAL_H
#define ARMWRIGHT_SERIAL_H

#include <stdint.h>

/* An emergency-stop line without its line end: "x", 2 hex digits, "/", 4 hex digits. */
#define SERIAL_STOP_LINE_LEN 8

void serial_init(void);
/* Copies the newest stop-shaped line the receiver has seen (unchecked) into `line` and
 * returns 1, or returns 0 when none arrived since the last call. */
uint8_t serial_take_stop_line(uint8_t line[SERIAL_STOP_LINE_LEN]);
/* Next received byte, or -1 when none is waiting. */
int16_t serial_read(void);
/* Bytes the receive ring can still take. */
uint8_t serial_free(void);
/* 1 once if a byte was lost because the ring was full since the last call. */
uint8_t serial_take_overflow(void);
/* Queues `len` bytes for sending; waits only while the send ring is full. */
void serial_write(const uint8_t *bytes, uint8_t len);

#endif
