/*
 * Host test program for the run buffer transmitter (project-written): fills the buffer
 * with <prefix>_tx_start for the demo values of demo_values.h (OOK_DEMO_FIELDS) and then
 * calls <prefix>_tx_step as the compare ISR would, until it returns 0. Prints
 *   start 1|0          what tx_start returned
 *   r1 r2 ... 0        every reload value tx_step returned, the final 0 included
 *   busy B             b.busy after the last step
 * Build: cc -std=c99 -DOOK_HEADER='"name.h"' -DOOK_PREFIX=name -DOOK_UPREFIX=NAME
 *        -DNAME_IMPLEMENTATION txbuf_host.c (with demo_values.h beside the header)
 */
#include <stdio.h>

#define OOK_CAT_(a, b) a##b
#define OOK_CAT(a, b) OOK_CAT_(a, b)
#define OOK_FN(suffix) OOK_CAT(OOK_PREFIX, suffix)
#define OOK_CONST(suffix) OOK_CAT(OOK_UPREFIX, suffix)

#include OOK_HEADER
#include "demo_values.h"

/* more steps than any run buffer of the examples holds, times the repeats */
#define MAX_STEPS 1000000L

static struct OOK_FN(_txbuf) txb;

int main(void)
{
    static const struct OOK_FN(_fields) demo = OOK_DEMO_FIELDS;
    long n;
    bool ok = OOK_FN(_tx_start)(&txb, &demo);
    printf("start %d\n", ok ? 1 : 0);
    if (!ok) {
        printf("busy %u\n", (unsigned)txb.busy);
        return 0;
    }
    for (n = 0; n < MAX_STEPS; n++) {
        OOK_FN(_reload_t) r = OOK_FN(_tx_step)(&txb);
        printf("%lu ", (unsigned long)r);
        if (r == 0u) {
            break;
        }
    }
    printf("\nbusy %u\n", (unsigned)txb.busy);
    return 0;
}
