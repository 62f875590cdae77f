/*
 * Host test driver (project-written): runs the generated receiver's <prefix>_rx_permille
 * (a static function, so this file includes the implementation) on the lines of stdin,
 * "NUM DEN TOP" each, and prints one result per line.
 * Build: cc -DOOK_HEADER='"x.h"' -DOOK_PREFIX=x -DX_IMPLEMENTATION rx_permille.c
 */
#include <stdio.h>

#include OOK_HEADER

#define OOK_CAT_(a, b) a##b
#define OOK_CAT(a, b) OOK_CAT_(a, b)

int main(void)
{
    unsigned long num;
    unsigned long den;
    unsigned top;
    while (scanf("%lu %lu %u", &num, &den, &top) == 3) {
        printf("%u\n", (unsigned)OOK_CAT(OOK_PREFIX, _rx_permille)((uint32_t)num, (uint32_t)den,
                                                                  (uint16_t)top));
    }
    return 0;
}
