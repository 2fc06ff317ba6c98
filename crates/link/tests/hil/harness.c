/* Hardware-in-the-loop harness for the reference firmware, on libsimavr.
 *
 *   harness FIRMWARE.elf LOG [MAX_SECONDS]
 *
 * Runs the firmware on a simulated ATmega328P at 16 MHz, paced to the wall clock, bridges
 * its UART to a new pseudo-terminal (printed on stdout as "pty PATH"), and writes a log in
 * simulated CPU cycles:
 *
 *   E <cycle> <channel> <level>   a servo pin changed (channels 0-5: PD2-PD7, 6: PB0)
 *   R <cycle> <line>              the host's line whose line feed just entered the UART
 *   T <cycle> <line>              the firmware's line whose line feed just left the UART
 *   A <cycle> <input> <millivolts> an analog input was set (see below)
 *   Q <cycle> <why>               the run ended
 *
 * While running it prints "t <cycle>" on stdout every 10 ms of simulated time, so the
 * test can wait for simulated time to pass.
 *
 * Lines on its standard input set the analog inputs ADC0–ADC5 (AVCC is 5000 mV):
 *
 *   a <input> <millivolts>        input 0-7 now reads that voltage
 *
 * It stops when its standard input reaches end of file (the test closes it), after
 * MAX_SECONDS of simulated time (default 120), or if the simulated CPU stops. */
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <termios.h>
#include <time.h>
#include <unistd.h>

#include "avr_adc.h"
#include "avr_ioport.h"
#include "avr_uart.h"
#include "sim_avr.h"
#include "sim_elf.h"
#include "sim_irq.h"

#define CPU_HZ 16000000u
/* The simulated UART takes 11 bit times a byte (it counts a parity slot), 1496 cycles at
 * the firmware's 117 647 baud; feed a little slower so its input queue stays empty and the
 * R times in the log are when the firmware gets the bytes. */
#define CYCLES_PER_INPUT_BYTE 1600u /* 0.1 ms: 10 000 bytes/s, 263 setpoint lines/s */
#define IO_EVERY_CYCLES 400u
#define PACE_EVERY_CYCLES 16000u  /* 1 ms */

static avr_t *avr;
static FILE *log_file;
static int pty_master = -1;
static int uart_blocked;
static int pin_level[7];

static char tx_line[128];
static size_t tx_len;
static char rx_line[128];
static size_t rx_len;

static avr_irq_t *adc_input[8];
static char command[64];
static size_t command_len;

/* One line of standard input: "a <input> <millivolts>" sets an analog input. */
static void run_command(const char *text) {
    unsigned input, millivolts;
    if (sscanf(text, "a %u %u", &input, &millivolts) == 2 && input < 8) {
        avr_raise_irq(adc_input[input], millivolts);
        fprintf(log_file, "A %llu %u %u\n", (unsigned long long)avr->cycle, input, millivolts);
    } else {
        fprintf(stderr, "harness: unknown command \"%s\"\n", text);
    }
}

static void log_line(char tag, char *text, size_t *len, uint8_t byte) {
    if (byte == '\n') {
        text[*len] = 0;
        fprintf(log_file, "%c %llu %s\n", tag, (unsigned long long)avr->cycle, text);
        *len = 0;
    } else if (*len + 1 < 128) {
        /* Keep the log one line per record whatever the bytes are. */
        text[(*len)++] = (byte >= 0x20 && byte <= 0x7E) ? (char)byte : '?';
    }
}

static void on_pin(struct avr_irq_t *irq, uint32_t value, void *param) {
    (void)irq;
    int channel = (int)(intptr_t)param;
    int level = value ? 1 : 0;
    if (pin_level[channel] != level) {
        pin_level[channel] = level;
        fprintf(log_file, "E %llu %d %d\n", (unsigned long long)avr->cycle, channel, level);
    }
}

static void on_uart_output(struct avr_irq_t *irq, uint32_t value, void *param) {
    (void)irq;
    (void)param;
    uint8_t byte = (uint8_t)value;
    if (pty_master >= 0) {
        ssize_t written = write(pty_master, &byte, 1);
        (void)written; /* a host that is not reading loses bytes, as on a real wire */
    }
    log_line('T', tx_line, &tx_len, byte);
}

static void on_uart_xon(struct avr_irq_t *irq, uint32_t value, void *param) {
    (void)irq;
    (void)value;
    (void)param;
    uart_blocked = 0;
}

static void on_uart_xoff(struct avr_irq_t *irq, uint32_t value, void *param) {
    (void)irq;
    (void)value;
    (void)param;
    uart_blocked = 1;
}

/* The firmware never sleeps; this keeps simavr from sleeping on the host if it did. */
static void no_sleep(avr_t *unused, avr_cycle_count_t how_long) {
    (void)unused;
    (void)how_long;
}

static uint64_t wall_ns(void) {
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    return (uint64_t)now.tv_sec * 1000000000u + (uint64_t)now.tv_nsec;
}

static int open_pty(char *path, size_t path_len) {
    int master = posix_openpt(O_RDWR | O_NOCTTY);
    if (master < 0 || grantpt(master) != 0 || unlockpt(master) != 0) {
        return -1;
    }
    if (ptsname_r(master, path, path_len) != 0) {
        return -1;
    }
    /* Keep the device end open and raw: no echo, no line editing, before any host opens it. */
    int device_end = open(path, O_RDWR | O_NOCTTY);
    if (device_end < 0) {
        return -1;
    }
    struct termios raw;
    if (tcgetattr(device_end, &raw) == 0) {
        cfmakeraw(&raw);
        tcsetattr(device_end, TCSANOW, &raw);
    }
    fcntl(master, F_SETFL, fcntl(master, F_GETFL) | O_NONBLOCK);
    return master;
}

int main(int argc, char **argv) {
    if (argc < 3) {
        fprintf(stderr, "usage: %s FIRMWARE.elf LOG [MAX_SECONDS]\n", argv[0]);
        return 2;
    }
    double max_seconds = argc > 3 ? atof(argv[3]) : 120.0;
    log_file = fopen(argv[2], "w");
    if (!log_file) {
        perror("log");
        return 2;
    }
    elf_firmware_t firmware;
    memset(&firmware, 0, sizeof firmware);
    if (elf_read_firmware(argv[1], &firmware) != 0) {
        fprintf(stderr, "cannot read firmware %s\n", argv[1]);
        return 2;
    }
    avr = avr_make_mcu_by_name("atmega328p");
    if (!avr) {
        fprintf(stderr, "libsimavr has no atmega328p core\n");
        return 2;
    }
    avr_init(avr);
    avr_load_firmware(avr, &firmware);
    avr->frequency = CPU_HZ;
    avr->sleep = no_sleep;
    avr->vcc = avr->avcc = avr->aref = 5000; /* mV: the converter's reference */
    for (int input = 0; input < 8; input++) {
        adc_input[input] = avr_io_getirq(avr, AVR_IOCTL_ADC_GETIRQ, ADC_IRQ_ADC0 + input);
    }

    uint32_t flags = 0;
    avr_ioctl(avr, AVR_IOCTL_UART_GET_FLAGS('0'), &flags);
    flags &= ~(uint32_t)(AVR_UART_FLAG_POLL_SLEEP | AVR_UART_FLAG_STDIO);
    avr_ioctl(avr, AVR_IOCTL_UART_SET_FLAGS('0'), &flags);

    for (int channel = 0; channel < 6; channel++) {
        avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_IOPORT_GETIRQ('D'), channel + 2),
                                on_pin, (void *)(intptr_t)channel);
    }
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_IOPORT_GETIRQ('B'), 0), on_pin,
                            (void *)(intptr_t)6);
    avr_irq_t *uart_input = avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_INPUT);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_OUTPUT),
                            on_uart_output, NULL);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_OUT_XON),
                            on_uart_xon, NULL);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_OUT_XOFF),
                            on_uart_xoff, NULL);

    char path[128];
    pty_master = open_pty(path, sizeof path);
    if (pty_master < 0) {
        perror("pty");
        return 2;
    }
    fcntl(0, F_SETFL, fcntl(0, F_GETFL) | O_NONBLOCK);
    printf("pty %s\n", path);
    fflush(stdout);

    uint8_t input[4096];
    size_t input_len = 0, input_pos = 0;
    avr_cycle_count_t next_io = 0, next_pace = 0, next_tick = 0, last_input = 0;
    avr_cycle_count_t max_cycles = (avr_cycle_count_t)(max_seconds * CPU_HZ);
    uint64_t start_ns = wall_ns();
    const char *why = "time limit";

    for (;;) {
        int state = avr_run(avr);
        if (state == cpu_Done || state == cpu_Crashed) {
            why = state == cpu_Done ? "cpu stopped" : "cpu crashed";
            break;
        }
        if (avr->cycle < next_io) {
            continue;
        }
        next_io = avr->cycle + IO_EVERY_CYCLES;
        if (input_pos == input_len) {
            ssize_t got = read(pty_master, input, sizeof input);
            input_pos = 0;
            input_len = got > 0 ? (size_t)got : 0;
        }
        if (input_pos < input_len && !uart_blocked &&
            avr->cycle - last_input >= CYCLES_PER_INPUT_BYTE) {
            uint8_t byte = input[input_pos++];
            last_input = avr->cycle;
            avr_raise_irq(uart_input, byte);
            log_line('R', rx_line, &rx_len, byte);
        }
        if (avr->cycle < next_pace) {
            continue;
        }
        next_pace = avr->cycle + PACE_EVERY_CYCLES;
        if (avr->cycle >= max_cycles) {
            break;
        }
        if (avr->cycle >= next_tick) {
            next_tick = avr->cycle + CPU_HZ / 100u;
            printf("t %llu\n", (unsigned long long)avr->cycle);
            fflush(stdout);
        }
        char chunk[64];
        ssize_t got = read(0, chunk, sizeof chunk);
        if (got == 0 || (got < 0 && errno != EAGAIN && errno != EWOULDBLOCK)) {
            why = "host closed";
            break;
        }
        for (ssize_t i = 0; i < got; i++) {
            if (chunk[i] == '\n') {
                command[command_len] = 0;
                run_command(command);
                command_len = 0;
            } else if (command_len + 1 < sizeof command) {
                command[command_len++] = chunk[i];
            }
        }
        /* Keep simulated time from running ahead of the wall clock. */
        uint64_t simulated_ns = avr->cycle * 125u / 2u; /* 62.5 ns a cycle at 16 MHz */
        uint64_t elapsed_ns = wall_ns() - start_ns;
        if (simulated_ns > elapsed_ns + 1000000u) {
            struct timespec pause = {0, (long)(simulated_ns - elapsed_ns)};
            nanosleep(&pause, NULL);
        }
    }
    fprintf(log_file, "Q %llu %s\n", (unsigned long long)avr->cycle, why);
    fclose(log_file);
    return 0;
}
