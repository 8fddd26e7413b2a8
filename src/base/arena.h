/* arena.h — one region per parsed circuit: names, syntax, diagnostics.
 * Everything allocated here is freed by one ls_arena_free call.
 *
 * Blocks grow geometrically (64 KB doubling up to 32 MB), so a large circuit
 * takes few of them; a block of 2 MB or more is mapped directly and mapped
 * in at once, with huge pages where the kernel gives them (base/pages.h).  Block
 * memory is never reused before ls_arena_free, so it is zero until handed
 * out: zeroed allocations cost nothing extra, and text is not aligned. */
#ifndef LS_ARENA_H
#define LS_ARENA_H

#include <stddef.h>

typedef struct ls_arena_block ls_arena_block;
typedef struct ls_arena {
    ls_arena_block *head;   /* the block small allocations come from */
    size_t used;            /* bytes handed out so far, alignment padding included (statistics) */
    size_t reserved;        /* bytes of blocks obtained from the system (statistics) */
    size_t next_cap;        /* data bytes of the next ordinary block; 0 before the first */
    int failed;             /* set once an allocation fails; stays set */
    size_t failed_bytes;    /* the block (or object) the first failure asked the system for */
} ls_arena;

void ls_arena_init(ls_arena *a);
/* Zeroed memory for an object (or array) of `size` bytes, aligned for any type
 * of that size: to 16 bytes when size is a multiple of 16 (every type that needs
 * 16 has such a size), else to 8.  size 0 gives a valid, empty allocation.
 * NULL (and a->failed set) when out of memory. */
void *ls_arena_alloc(ls_arena *a, size_t size);
/* `size` bytes with no alignment and no promise about their contents, for text.
 * NULL (and a->failed set) when out of memory. */
char *ls_arena_alloc_bytes(ls_arena *a, size_t size);
/* Copy of s[0..n) with a terminating NUL (1-byte aligned). */
char *ls_arena_strndup(ls_arena *a, const char *s, size_t n);
char *ls_arena_strdup(ls_arena *a, const char *s);
/* printf into the arena. */
char *ls_arena_printf(ls_arena *a, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
/* A point in the arena's history, to return to: per-call scratch (a quantity
 * parsed and bound for one evaluation) is allocated after a mark and handed
 * back by ls_arena_release, so a long-lived circuit does not grow with each
 * call. */
typedef struct ls_arena_mark {
    ls_arena_block *head, *head_next;  /* the list's first two blocks at the mark */
    size_t head_off;                   /* bytes of head handed out at the mark */
    size_t used, reserved, next_cap;
} ls_arena_mark;

ls_arena_mark ls_arena_mark_now(const ls_arena *a);
/* Free everything allocated since mark m (blocks obtained since, and the tail
 * of the block that was current, cleared again so that fresh memory stays
 * zero).  Nothing allocated since m may be used afterwards; marks are
 * released innermost first.  `failed` is kept. */
void ls_arena_release(ls_arena *a, const ls_arena_mark *m);
/* Frees every block; the arena may be used again.  `failed` is kept. */
void ls_arena_free(ls_arena *a);

#endif
