/*
 * ATmega328P test firmware (project-written): transmits one frame of a generated
 * ookframe header on OC1A (PB1) from the Timer1 compare-match interrupt, driven by
 * <prefix>_tx_next. The pin is switched by the timer hardware (COM1A set/clear on
 * compare match), so every edge lands exactly on a timer tick; the ISR only prepares
 * the next pulse. PD2 is high while tx_next runs (cycle measurement; on another port,
 * because simavr 1.6 lets a PORTB write override the OC1A output). PD3 high = pack failed;
 * PD4 rises when the transmission is over (so the trace runs past the last TX edge);
 * PD5 is high while <prefix>_pack runs.
 *
 * Build (see tests/test_codegen_avr.py): avr-gcc -mmcu=atmega328p -Os -DF_CPU=...
 *   -DOOK_HEADER='"name.h"' -DOOK_PREFIX=name -DOOK_UPREFIX=NAME
 *   -DNAME_TABLE=PROGMEM -D'NAME_READ_U8(a)=pgm_read_byte(a)' ... -I<simavr include>
 *   -Wl,--undefined=_mmcu,--section-start=.mmcu=0x910000 (keeps simavr's metadata out of
 *   flash, where it would shift the .data load address)
 * with demo_values.h defining OOK_DEMO_FIELDS (an initializer of struct <prefix>_fields).
 * -DOOK_BASELINE builds the same skeleton without the frame code (for size deltas).
 */
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/pgmspace.h>
#include <avr/sleep.h>
#include <stdbool.h>
#include <stdint.h>

#include "avr/avr_mcu_section.h"

AVR_MCU(F_CPU, "atmega328p");
AVR_MCU_VCD_FILE("trace.vcd", 1000);
AVR_MCU_VCD_PORT_PIN('B', 1, "TX");
AVR_MCU_VCD_PORT_PIN('D', 2, "CPU");
AVR_MCU_VCD_PORT_PIN('D', 3, "ERROR");
AVR_MCU_VCD_PORT_PIN('D', 4, "END");
AVR_MCU_VCD_PORT_PIN('D', 5, "PACK");

#define OOK_CAT_(a, b) a##b
#define OOK_CAT(a, b) OOK_CAT_(a, b)
#define OOK_FN(suffix) OOK_CAT(OOK_PREFIX, suffix)
#define OOK_CONST(suffix) OOK_CAT(OOK_UPREFIX, suffix)

/* ticks of silence before the first pulse, so the first level is set by the hardware too */
#define LEAD_IN_TICKS 200u
#define COM_SET ((1 << COM1A1) | (1 << COM1A0))
#define COM_CLEAR (1 << COM1A1)

#ifndef OOK_BASELINE
#include OOK_HEADER
#include "demo_values.h"
typedef OOK_FN(_ticks_t) ticks_t;
static struct OOK_FN(_tx) tx;
static uint8_t frame[OOK_CONST(_MAX_FRAME_BYTES)];
static bool next_pulse(uint8_t *level, ticks_t *ticks)
{
    bool more;
    PORTD |= (uint8_t)(1u << PD2);
    more = OOK_FN(_tx_next)(&tx, level, ticks);
    PORTD &= (uint8_t)~(1u << PD2);
    return more;
}
#else
typedef uint16_t ticks_t;
static volatile uint8_t fake_count;
static bool next_pulse(uint8_t *level, ticks_t *ticks)
{
    PORTD |= (uint8_t)(1u << PD2);
    *level = (uint8_t)(fake_count & 1u);
    *ticks = 300u;
    PORTD &= (uint8_t)~(1u << PD2);
    return ++fake_count < 4u;
}
#endif
#include "timer1_clock.h"

static volatile uint8_t state; /* 0 running, 1 last pulse on air, 2 done */
static ticks_t pending_ticks;

static void arm_next(void)
{
    uint8_t level = 0;
    ticks_t ticks = 0;
    if (next_pulse(&level, &ticks)) {
        pending_ticks = ticks;
        TCCR1A = (uint8_t)(level ? COM_SET : COM_CLEAR);
    } else {
        TCCR1A = COM_CLEAR; /* carrier off when the last pulse ends */
        state = 1;
    }
}

ISR(TIMER1_COMPA_vect)
{
    if (state == 1) {
        TCCR1B = 0; /* stop */
        state = 2;
        return;
    }
    OCR1A = (uint16_t)(pending_ticks - 1u); /* the pulse that starts now */
    arm_next();
}

int main(void)
{
    DDRB = (uint8_t)(1u << PB1);
    PORTB = 0;
    DDRD = (uint8_t)((1u << PD2) | (1u << PD3) | (1u << PD4) | (1u << PD5));
    PORTD = 0;
#ifndef OOK_BASELINE
    {
        static const struct OOK_FN(_fields) demo = OOK_DEMO_FIELDS;
        size_t nbits;
        PORTD |= (uint8_t)(1u << PD5);
        nbits = OOK_FN(_pack)(&demo, frame, sizeof frame);
        PORTD &= (uint8_t)~(1u << PD5);
        if (nbits == 0u) {
            PORTD |= (uint8_t)(1u << PD3);
            cli();
            sleep_mode();
        }
        OOK_FN(_tx_init)(&tx, frame, nbits);
    }
#endif
    TCNT1 = 0;
    OCR1A = LEAD_IN_TICKS - 1u;
    arm_next();
    TIMSK1 = (uint8_t)(1u << OCIE1A);
    /* CTC (WGM12), prescaler from the header's timing */
    TCCR1B = OOK_TIMER1_CTC_CLOCK;
    sei();
    while (state != 2) {
        sleep_mode(); /* idle until the next compare match */
    }
    PORTD |= (uint8_t)(1u << PD4);
    cli();
    sleep_mode(); /* interrupts off: simavr ends the run */
    return 0;
}
