/* The Armwright line protocol (crates/link/PROTOCOL.md): line checks, CRC, encoding. */
#ifndef ARMWRIGHT_LINE_PROTOCOL_H
#define ARMWRIGHT_LINE_PROTOCOL_H

#include <stdint.h>

#define LINE_MAX 64 /* bytes, line feed included */

/* CRC-16/CCITT-FALSE: poly 0x1021, init 0xFFFF, not reflected, xorout 0; "123456789" → 0x29B1. */
uint16_t crc16_ccitt_false(const uint8_t *bytes, uint8_t len);

enum line_check {
    LINE_GOOD,
    LINE_BAD_CHECKSUM,
    LINE_BAD_FORM,
};

/* A line that passed the checks of PROTOCOL.md §2 steps 1–3 and has a sequence number. */
struct checked_line {
    uint8_t kind;
    uint8_t seq;
    const uint8_t *body; /* after ':'; not terminated */
    uint8_t body_len;    /* 0 when the line has no body */
};

/* Checks `line` (without its line feed; a trailing carriage return is allowed). */
enum line_check line_check(const uint8_t *line, uint8_t len, struct checked_line *out);

/* Value of `digits` upper-case hex digits, or -1. */
int32_t parse_hex(const uint8_t *text, uint8_t digits);
/* Value of a whole decimal field of 1–5 digits, or -1. */
int32_t parse_decimal(const uint8_t *text, uint8_t len);

/* Builds a device line: kind, sequence number, ':' and the body are written by the caller
 * through these helpers, then line_finish adds "/XXXX\n". */
struct line_out {
    uint8_t bytes[LINE_MAX];
    uint8_t len;
};
void line_start(struct line_out *line, uint8_t kind, uint8_t seq);
void line_put(struct line_out *line, uint8_t byte);
void line_put_text(struct line_out *line, const char *text);
void line_put_hex(struct line_out *line, uint16_t value, uint8_t digits);
void line_put_decimal(struct line_out *line, uint16_t value);
void line_finish(struct line_out *line);

#endif
