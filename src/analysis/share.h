/* share.h — independent items of a run (tol's Monte Carlo trials, sweep's
 * points) shared among cooperating processes: each computes a contiguous
 * range, then every process gets all of them, so the statistics and the
 * report are computed from the same numbers as in one process.  The program
 * loadstack-mpi sets one up over MPI (mpi_share.c); a NULL share means one
 * process does everything. */
#ifndef LS_SHARE_H
#define LS_SHARE_H

#include <stddef.h>

typedef struct ls_share {
    int rank, size;        /* this process, and how many cooperate (size >= 1) */
    /* buf holds count items of width bytes; this process has filled items
     * [first, last) of its ls_share_range.  On return every item is filled,
     * identically in every process.  0, or -1 on failure (in every process). */
    int (*gather)(const struct ls_share *s, void *buf, long count, size_t width);
} ls_share;

/* This process's items [*first, *last) of count (all of them without a share). */
static inline void ls_share_range(const ls_share *s, long count, long *first, long *last)
{
    int r = s ? s->rank : 0, n = s ? s->size : 1;
    *first = (long)((long long)count * r / n);
    *last = (long)((long long)count * (r + 1) / n);
}

/* Bring every process's items to all (see gather); 0 without a share. */
static inline int ls_share_gather(const ls_share *s, void *buf, long count, size_t width)
{
    return s && s->size > 1 ? s->gather(s, buf, count, width) : 0;
}

#endif
