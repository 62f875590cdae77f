/*
 * ATmega328P test firmware (project-written): receives frames with the generated receiver.
 * Timer1 runs free (normal mode) at the header's prescaler; the receiver's data pin is ICP1
 * (PB0). The capture ISR flips the capture edge (ICES1) each time, gives the receiver the
 * level and tick length of the pulse that just ended and moves compare B to the idle time
 * after the edge; compare B calls <prefix>_rx_idle once, then keeps moving itself and the
 * last capture time on, so that the quiet pulse's ticks stay above the idle time without
 * wrapping (a flag-free stand-in for saturating at 0xFFFF). A pulse shorter than the
 * capture ISR (its second edge came before the edge select was flipped) is seen on the pin
 * after the flip and queued as ending then, so the capture edge stays in step with the
 * line. With -DOOK_RX_IN_ISR the capture ISR also runs <prefix>_rx_poll (decoding in the ISR,
 * for comparison). With -DOOK_HEADER_ISRS (and <PREFIX>_RX_AVR_ICP1) the header's own
 * ready-made ISRs and <prefix>_rx_avr_icp1_start take the place of this file's (the same
 * steps, without the GPIOR1 = 5 marker).
 *
 * Main loop, per wake-up: GPIOR1 = 1, <prefix>_rx_poll(), GPIOR1 = 2; then for each ready
 * frame GPIOR1 = 3, <prefix>_rx_take, GPIOR1 = 4, and the report on GPIOR0: 0xA5, the bytes
 * of struct <prefix>_fields, the bytes of struct <prefix>_rx_counters. A capture ISR run
 * that also queues a missed edge writes GPIOR1 = 5. When the harness raises PB1 (the run
 * is over; a pin-change interrupt wakes the CPU) the main loop, once, reports the counters
 * as they are then: 0x5A and the bytes of struct <prefix>_rx_counters (edges lost after
 * the last good frame are counted there too). The baseline build (OOK_BASELINE)
 * has the same timer code around a stub receiver (avr-size difference, ISR cycles).
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
#define OOK_MARK_TWO_EDGES 5u /* this capture ISR run also queues a missed edge */
#define OOK_REPORT_END 0x5Au /* the counters at the end of the run (PB1 raised) */

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

/* compare B moves on by this much while the line stays quiet, so that ICR1 - last_capture
 * stays between the idle time and 0xFFFF however long the quiet lasts */
#define OOK_QUIET_STEP ((uint16_t)((0xFFFFu - OOK_IDLE_TICKS) / 2u))
typedef char ook_assert_idle_fits[(OOK_IDLE_TICKS < 0xF000u) ? 1 : -1];

#ifndef OOK_HEADER_ISRS
static uint16_t last_capture;

ISR(TIMER1_CAPT_vect)
{
    uint16_t now = ICR1;
    uint8_t control = TCCR1B;
    uint8_t ended = (uint8_t)((control & (1u << ICES1)) ? 0u : 1u); /* rising: a space ended */
    TCCR1B = (uint8_t)(control ^ (1u << ICES1));
    TIFR1 = (uint8_t)(1u << ICF1); /* changing the edge may set ICF1 */
    OCR1B = (uint16_t)(now + OOK_IDLE_TICKS); /* compare B: the line went quiet */
    RX_EDGE(ended, (uint16_t)(now - last_capture));
    last_capture = now;
    if ((uint8_t)((PINB & (1u << PB0)) != 0u) == ended) {
        /* the line went back before the other edge was armed (a pulse shorter than this
         * ISR): queue that pulse as ending now and wait for this edge direction again */
        uint16_t back = TCNT1;
        TCCR1B = control;
        TIFR1 = (uint8_t)(1u << ICF1);
        GPIOR1 = OOK_MARK_TWO_EDGES;
        RX_EDGE((uint8_t)(ended ^ 1u), (uint16_t)(back - now));
        last_capture = back;
    }
#ifdef OOK_RX_IN_ISR
    RX_POLL();
#endif
}

ISR(TIMER1_COMPB_vect)
{
    uint16_t at = OCR1B;
    if ((uint16_t)(at - last_capture) == OOK_IDLE_TICKS) { /* first time in this quiet spell */
        RX_IDLE();
#ifdef OOK_RX_IN_ISR
        RX_POLL();
#endif
    } else {
        last_capture = (uint16_t)(last_capture + OOK_QUIET_STEP);
    }
    OCR1B = (uint16_t)(at + OOK_QUIET_STEP);
}
#endif /* OOK_HEADER_ISRS */

/* PB1 raised by the harness: only wakes the main loop, which then reads the pin */
EMPTY_INTERRUPT(PCINT0_vect)

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
    bool ended = false;
#ifdef OOK_HEADER_ISRS
    OOK_FN(_rx_avr_icp1_start)();
#else
    DDRB = 0; /* PB0 = ICP1 input */
    PORTB = 0;
    RX_INIT();
    TCCR1A = 0;
    TCNT1 = 0;
    OCR1B = OOK_IDLE_TICKS; /* as if an edge came at 0: the quiet spell logic starts in step */
    TIFR1 = (uint8_t)((1u << ICF1) | (1u << OCF1B));
    TIMSK1 = (uint8_t)((1u << ICIE1) | (1u << OCIE1B));
    TCCR1B = (uint8_t)((1u << ICES1) | OOK_TIMER1_CLOCK); /* the line idles low */
#endif
    PCMSK0 = (uint8_t)(1u << PCINT1); /* PB1 (an input, no pull-up): the end of the run */
    PCICR = (uint8_t)(1u << PCIE0);
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
        if (!ended && (PINB & (1u << PB1)) != 0u) {
            ended = true;
            RX_COUNTERS_OF(&c);
            GPIOR0 = OOK_REPORT_END;
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
