/* The Armwright line protocol (crates/link/PROTOCOL.md): line checks, CRC, encoding. */
#include "line_protocol.h"

uint16_t crc16_ccitt_false(const uint8_t *bytes, uint8_t len) {
    uint16_t crc = 0xFFFF;
    for (uint8_t i = 0; i < len; i++) {
        crc ^= (uint16_t)bytes[i] << 8;
        for (uint8_t bit = 0; bit < 8; bit++) {
            crc = (crc & 0x8000) ? (uint16_t)((crc << 1) ^ 0x1021) : (uint16_t)(crc << 1);
        }
    }
    return crc;
}

static int8_t hex_digit(uint8_t c) {
    if (c >= '0' && c <= '9') {
        return (int8_t)(c - '0');
    }
    if (c >= 'A' && c <= 'F') {
        return (int8_t)(c - 'A' + 10);
    }
    return -1;
}

int32_t parse_hex(const uint8_t *text, uint8_t digits) {
    int32_t value = 0;
    for (uint8_t i = 0; i < digits; i++) {
        int8_t d = hex_digit(text[i]);
        if (d < 0) {
            return -1;
        }
        value = (value << 4) | d;
    }
    return value;
}

int32_t parse_decimal(const uint8_t *text, uint8_t len) {
    if (len == 0 || len > 5) {
        return -1;
    }
    int32_t value = 0;
    for (uint8_t i = 0; i < len; i++) {
        if (text[i] < '0' || text[i] > '9') {
            return -1;
        }
        value = value * 10 + (text[i] - '0');
    }
    return value;
}

enum line_check line_check(const uint8_t *line, uint8_t len, struct checked_line *out) {
    if (len > 0 && line[len - 1] == '\r') {
        len--;
    }
    for (uint8_t i = 0; i < len; i++) {
        if (line[i] < 0x20 || line[i] > 0x7E) {
            return LINE_BAD_FORM;
        }
    }
    if (len < 5 + 3) { /* kind, 2 seq digits, '/', 4 check digits */
        return LINE_BAD_FORM;
    }
    uint8_t slash = (uint8_t)(len - 5);
    if (line[slash] != '/') {
        return LINE_BAD_FORM;
    }
    int32_t check = parse_hex(line + slash + 1, 4);
    if (check < 0) {
        return LINE_BAD_FORM;
    }
    if (crc16_ccitt_false(line, slash) != (uint16_t)check) {
        return LINE_BAD_CHECKSUM;
    }
    int32_t seq = parse_hex(line + 1, 2);
    if (seq < 0) {
        return LINE_BAD_FORM;
    }
    out->kind = line[0];
    out->seq = (uint8_t)seq;
    if (slash == 3) {
        out->body = line + 3;
        out->body_len = 0;
        return LINE_GOOD;
    }
    if (line[3] != ':') {
        return LINE_BAD_FORM;
    }
    out->body = line + 4;
    out->body_len = (uint8_t)(slash - 4);
    return LINE_GOOD;
}

void line_start(struct line_out *line, uint8_t kind, uint8_t seq) {
    line->len = 0;
    line_put(line, kind);
    line_put_hex(line, seq, 2);
}

void line_put(struct line_out *line, uint8_t byte) {
    if (line->len < LINE_MAX) {
        line->bytes[line->len++] = byte;
    }
}

void line_put_text(struct line_out *line, const char *text) {
    while (*text) {
        line_put(line, (uint8_t)*text++);
    }
}

void line_put_hex(struct line_out *line, uint16_t value, uint8_t digits) {
    static const char HEX[] = "0123456789ABCDEF";
    while (digits > 0) {
        digits--;
        line_put(line, (uint8_t)HEX[(value >> (4 * digits)) & 0xF]);
    }
}

void line_put_decimal(struct line_out *line, uint16_t value) {
    char digits[5];
    uint8_t count = 0;
    do {
        digits[count++] = (char)('0' + value % 10);
        value /= 10;
    } while (value != 0);
    while (count > 0) {
        line_put(line, (uint8_t)digits[--count]);
    }
}

void line_finish(struct line_out *line) {
    uint16_t check = crc16_ccitt_false(line->bytes, line->len);
    line_put(line, '/');
    line_put_hex(line, check, 4);
    line_put(line, '\n');
}
