/*
 * ATmega328P test firmware (project-written): transmits the demo frame of a generated
 * ookframe header with the run buffer transmitter. <prefix>_tx_start fills the buffer;
 * Timer1 runs in CTC mode with OC1A (PB1) toggling on every compare match, and the compare
 * ISR only loads the next reload value (<prefix>_tx_step). With -DOOK_ASM_ISR the ISR is
 * the header's <PREFIX>_TX_AVR_ISR (the same steps in assembly).
 *
 * GPIOR0 gets 0xEE when tx_start refuses the frame, 0xD0 when the transmission is over.
 * Build like firmware.c (see tests/c/avr_run.py); run under tests/c/avr/simharness.c.
 */
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/pgmspace.h>
#include <avr/sleep.h>
#include <stdbool.h>
#include <stdint.h>

#define OOK_CAT_(a, b) a##b
#define OOK_CAT(a, b) OOK_CAT_(a, b)
#define OOK_FN(suffix) OOK_CAT(OOK_PREFIX, suffix)
#define OOK_CONST(suffix) OOK_CAT(OOK_UPREFIX, suffix)

#include OOK_HEADER
#include "demo_values.h"
#include "timer1_clock.h"

/* ticks before the first compare match (the first, rising, edge) */
#define LEAD_IN_TICKS 200u

static struct OOK_FN(_txbuf) txb;

#ifdef OOK_ASM_ISR
OOK_CONST(_TX_AVR_ISR)(TIMER1_COMPA_vect, txb, OCR1A, TCCR1B)
#else
ISR(TIMER1_COMPA_vect)
{
    OOK_FN(_reload_t) r = OOK_FN(_tx_step)(&txb);
    if (r != 0u) {
        OCR1A = r;
    } else {
        TCCR1B = 0; /* stop the clock; */
    }
}
#endif

int main(void)
{
    static const struct OOK_FN(_fields) demo = OOK_DEMO_FIELDS;
    DDRB = (uint8_t)(1u << PB1);
    PORTB = 0;
    if (!OOK_FN(_tx_start)(&txb, &demo)) {
        GPIOR0 = 0xEEu;
        cli();
        sleep_mode();
    }
    TCNT1 = 0;
    OCR1A = LEAD_IN_TICKS - 1u;
    TCCR1A = (uint8_t)(1u << COM1A0); /* toggle OC1A on compare match */
    TIMSK1 = (uint8_t)(1u << OCIE1A);
    TCCR1B = OOK_TIMER1_CTC_CLOCK;
    SMCR = 0; /* idle sleep mode (SM2..0 = 0) */
    for (;;) {
        cli();
        if (!txb.busy) {
            break;
        }
        sleep_enable();
        sei(); /* the instruction after sei runs first: no wake-up is lost */
        sleep_cpu();
        sleep_disable();
    }
    TCCR1A = 0; /* OC1A off: the pin is PORTB1 = 0, carrier off */
    GPIOR0 = 0xD0u;
    sleep_mode(); /* interrupts off: simavr ends the run */
    return 0;
}
