/*
 * ATmega328P test firmware (project-written): receives frames with the generated receiver.
 * Timer1 runs free (normal mode) at the header's prescaler; the receiver's data pin is ICP1
 * (PB0). The capture ISR flips the capture edge (ICES1) each time, gives the receiver the
 * level and tick length of the pulse that just ended and moves compare B to the idle time
 * after the edge; compare B calls <prefix>_rx_idle once and marks the next pulse as
 * saturated (0xFFFF).
 * With -DOOK_RX_IN_ISR the capture ISR also runs <prefix>_rx_poll (decoding in the ISR,
 * for comparison).
 *
 * Main loop, per wake-up: GPIOR1 = 1, <prefix>_rx_poll(), GPIOR1 = 2; then for each ready
 * frame GPIOR1 = 3, <prefix>_rx_take, GPIOR1 = 4, and the report on GPIOR0: 0xA5, the bytes
 * of struct <prefix>_fields, the bytes of struct <prefix>_rx_counters. The baseline build
 * (OOK_BASELINE) has the same timer code and a stub receiver (avr-size difference).
 * Build like firmware.c (see tests/c/avr_run.py); run under tests/c/avr/simharness.c.
 */
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/pgmspace.h>
#include <avr/sleep.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define OOK_CAT_(a, b) a##b
#define OOK_CAT(a, b) OOK_CAT_(a, b)
#define OOK_FN(suffix) OOK_CAT(OOK_PREFIX, suffix)
#define OOK_CONST(suffix) OOK_CAT(OOK_UPREFIX, suffix)

#define OOK_REPORT_START 0xA5u
#define OOK_MARK_POLL 1u
#define OOK_MARK_POLLED 2u
#define OOK_MARK_TAKE 3u
#define OOK_MARK_TAKEN 4u

#ifdef OOK_BASELINE
/* the same firmware around a receiver that does nothing */
#define OOK_IDLE_TICKS 1000u
#define OOK_TIMER1_CLOCK ((uint8_t)(1u << CS11))
static volatile uint8_t stub_edges;
struct stub_fields { uint8_t x; };
struct stub_counters { uint8_t x; };
static void stub_edge(uint8_t level, uint16_t ticks) { stub_edges = (uint8_t)(level ^ ticks); }
static void stub_idle(void) { stub_edges = 0u; }
static void stub_init(void) { stub_edges = 0u; }
static void stub_poll(void) { }
static bool stub_take(struct stub_fields *f, void *q) { (void)q; f->x = stub_edges; return false; }
static bool stub_ready(void) { return false; }
static void stub_counters(struct stub_counters *c) { c->x = 0u; }
#define RX_FIELDS struct stub_fields
#define RX_COUNTERS struct stub_counters
#define RX_INIT stub_init
#define RX_EDGE stub_edge
#define RX_IDLE stub_idle
#define RX_POLL stub_poll
#define RX_READY stub_ready
#define RX_TAKE(f) stub_take((f), NULL)
#define RX_COUNTERS_OF stub_counters
#else
#include OOK_HEADER
#define OOK_IDLE_TICKS OOK_CONST(_RX_IDLE_TICKS)
#if OOK_CONST(_TIMER_PRESCALER) == 1
#define OOK_TIMER1_CLOCK ((uint8_t)(1u << CS10))
#elif OOK_CONST(_TIMER_PRESCALER) == 8
#define OOK_TIMER1_CLOCK ((uint8_t)(1u << CS11))
#elif OOK_CONST(_TIMER_PRESCALER) == 64
#define OOK_TIMER1_CLOCK ((uint8_t)((1u << CS11) | (1u << CS10)))
#elif OOK_CONST(_TIMER_PRESCALER) == 256
#define OOK_TIMER1_CLOCK ((uint8_t)(1u << CS12))
#elif OOK_CONST(_TIMER_PRESCALER) == 1024
#define OOK_TIMER1_CLOCK ((uint8_t)((1u << CS12) | (1u << CS10)))
#else
#error "prescaler not available on Timer1"
#endif
#define RX_FIELDS struct OOK_FN(_fields)
#define RX_COUNTERS struct OOK_FN(_rx_counters)
#define RX_INIT OOK_FN(_rx_init)
#define RX_EDGE OOK_FN(_rx_edge)
#define RX_IDLE OOK_FN(_rx_idle)
#define RX_POLL OOK_FN(_rx_poll)
#define RX_READY OOK_FN(_rx_ready)
#define RX_TAKE(f) OOK_FN(_rx_take)((f), NULL)
#define RX_COUNTERS_OF OOK_FN(_rx_counters)
#endif

static uint16_t last_capture;
static bool saturated = true; /* the line was quiet longer than the idle time */

ISR(TIMER1_CAPT_vect)
{
    uint16_t now = ICR1;
    uint8_t ended = (uint8_t)((TCCR1B & (1u << ICES1)) ? 0u : 1u); /* rising: a space ended */
    TCCR1B = (uint8_t)(TCCR1B ^ (1u << ICES1));
    TIFR1 = (uint8_t)(1u << ICF1); /* changing the edge may set ICF1 */
    OCR1B = (uint16_t)(now + OOK_IDLE_TICKS); /* compare B: the line went quiet */
    RX_EDGE(ended, saturated ? 0xFFFFu : (uint16_t)(now - last_capture));
    last_capture = now;
    saturated = false;
#ifdef OOK_RX_IN_ISR
    RX_POLL();
#endif
}

ISR(TIMER1_COMPB_vect)
{
    if (!saturated) { /* then once per timer period while quiet, nothing to do */
        saturated = true;
        RX_IDLE();
#ifdef OOK_RX_IN_ISR
        RX_POLL();
#endif
    }
}

static void report(const void *p, size_t n)
{
    const uint8_t *b = (const uint8_t *)p;
    size_t i;
    for (i = 0u; i < n; i++) {
        GPIOR0 = b[i];
    }
}

int main(void)
{
    RX_FIELDS f;
    RX_COUNTERS c;
    DDRB = 0; /* PB0 = ICP1 input */
    PORTB = 0;
    RX_INIT();
    TCCR1A = 0;
    TCNT1 = 0;
    TIFR1 = (uint8_t)((1u << ICF1) | (1u << OCF1B));
    TIMSK1 = (uint8_t)((1u << ICIE1) | (1u << OCIE1B));
    TCCR1B = (uint8_t)((1u << ICES1) | OOK_TIMER1_CLOCK); /* the line idles low */
    SMCR = 0; /* idle sleep mode (SM2..0 = 0) */
    for (;;) {
        bool ready;
        GPIOR1 = OOK_MARK_POLL;
        RX_POLL();
        GPIOR1 = OOK_MARK_POLLED;
        for (;;) {
            GPIOR1 = OOK_MARK_TAKE;
            ready = RX_READY() && RX_TAKE(&f);
            GPIOR1 = OOK_MARK_TAKEN;
            if (!ready) {
                break;
            }
            GPIOR0 = OOK_REPORT_START;
            report(&f, sizeof f);
            RX_COUNTERS_OF(&c);
            report(&c, sizeof c);
        }
        cli();
        sleep_enable();
        sei(); /* the instruction after sei runs first: no wake-up is lost */
        sleep_cpu();
        sleep_disable();
    }
    return 0;
}
