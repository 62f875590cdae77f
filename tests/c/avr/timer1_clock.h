/* Timer1 in CTC mode (WGM12) with the clock select for the generated header's prescaler;
 * shared by the test firmwares. Include after OOK_CONST is defined and the header is in.
 * The empty baseline build (OOK_BASELINE) has no header timing and runs at /8. */
#ifndef OOK_TEST_TIMER1_CLOCK_H
#define OOK_TEST_TIMER1_CLOCK_H

#if !defined(OOK_BASELINE) && OOK_CONST(_TIMER_PRESCALER) == 1
#define OOK_TIMER1_CTC_CLOCK ((uint8_t)((1u << WGM12) | (1u << CS10)))
#elif defined(OOK_BASELINE) || OOK_CONST(_TIMER_PRESCALER) == 8
#define OOK_TIMER1_CTC_CLOCK ((uint8_t)((1u << WGM12) | (1u << CS11)))
#elif OOK_CONST(_TIMER_PRESCALER) == 64
#define OOK_TIMER1_CTC_CLOCK ((uint8_t)((1u << WGM12) | (1u << CS11) | (1u << CS10)))
#elif OOK_CONST(_TIMER_PRESCALER) == 256
#define OOK_TIMER1_CTC_CLOCK ((uint8_t)((1u << WGM12) | (1u << CS12)))
#elif OOK_CONST(_TIMER_PRESCALER) == 1024
#define OOK_TIMER1_CTC_CLOCK ((uint8_t)((1u << WGM12) | (1u << CS12) | (1u << CS10)))
#else
#error "prescaler not available on Timer1"
#endif

#endif
