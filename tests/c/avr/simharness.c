/*
 * Host harness on libsimavr (project-written): runs an AVR firmware ELF instruction by
 * instruction and reports, one line each on stdout,
 *   isr V C        an interrupt on vector V took C cycles from its vector to the end of reti
 *   edge P L C     pin P (e.g. B1) changed to level L at cycle C
 *   byte V C       the firmware wrote V to GPIOR0 (its report channel) at cycle C
 *   mark V C       the firmware wrote V to GPIOR1 (main-loop markers) at cycle C
 *   end STATE C    the run stopped (done, crashed, cycles) at cycle C
 * and drives input pins (up to MAX_DRIVE, one --drive each) with edges read from a file
 * per pin (lines "CYCLE LEVEL", ascending cycles) at those exact cycles, through simavr
 * cycle timers.
 * simavr runs its peripherals and cycle timers between instructions: a pin change made by a
 * timer is stamped (and a driven edge lands) at the end of the instruction in progress,
 * up to a few cycles late while the CPU runs code, exact while it sleeps. The test
 * firmwares therefore sleep between interrupts.
 *
 * Build: cc -O2 simharness.c -I/usr/include/simavr -lsimavr -lelf -o simharness
 * Run:   simharness FIRMWARE.elf [-m atmega328p] [-f 8000000] [--isr V]... [--watch B1]...
 *                  [--drive B0 FILE]... [--max-cycles N]
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "avr_ioport.h"
#include "sim_avr.h"
#include "sim_cycle_timers.h"
#include "sim_elf.h"
#include "sim_io.h"
#include "sim_irq.h"

#define MAX_ISR 4
#define MAX_WATCH 4
#define MAX_DRIVE 2
#define GPIOR0_ADDR 0x3E /* data-space addresses on the ATmega48/88/168/328 */
#define GPIOR1_ADDR 0x4A
#define RETI_OPCODE 0x9518u

struct drive {
    avr_irq_t *irq;
    unsigned long long *cycle;
    unsigned *level;
    size_t n;
    size_t next;
};

static avr_t *g_avr;
static char watch_names[MAX_WATCH][3];

static void on_pin(struct avr_irq_t *irq, uint32_t value, void *param)
{
    (void)irq;
    printf("edge %s %u %llu\n", (const char *)param, value & 1u,
           (unsigned long long)g_avr->cycle);
}

static void on_gpior(struct avr_t *avr, avr_io_addr_t addr, uint8_t v, void *param)
{
    (void)param;
    avr->data[addr] = v;
    printf("%s %u %llu\n", addr == GPIOR0_ADDR ? "byte" : "mark", v,
           (unsigned long long)avr->cycle);
}

static avr_cycle_count_t on_drive(struct avr_t *avr, avr_cycle_count_t when, void *param)
{
    struct drive *d = (struct drive *)param;
    (void)avr;
    (void)when;
    avr_raise_irq(d->irq, d->level[d->next]);
    d->next++;
    return d->next < d->n ? (avr_cycle_count_t)d->cycle[d->next] : 0;
}

static int read_drive(const char *path, struct drive *d)
{
    FILE *f = fopen(path, "r");
    size_t cap = 1024;
    unsigned long long c;
    unsigned l;
    if (!f) {
        perror(path);
        return -1;
    }
    d->cycle = malloc(cap * sizeof *d->cycle);
    d->level = malloc(cap * sizeof *d->level);
    d->n = 0;
    while (fscanf(f, "%llu %u", &c, &l) == 2) {
        if (d->n == cap) {
            cap *= 2;
            d->cycle = realloc(d->cycle, cap * sizeof *d->cycle);
            d->level = realloc(d->level, cap * sizeof *d->level);
        }
        d->cycle[d->n] = c;
        d->level[d->n] = l & 1u;
        d->n++;
    }
    fclose(f);
    return 0;
}

static avr_irq_t *pin_irq(avr_t *avr, const char *pin)
{
    if (strlen(pin) != 2 || pin[1] < '0' || pin[1] > '7') {
        fprintf(stderr, "bad pin %s (want e.g. B1)\n", pin);
        exit(2);
    }
    return avr_io_getirq(avr, AVR_IOCTL_IOPORT_GETIRQ(pin[0]), pin[1] - '0');
}

int main(int argc, char **argv)
{
    elf_firmware_t fw;
    const char *mcu = "atmega328p";
    unsigned long freq = 8000000ul;
    unsigned long long max_cycles = 2000000000ull;
    int isr[MAX_ISR];
    int nisr = 0;
    const char *watch[MAX_WATCH];
    int nwatch = 0;
    const char *drive_pin[MAX_DRIVE];
    const char *drive_file[MAX_DRIVE];
    struct drive d[MAX_DRIVE];
    int ndrive = 0;
    unsigned long long isr_start = 0;
    int in_isr = -1;
    int state;
    int i;

    if (argc < 2) {
        fprintf(stderr, "usage: %s FIRMWARE.elf [options]\n", argv[0]);
        return 2;
    }
    for (i = 2; i < argc; i++) {
        if (!strcmp(argv[i], "-m") && i + 1 < argc) {
            mcu = argv[++i];
        } else if (!strcmp(argv[i], "-f") && i + 1 < argc) {
            freq = strtoul(argv[++i], NULL, 10);
        } else if (!strcmp(argv[i], "--isr") && i + 1 < argc && nisr < MAX_ISR) {
            isr[nisr++] = atoi(argv[++i]);
        } else if (!strcmp(argv[i], "--watch") && i + 1 < argc && nwatch < MAX_WATCH) {
            watch[nwatch++] = argv[++i];
        } else if (!strcmp(argv[i], "--drive") && i + 2 < argc && ndrive < MAX_DRIVE) {
            drive_pin[ndrive] = argv[++i];
            drive_file[ndrive] = argv[++i];
            ndrive++;
        } else if (!strcmp(argv[i], "--max-cycles") && i + 1 < argc) {
            max_cycles = strtoull(argv[++i], NULL, 10);
        } else {
            fprintf(stderr, "unknown option %s\n", argv[i]);
            return 2;
        }
    }
    memset(&fw, 0, sizeof fw);
    if (elf_read_firmware(argv[1], &fw) != 0) {
        fprintf(stderr, "cannot read %s\n", argv[1]);
        return 2;
    }
    g_avr = avr_make_mcu_by_name(mcu);
    if (!g_avr) {
        fprintf(stderr, "unknown MCU %s\n", mcu);
        return 2;
    }
    avr_init(g_avr);
    g_avr->frequency = (uint32_t)freq;
    g_avr->log = 0;
    avr_load_firmware(g_avr, &fw);
    g_avr->frequency = (uint32_t)freq;
    for (i = 0; i < nwatch; i++) {
        strncpy(watch_names[i], watch[i], 2);
        avr_irq_register_notify(pin_irq(g_avr, watch[i]), on_pin, watch_names[i]);
    }
    avr_register_io_write(g_avr, GPIOR0_ADDR, on_gpior, NULL);
    avr_register_io_write(g_avr, GPIOR1_ADDR, on_gpior, NULL);
    memset(d, 0, sizeof d);
    for (i = 0; i < ndrive; i++) {
        if (read_drive(drive_file[i], &d[i]) != 0) {
            return 2;
        }
        d[i].irq = pin_irq(g_avr, drive_pin[i]);
        avr_raise_irq(d[i].irq, 0);
        if (d[i].n) {
            avr_cycle_timer_register(g_avr, d[i].cycle[0] - g_avr->cycle, on_drive, &d[i]);
        }
    }
    for (;;) {
        avr_flashaddr_t pc = g_avr->pc;
        int reti;
        if (in_isr < 0) {
            for (i = 0; i < nisr; i++) {
                if (pc == (avr_flashaddr_t)(isr[i] * g_avr->vector_size)) {
                    in_isr = isr[i];
                    isr_start = g_avr->cycle;
                }
            }
        }
        reti = in_isr >= 0 && g_avr->state == cpu_Running
               && (unsigned)(g_avr->flash[pc] | (g_avr->flash[pc + 1] << 8)) == RETI_OPCODE;
        state = avr_run(g_avr);
        if (reti) {
            printf("isr %d %llu\n", in_isr, (unsigned long long)(g_avr->cycle - isr_start));
            in_isr = -1;
        }
        if (state == cpu_Done || state == cpu_Crashed) {
            break;
        }
        if (g_avr->cycle >= max_cycles) {
            printf("end cycles %llu\n", (unsigned long long)g_avr->cycle);
            return 0;
        }
    }
    printf("end %s %llu\n", state == cpu_Done ? "done" : "crashed",
           (unsigned long long)g_avr->cycle);
    return state == cpu_Done ? 0 : 1;
}
