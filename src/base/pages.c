/* pages.c — fresh memory mapped in at once (see pages.h). */
#include "base/pages.h"

#include <pthread.h>
#include <stdatomic.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
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

/* ---- large blocks, each a mapping of its own ----------------------------- */

typedef struct big_slot {
    void *p;
    size_t len; /* the mapping's length, a multiple of LS_HUGE_PAGE */
} big_slot;

static big_slot big_slots[LS_BIG_SLOTS];
static pthread_mutex_t big_lock = PTHREAD_MUTEX_INITIALIZER;
/* Slots taken (under the lock; read without it to skip the lock and the
 * scan for the many small blocks freed while no mapping is alive: a taken
 * slot's count is stored before its block exists, so a free of that block
 * sees it) and the end of the slots ever taken. */
static _Atomic int big_live;
static int big_end;

/* A zeroed mapping of at least bytes, aligned to LS_HUGE_PAGE and advised
 * to take huge pages (not populated: a block is often touched in part), in
 * the table; NULL when it cannot be mapped or the table is full. */
static void *big_map(size_t bytes)
{
#if defined(MAP_ANONYMOUS) && defined(MADV_HUGEPAGE)
    if (bytes > SIZE_MAX - 2 * LS_HUGE_PAGE)
        return NULL;
    size_t len = (bytes + LS_HUGE_PAGE - 1) & ~(LS_HUGE_PAGE - 1);
    pthread_mutex_lock(&big_lock);
    int k = 0;
    while (k < LS_BIG_SLOTS && big_slots[k].p)
        k++;
    if (k == LS_BIG_SLOTS) {
        pthread_mutex_unlock(&big_lock);
        return NULL;
    }
    big_slots[k].p = (void *)1; /* taken while the mapping is made */
    big_live++;
    if (k >= big_end)
        big_end = k + 1;
    pthread_mutex_unlock(&big_lock);
    size_t span = len + LS_HUGE_PAGE;
    char *p = mmap(NULL, span, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    char *start = NULL;
    if (p != MAP_FAILED) {
        start = (char *)(((uintptr_t)p + LS_HUGE_PAGE - 1) & ~(uintptr_t)(LS_HUGE_PAGE - 1));
        if (start > p)
            munmap(p, (size_t)(start - p));
        if (start + len < p + span)
            munmap(start + len, (size_t)(p + span - (start + len)));
        (void)madvise(start, len, MADV_HUGEPAGE);
    }
    pthread_mutex_lock(&big_lock);
    big_slots[k].p = start;
    big_slots[k].len = start ? len : 0;
    if (!start)
        big_live--;
    pthread_mutex_unlock(&big_lock);
    return start;
#else
    (void)bytes;
    return NULL;
#endif
}

/* The mapping's length if p is one of the table's, else 0; with unmap, the
 * slot is given up as well. */
static size_t big_find(void *p, bool unmap)
{
    size_t len = 0;
    if (big_live == 0)
        return 0;
    pthread_mutex_lock(&big_lock);
    for (int k = 0; k < big_end; k++)
        if (big_slots[k].p == p) {
            len = big_slots[k].len;
            if (unmap) {
                big_slots[k].p = NULL;
                big_live--;
            }
            break;
        }
    pthread_mutex_unlock(&big_lock);
    if (unmap && len)
        munmap(p, len);
    return len;
}

/* Make the table's length of mapping p keep (less than it was); false when
 * p is not in the table. */
static bool big_trim(void *p, size_t keep)
{
    bool found = false;
    pthread_mutex_lock(&big_lock);
    for (int k = 0; k < big_end && !found; k++)
        if (big_slots[k].p == p) {
            big_slots[k].len = keep;
            found = true;
        }
    pthread_mutex_unlock(&big_lock);
    return found;
}

void *ls_big_malloc(size_t bytes)
{
    void *p = bytes >= LS_BIG_BLOCK ? big_map(bytes) : NULL;
    return p ? p : malloc(bytes);
}

void *ls_big_calloc(size_t count, size_t size)
{
    if (size != 0 && count > SIZE_MAX / size)
        return NULL;
    void *p = count * size >= LS_BIG_BLOCK ? big_map(count * size) : NULL;
    return p ? p : calloc(count, size);
}

void *ls_big_realloc(void *p, size_t bytes)
{
    size_t len = p ? big_find(p, false) : 0;
    if (!len)
        return realloc(p, bytes);
    if (bytes <= len) { /* a mapping shrinks in place, its whole huge pages past bytes given back */
        size_t keep = bytes ? (bytes + LS_HUGE_PAGE - 1) & ~(LS_HUGE_PAGE - 1) : LS_HUGE_PAGE;
        if (keep < len && big_trim(p, keep))
            munmap((char *)p + keep, len - keep);
        return p;
    }
    void *q = ls_big_malloc(bytes);
    if (!q)
        return NULL;
    memcpy(q, p, len);
    big_find(p, true);
    return q;
}

void ls_big_free(void *p)
{
    if (p && !big_find(p, true))
        free(p);
}
