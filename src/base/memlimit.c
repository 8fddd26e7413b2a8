/* memlimit.c — the memory a process may hold (memlimit.h). */
#include "base/memlimit.h"

#include <stdint.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <unistd.h>

/* The smaller of a and the soft limit of resource res (none: a). */
static size_t under_rlimit(size_t a, int res)
{
    struct rlimit rl;
    if (getrlimit(res, &rl) == 0 && rl.rlim_cur != RLIM_INFINITY && (uintmax_t)rl.rlim_cur < (uintmax_t)a)
        return (size_t)rl.rlim_cur;
    return a;
}

/* See memlimit.h.  Physical memory, not what is free now: other processes
 * come and go, and a limit that changed with them would refuse a circuit
 * one minute and take it the next. */
size_t ls_memory_limit_bytes(void)
{
    size_t bytes = SIZE_MAX;
    long pages = sysconf(_SC_PHYS_PAGES), page = sysconf(_SC_PAGESIZE);
    if (pages > 0 && page > 0 && (uintmax_t)pages <= SIZE_MAX / (uintmax_t)page)
        bytes = (size_t)pages * (size_t)page;
    bytes = under_rlimit(bytes, RLIMIT_AS);
    bytes = under_rlimit(bytes, RLIMIT_DATA);
    /* for the tests only: a budget where no rlimit can be set (a fuzzer
     * under AddressSanitizer, whose shadow memory an address-space limit
     * would refuse, holds each input to 2 GB) */
    const char *mb = getenv("LOADSTACK_TEST_MEMORY_MB");
    if (mb && *mb) {
        char *end;
        unsigned long long v = strtoull(mb, &end, 10);
        if (*end == 0 && v > 0 && v < (unsigned long long)(SIZE_MAX >> 20) && (size_t)v << 20 < bytes)
            bytes = (size_t)v << 20;
    }
    return bytes;
}
