/* Armwright reference servo firmware for an ATmega328P at 16 MHz.
 *
 * Speaks the line protocol of crates/link/PROTOCOL.md at 115 200 baud, drives six joint
 * servos and a gripper servo with pulses timed from Timer1 (pulse_train.c), holds the arm
 * when the host falls silent for 250 ms, clamps pulse widths to 500–2500 µs, latches the
 * emergency stop until a reset, counts and reports bad input, sends the readings of six
 * analog inputs (analog_inputs.c) at the rate the host asks for, and plays planned setpoints
 * from a queue, one a pulse frame, so a host held up for a while does not stop the arm.
 *
 * A software stop is not a safety device. See README.md. */
#include <avr/interrupt.h>
#include <avr/io.h>

#include "analog_inputs.h"
#include "line_protocol.h"
#include "pulse_train.h"
#include "serial.h"

#define FIRMWARE_VERSION "0.4.0"
#define PROTOCOL_NEWEST 4u /* 2 adds the output query, 3 the readings rate, 4 planned setpoints */
#define READINGS_MAX_HZ 100
#define WATCHDOG_MS 250u
#define STATUS_GAP_MS 20u /* at most one status line per frame */

#define FAULT_WATCHDOG 0x01
#define FAULT_STOP 0x02
#define FAULT_CLAMPED 0x04
#define FAULT_BAD_INPUT 0x08
#define FAULT_OVERFLOW 0x10

/* Modes, as the status line spells them. */
#define MODE_LIMP 'L'
#define MODE_DRIVING 'D'
#define MODE_KEEPING 'K'
#define MODE_STOPPED 'X'

static volatile uint16_t clock_ms;

static uint8_t mode = MODE_LIMP;
static uint8_t faults;
static uint16_t bad_checksums, bad_lines, clamped_values, watchdog_trips;
static uint8_t status_pending;
static uint8_t status_sent_once;
static uint16_t last_status_ms;
/* The watchdog counts from the later of the last good line and the moment the play queue
 * handed its last setpoint to the pulse train. */
static uint16_t watchdog_from_ms;
static uint8_t tx_seq;

/* Readings lines: the rate the host asked for (0: none), when the next one is due, and the
 * milliseconds left over from 1000 / rate, so that line k goes out k / rate s after the
 * request on average whatever the rate. */
static uint8_t readings_hz;
static uint16_t readings_due_ms;
static uint8_t readings_rest;

/* Planned setpoints (`p`) waiting to be played, one a pulse frame, in the order they came:
 * PLAY_QUEUE_DEPTH × PULSE_CHANNELS × 2 bytes of RAM (64 × 7 × 2 = 896 bytes, 1.28 s of
 * frames). A channel without a pulse is stored as PULSE_NONE. */
#define PLAY_QUEUE_DEPTH 64u
static uint16_t play_queue[PLAY_QUEUE_DEPTH][PULSE_CHANNELS];
static uint8_t play_head, play_count;

/* Timer0 in clear-on-compare mode: 16 MHz / 64 / 250 = one interrupt a millisecond. */
static void clock_init(void) {
    TCCR0A = _BV(WGM01);
    TCCR0B = _BV(CS01) | _BV(CS00);
    OCR0A = 249;
    TIMSK0 = _BV(OCIE0A);
}

ISR(TIMER0_COMPA_vect) {
    clock_ms++;
}

static uint16_t now_ms(void) {
    uint8_t sreg = SREG;
    cli();
    uint16_t now = clock_ms;
    SREG = sreg;
    return now;
}

static void saturating_add(uint16_t *counter, uint16_t amount) {
    *counter = (uint16_t)(*counter > 65535u - amount ? 65535u : *counter + amount);
}

static void set_mode(uint8_t next) {
    if (mode != next) {
        mode = next;
        status_pending = 1;
    }
}

static void flag(uint8_t fault) {
    faults |= fault;
    status_pending = 1;
}

static void send(struct line_out *line) {
    line_finish(line);
    serial_write(line->bytes, line->len);
}

/* `version`: the protocol version the link speaks (the lower of the host's and ours). */
static void send_greeting(uint8_t version) {
    struct line_out line;
    line_start(&line, 'H', tx_seq++);
    line_put(&line, ':');
    line_put_decimal(&line, version);
    line_put_text(&line, "," FIRMWARE_VERSION ",");
    line_put_decimal(&line, PULSE_CHANNELS);
    line_put(&line, ',');
    line_put_decimal(&line, PULSE_UNIT_NS);
    line_put(&line, ',');
    line_put_decimal(&line, PULSE_MIN_TICKS);
    line_put(&line, ',');
    line_put_decimal(&line, PULSE_MAX_TICKS);
    line_put(&line, ',');
    line_put_decimal(&line, FRAME_PERIOD_US);
    send(&line);
}

static void send_ack(uint8_t acked_seq, const char *outcome) {
    struct line_out line;
    uint8_t room = (uint8_t)(serial_free() / LINE_MAX);
    uint8_t play_room = (uint8_t)(PLAY_QUEUE_DEPTH - play_count);
    if (play_room < room) {
        room = play_room;
    }
    line_start(&line, 'A', tx_seq++);
    line_put(&line, ':');
    line_put_hex(&line, acked_seq, 2);
    line_put(&line, ',');
    line_put_decimal(&line, room);
    line_put(&line, ',');
    line_put_text(&line, outcome);
    send(&line);
}

/* What the current frame sends, channel by channel: 4 hex digits or "----" for limp. */
static void send_output(void) {
    struct line_out line;
    uint16_t ticks[PULSE_CHANNELS];
    uint8_t on = pulse_train_output(ticks);
    line_start(&line, 'P', tx_seq++);
    line_put(&line, ':');
    for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
        if (on && ticks[i] != PULSE_NONE) {
            line_put_hex(&line, ticks[i], 4);
        } else {
            line_put_text(&line, "----");
        }
    }
    send(&line);
}

/* Every input's newest reading, 3 hex digits each. */
static void send_readings(void) {
    struct line_out line;
    uint16_t readings[ANALOG_INPUTS];
    analog_inputs_read(readings);
    line_start(&line, 'V', tx_seq++);
    line_put(&line, ':');
    for (uint8_t i = 0; i < ANALOG_INPUTS; i++) {
        line_put_hex(&line, readings[i], 3);
    }
    send(&line);
}

/* Sends the readings line that is due, then moves the due time on by one period, past now:
 * a loop held up for longer than a period sends the newest line only, never a burst. */
static void send_readings_due(uint16_t now) {
    if (readings_hz == 0 || (int16_t)(now - readings_due_ms) < 0) {
        return;
    }
    send_readings();
    do {
        uint16_t step = (uint16_t)(1000u / readings_hz);
        readings_rest = (uint8_t)(readings_rest + 1000u % readings_hz);
        if (readings_rest >= readings_hz) {
            readings_rest = (uint8_t)(readings_rest - readings_hz);
            step++;
        }
        readings_due_ms = (uint16_t)(readings_due_ms + step);
    } while ((int16_t)(now - readings_due_ms) >= 0);
}

static void send_status(void) {
    struct line_out line;
    if (mode == MODE_STOPPED) {
        faults |= FAULT_STOP;
    } else {
        faults &= (uint8_t)~FAULT_STOP;
    }
    line_start(&line, 'S', tx_seq++);
    line_put(&line, ':');
    line_put(&line, mode);
    line_put(&line, ',');
    line_put_hex(&line, faults, 2);
    line_put(&line, ',');
    line_put_decimal(&line, bad_checksums);
    line_put(&line, ',');
    line_put_decimal(&line, bad_lines);
    line_put(&line, ',');
    line_put_decimal(&line, clamped_values);
    line_put(&line, ',');
    line_put_decimal(&line, watchdog_trips);
    send(&line);
}

static void count_bad_line(void) {
    saturating_add(&bad_lines, 1);
    flag(FAULT_BAD_INPUT);
}

static void clear_play_queue(void) {
    play_head = 0;
    play_count = 0;
}

/* Hands the next planned setpoint to the pulse train when its slot for the next frame is
 * free, so each one is played for exactly one frame. */
static void play_next(void) {
    if (mode != MODE_DRIVING || play_count == 0 || pulse_train_pending()) {
        return;
    }
    pulse_train_set(play_queue[play_head]);
    play_head = (uint8_t)((play_head + 1u) % PLAY_QUEUE_DEPTH);
    play_count--;
    watchdog_from_ms = now_ms();
}

/* A setpoint body: exactly PULSE_CHANNELS values of 4 hex digits; a planned setpoint (`p`)
 * may also have "----" (no pulse) for some channels, not all. */
static void on_setpoint(const struct checked_line *line) {
    uint16_t ticks[PULSE_CHANNELS];
    uint8_t planned = line->kind == 'p';
    uint8_t pulses = 0;
    if (line->body_len != 4 * PULSE_CHANNELS) {
        count_bad_line();
        return;
    }
    for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
        const uint8_t *field = line->body + 4 * i;
        if (planned && field[0] == '-' && field[1] == '-' && field[2] == '-' && field[3] == '-') {
            ticks[i] = PULSE_NONE;
            continue;
        }
        int32_t value = parse_hex(field, 4);
        if (value < 0) {
            count_bad_line();
            return;
        }
        ticks[i] = (uint16_t)value;
        pulses++;
    }
    if (pulses == 0) {
        count_bad_line(); /* release is the line for no pulses at all */
        return;
    }
    watchdog_from_ms = now_ms();
    if (mode == MODE_STOPPED) {
        send_ack(line->seq, "refused");
        return;
    }
    if (planned && play_count >= PLAY_QUEUE_DEPTH) {
        count_bad_line(); /* the host sent more than the room it was given */
        flag(FAULT_OVERFLOW);
        return;
    }
    uint8_t clamped = 0;
    for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
        if (ticks[i] == PULSE_NONE) {
            continue;
        }
        if (ticks[i] < PULSE_MIN_TICKS) {
            ticks[i] = PULSE_MIN_TICKS;
            clamped++;
        } else if (ticks[i] > PULSE_MAX_TICKS) {
            ticks[i] = PULSE_MAX_TICKS;
            clamped++;
        }
    }
    if (planned) {
        uint8_t tail = (uint8_t)((play_head + play_count) % PLAY_QUEUE_DEPTH);
        for (uint8_t i = 0; i < PULSE_CHANNELS; i++) {
            play_queue[tail][i] = ticks[i];
        }
        play_count++;
    } else {
        clear_play_queue(); /* the newest setpoint wins */
        pulse_train_set(ticks);
    }
    set_mode(MODE_DRIVING);
    play_next();
    if (clamped) {
        saturating_add(&clamped_values, clamped);
        flag(FAULT_CLAMPED);
        send_ack(line->seq, "clamped");
    } else {
        send_ack(line->seq, "ok");
    }
}

/* A stop line acted on early (see early_stop) that will also come through the ring. */
static uint8_t early_stop_bytes[SERIAL_STOP_LINE_LEN];
static uint8_t early_stop_skips;

static void stop_now(uint8_t seq) {
    clear_play_queue();
    pulse_train_hold();
    set_mode(MODE_STOPPED);
    flag(FAULT_STOP);
    send_ack(seq, "ok");
}

/* Acts on an emergency-stop line the receive interrupt has just seen, before any line
 * still waiting in the ring. A copy that fails its check is left for the normal path,
 * which counts it. */
static void early_stop(void) {
    uint8_t bytes[SERIAL_STOP_LINE_LEN];
    struct checked_line line;
    if (!serial_take_stop_line(bytes)) {
        return;
    }
    if (line_check(bytes, SERIAL_STOP_LINE_LEN, &line) != LINE_GOOD || line.kind != 'x') {
        return;
    }
    watchdog_from_ms = now_ms();
    stop_now(line.seq);
    for (uint8_t i = 0; i < SERIAL_STOP_LINE_LEN; i++) {
        early_stop_bytes[i] = bytes[i];
    }
    early_stop_skips++;
}

static uint8_t is_early_stop_copy(const uint8_t *bytes, uint8_t len) {
    if (early_stop_skips == 0 || len < SERIAL_STOP_LINE_LEN) {
        return 0;
    }
    for (uint8_t i = 0; i < SERIAL_STOP_LINE_LEN; i++) {
        if (bytes[i] != early_stop_bytes[i]) {
            return 0;
        }
    }
    return len == SERIAL_STOP_LINE_LEN || (len == SERIAL_STOP_LINE_LEN + 1 && bytes[len - 1] == '\r');
}

static void on_line(const uint8_t *bytes, uint8_t len) {
    struct checked_line line;
    early_stop();
    if (is_early_stop_copy(bytes, len)) {
        early_stop_skips--;
        return;
    }
    switch (line_check(bytes, len, &line)) {
    case LINE_BAD_CHECKSUM:
        saturating_add(&bad_checksums, 1);
        flag(FAULT_BAD_INPUT);
        return;
    case LINE_BAD_FORM:
        count_bad_line();
        return;
    case LINE_GOOD:
        break;
    }
    if (line.kind == 's' || line.kind == 'p') {
        on_setpoint(&line);
        return;
    }
    if (line.kind == 'h') {
        int32_t version = parse_decimal(line.body, line.body_len);
        if (version < 1 || version > 255) {
            count_bad_line();
            return;
        }
        watchdog_from_ms = now_ms();
        readings_hz = 0; /* a new host starts without readings until it asks */
        send_ack(line.seq, "ok");
        send_greeting((uint8_t)(version < (int32_t)PROTOCOL_NEWEST ? version : PROTOCOL_NEWEST));
        return;
    }
    if (line.kind == 'r') {
        int32_t rate = parse_decimal(line.body, line.body_len);
        if (rate < 0 || rate > READINGS_MAX_HZ) {
            count_bad_line();
            return;
        }
        watchdog_from_ms = now_ms();
        readings_hz = (uint8_t)rate;
        readings_due_ms = watchdog_from_ms;
        readings_rest = 0;
        send_ack(line.seq, "ok");
        return;
    }
    if (line.body_len != 0 || (line.kind != 'k' && line.kind != 'l' && line.kind != 'x' &&
                               line.kind != 'c' && line.kind != 'b' && line.kind != 'q')) {
        count_bad_line();
        return;
    }
    watchdog_from_ms = now_ms();
    switch (line.kind) {
    case 'x':
        stop_now(line.seq);
        return;
    case 'k':
        if (mode == MODE_STOPPED) {
            send_ack(line.seq, "refused");
            return;
        }
        clear_play_queue();
        pulse_train_hold();
        if (mode != MODE_LIMP) {
            set_mode(MODE_KEEPING);
        }
        send_ack(line.seq, "ok");
        return;
    case 'l':
        if (mode == MODE_STOPPED) {
            send_ack(line.seq, "refused");
            return;
        }
        clear_play_queue();
        pulse_train_release();
        set_mode(MODE_LIMP);
        send_ack(line.seq, "ok");
        return;
    case 'c':
        faults = 0;
        status_pending = 1;
        if (mode == MODE_STOPPED || mode == MODE_DRIVING) {
            clear_play_queue();
            pulse_train_hold();
            set_mode(pulse_train_active() ? MODE_KEEPING : MODE_LIMP);
        }
        send_ack(line.seq, "ok");
        return;
    case 'q':
        send_ack(line.seq, "ok");
        send_output();
        return;
    default: /* 'b', heartbeat */
        status_pending = 1;
        send_ack(line.seq, "ok");
        return;
    }
}

int main(void) {
    static uint8_t line[LINE_MAX];
    uint8_t line_len = 0;
    uint8_t overlong = 0;

    clock_init();
    pulse_train_init();
    serial_init();
    analog_inputs_init();
    sei();
    send_greeting(PROTOCOL_NEWEST);

    for (;;) {
        int16_t byte;
        early_stop();
        while ((byte = serial_read()) >= 0) {
            if (byte == '\n') {
                if (overlong) {
                    count_bad_line();
                } else {
                    on_line(line, line_len);
                }
                line_len = 0;
                overlong = 0;
            } else if (line_len + 1 >= LINE_MAX) {
                overlong = 1;
            } else if (!overlong) {
                line[line_len++] = (uint8_t)byte;
            }
        }
        if (serial_take_overflow()) {
            count_bad_line();
            flag(FAULT_OVERFLOW);
        }
        analog_inputs_poll();
        play_next();
        uint16_t now = now_ms();
        if (mode == MODE_DRIVING && play_count == 0 && !pulse_train_pending() &&
            (uint16_t)(now - watchdog_from_ms) >= WATCHDOG_MS) {
            pulse_train_hold();
            set_mode(MODE_KEEPING);
            saturating_add(&watchdog_trips, 1);
            flag(FAULT_WATCHDOG);
        }
        if (status_pending &&
            (!status_sent_once || (uint16_t)(now - last_status_ms) >= STATUS_GAP_MS)) {
            status_pending = 0;
            status_sent_once = 1;
            last_status_ms = now;
            send_status();
        }
        send_readings_due(now);
    }
}
