/* Reads one int64 fixed-point physical value per line from stdin and prints
 * "<raw from fixed> <fixed from that raw>" using one field's helper macros.
 * Built by tests/test_codegen_fixed.py with OOK_HEADER, OOK_RAW_FROM_FIXED and
 * OOK_FIXED_FROM_RAW defined on the command line. */
#include <inttypes.h>
#include <stdio.h>

#include OOK_HEADER

int main(void)
{
    char line[64];
    while (fgets(line, sizeof line, stdin) != NULL) {
        int64_t fixed;
        int64_t raw;
        if (sscanf(line, "%" SCNd64, &fixed) != 1) {
            return 2;
        }
        raw = OOK_RAW_FROM_FIXED(fixed);
        printf("%" PRId64 " %" PRId64 "\n", raw, OOK_FIXED_FROM_RAW(raw));
    }
    return 0;
}
