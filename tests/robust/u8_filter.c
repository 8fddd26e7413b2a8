/* u8_filter.c — test driver: standard input through a text destination
 * (ls_dest_text) to standard output, in writes of pseudo-random sizes
 * (1..17 bytes, seeded by argv[1]) with a flush after each, so that sequences
 * are split across the filter's writes at every position. */
#include <stdio.h>
#include <stdlib.h>

#include "report/output.h"

int main(int argc, char **argv)
{
    unsigned long long x = argc > 1 ? strtoull(argv[1], NULL, 10) : 1;
    ls_dest d;
    char msg[256];
    if (ls_dest_open(&d, "test", "-", msg, sizeof msg) != 0 || ls_dest_text(&d) != 0)
        return 2;
    unsigned char buf[32];
    for (;;) {
        x = x * 6364136223846793005ULL + 1442695040888963407ULL; /* Knuth's MMIX LCG */
        size_t want = 1 + (size_t)((x >> 33) % 17);
        size_t n = fread(buf, 1, want, stdin);
        if (n == 0)
            break;
        fwrite(buf, 1, n, d.f);
        fflush(d.f);
    }
    return ls_dest_commit(&d, msg, sizeof msg) == 0 ? 0 : 2;
}
