/*
 * Host test harness for a generated ookframe header (project-written test code).
 *
 * Build: cc -std=c99 -DOOK_HEADER='"name.h"' -DOOK_PREFIX=name -DOOK_UPREFIX=NAME harness.c
 * (the build defines NAME_IMPLEMENTATION). Reads one case per line on stdin:
 *
 *   P cap v1 v2 ... vn   pack the raw field values (decimal; bytes fields as hex, "-" if
 *                        empty) into a buffer of cap bytes, then transmit the result
 *   T nbits hex          transmit the given bit stream as is
 *
 * and prints for a P case "nbits hex" (or "0 -"), then for both kinds one line
 * "L level:ticks level:ticks ..." with every pulse of tx_next.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include OOK_HEADER

#define OOK_CAT_(a, b) a##b
#define OOK_CAT(a, b) OOK_CAT_(a, b)
#define OOK_FN(suffix) OOK_CAT(OOK_PREFIX, suffix)
#define OOK_CONST(suffix) OOK_CAT(OOK_UPREFIX, suffix)

#define LINE_MAX_CHARS 8192
#define BUF_BYTES (OOK_CONST(_MAX_FRAME_BYTES) + 64u)
#define MAX_PULSES 2000000L

static int hex_nibble(char c)
{
    if (c >= '0' && c <= '9') {
        return c - '0';
    }
    if (c >= 'a' && c <= 'f') {
        return c - 'a' + 10;
    }
    if (c >= 'A' && c <= 'F') {
        return c - 'A' + 10;
    }
    return -1;
}

/* decodes hex text into out (at most cap bytes); returns the byte count or -1 */
static long from_hex(const char *text, uint8_t *out, size_t cap)
{
    size_t n = strlen(text);
    size_t i;
    if (strcmp(text, "-") == 0) {
        return 0;
    }
    if (n % 2u != 0u || n / 2u > cap) {
        return -1;
    }
    for (i = 0; i < n / 2u; i++) {
        int hi = hex_nibble(text[2u * i]);
        int lo = hex_nibble(text[2u * i + 1u]);
        if (hi < 0 || lo < 0) {
            return -1;
        }
        out[i] = (uint8_t)((hi << 4) | lo);
    }
    return (long)(n / 2u);
}

static void print_pulses(const uint8_t *bits, size_t nbits)
{
    struct OOK_FN(_tx) tx;
    uint8_t level = 0;
    OOK_FN(_ticks_t) ticks = 0;
    long count = 0;
    OOK_FN(_tx_init)(&tx, bits, nbits);
    fputs("L", stdout);
    while (OOK_FN(_tx_next)(&tx, &level, &ticks)) {
        printf(" %u:%lu", (unsigned)level, (unsigned long)ticks);
        if (++count > MAX_PULSES) {
            puts(" runaway");
            exit(3);
        }
    }
    /* once done, it stays done */
    if (OOK_FN(_tx_next)(&tx, &level, &ticks)) {
        puts(" not-sticky");
        exit(4);
    }
    putchar('\n');
}

static char *next_token(void)
{
    return strtok(NULL, " \t\r\n");
}

static int fail(const char *what)
{
    printf("harness-error %s\n", what);
    return 2;
}

#define READ_INT(name, type, is_signed)                            \
    tok = next_token();                                            \
    if (tok == NULL) {                                             \
        return fail("missing value for " #name);                   \
    }                                                              \
    if (is_signed) {                                               \
        f.name = (type)strtoll(tok, NULL, 10);                     \
    } else {                                                       \
        f.name = (type)strtoull(tok, NULL, 10);                    \
    }
#define READ_BYTES(name, max_len, count)                           \
    tok = next_token();                                            \
    if (tok == NULL || from_hex(tok, f.name, (size_t)(max_len)) < 0) { \
        return fail("bad bytes for " #name);                       \
    }

static int run_case(char *line)
{
    static uint8_t buf[BUF_BYTES];
    char *tok = strtok(line, " \t\r\n");
    if (tok == NULL) {
        return 0;
    }
    if (strcmp(tok, "P") == 0) {
        struct OOK_FN(_fields) f;
        size_t cap;
        size_t nbits;
        size_t i;
        memset(&f, 0, sizeof f);
        tok = next_token();
        if (tok == NULL) {
            return fail("missing cap");
        }
        cap = (size_t)strtoul(tok, NULL, 10);
        if (cap > BUF_BYTES) {
            return fail("cap too large");
        }
        OOK_CONST(_FIELD_LIST)(READ_INT, READ_BYTES)
        memset(buf, 0xA5, sizeof buf);
        nbits = OOK_FN(_pack)(&f, buf, cap);
        if (nbits == 0u) {
            /* nothing may be written past cap either way; check it stayed untouched */
            for (i = cap; i < BUF_BYTES; i++) {
                if (buf[i] != 0xA5u) {
                    return fail("wrote past out_cap");
                }
            }
            puts("0 -");
            puts("L");
            return 0;
        }
        for (i = (nbits + 7u) / 8u; i < BUF_BYTES; i++) {
            if (buf[i] != 0xA5u) {
                return fail("wrote past the frame");
            }
        }
        printf("%lu ", (unsigned long)nbits);
        for (i = 0; i < (nbits + 7u) / 8u; i++) {
            printf("%02x", (unsigned)buf[i]);
        }
        putchar('\n');
        print_pulses(buf, nbits);
        return 0;
    }
    if (strcmp(tok, "T") == 0) {
        size_t nbits;
        long n;
        tok = next_token();
        if (tok == NULL) {
            return fail("missing nbits");
        }
        nbits = (size_t)strtoul(tok, NULL, 10);
        tok = next_token();
        n = tok == NULL ? -1 : from_hex(tok, buf, BUF_BYTES);
        if (n < 0 || (size_t)n * 8u < nbits) {
            return fail("bad bits");
        }
        print_pulses(buf, nbits);
        return 0;
    }
    return fail("unknown case kind");
}

int main(void)
{
    static char line[LINE_MAX_CHARS];
#ifdef OOK_SELF_TEST
    if (!OOK_FN(_self_test)()) {
        puts("self-test failed");
        return 5;
    }
#endif
    while (fgets(line, sizeof line, stdin) != NULL) {
        int rc = run_case(line);
        if (rc != 0) {
            return rc;
        }
    }
    return 0;
}
