/* pages.c — fresh memory mapped in at once (see pages.h). */
#include "base/pages.h"

#include <stdint.h>
#include <sys/mman.h>
#include <unistd.h>

#define MIN_POPULATE ((size_t)256 << 10)

void ls_pages_populate(void *p, size_t bytes, bool huge)
{
#ifdef MADV_POPULATE_WRITE
    long page = sysconf(_SC_PAGESIZE);
    if (page <= 0 || bytes < MIN_POPULATE)
        return;
    uintptr_t s = ((uintptr_t)p + (uintptr_t)page - 1) & ~((uintptr_t)page - 1);
    uintptr_t e = ((uintptr_t)p + bytes) & ~((uintptr_t)page - 1);
    if (e <= s)
        return;
#ifdef MADV_HUGEPAGE
    if (huge)
        (void)madvise((void *)s, e - s, MADV_HUGEPAGE);
#endif
    (void)madvise((void *)s, e - s, MADV_POPULATE_WRITE);
#endif
    (void)p;
    (void)bytes;
    (void)huge;
}

void *ls_pages_map(size_t len)
{
#ifdef MAP_ANONYMOUS
    size_t span = len + LS_HUGE_PAGE;
    char *p = mmap(NULL, span, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    if (p == MAP_FAILED)
        return NULL;
    char *start = (char *)(((uintptr_t)p + LS_HUGE_PAGE - 1) & ~(uintptr_t)(LS_HUGE_PAGE - 1));
    if (start > p)
        munmap(p, (size_t)(start - p));
    if (start + len < p + span)
        munmap(start + len, (size_t)(p + span - (start + len)));
    ls_pages_populate(start, len, true);
    return start;
#else
    (void)len;
    return NULL;
#endif
}

void ls_pages_unmap(void *p, size_t len)
{
    if (p)
        munmap(p, len);
}
