/* arena.c — bump allocation in geometrically growing blocks. */
#include "base/arena.h"

#include "base/pages.h"

#include <stdarg.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

struct ls_arena_block {
    ls_arena_block *next;
    size_t cap, off;       /* data bytes; bytes of them handed out */
    size_t map_len;        /* bytes mapped (the block starts the mapping); 0: from calloc */
    max_align_t data[];
};

#define FIRST_BLOCK ((size_t)64 << 10)
#define MAX_BLOCK ((size_t)32 << 20)

void ls_arena_init(ls_arena *a)
{
    memset(a, 0, sizeof *a);
}

/* A zeroed block with at least cap data bytes; NULL when out of memory.  A
 * block of LS_HUGE_PAGE or more is its own mapping, mapped in at once with
 * huge pages where the kernel has them (base/pages.h: first touches of fresh
 * pages one by one were the largest cost of a large circuit's parse). */
static ls_arena_block *new_block(size_t cap)
{
    size_t bytes = offsetof(ls_arena_block, data) + cap;
    if (bytes >= LS_HUGE_PAGE) {
        size_t len = (bytes + LS_HUGE_PAGE - 1) & ~(LS_HUGE_PAGE - 1);
        ls_arena_block *b = ls_pages_map(len);
        if (b) {
            b->next = NULL;
            b->cap = len - offsetof(ls_arena_block, data);
            b->off = 0;
            b->map_len = len;
            return b;
        }
    }
    ls_arena_block *b = calloc(1, bytes); /* fresh pages are not cleared twice */
    if (b)
        b->cap = cap;
    return b;
}

/* The slow path of bump(): a new block, then the allocation from it.  An
 * object larger than a quarter of the next block gets a block of its own,
 * placed second so the current block keeps serving small objects. */
static __attribute__((noinline)) void *bump_new(ls_arena *a, size_t size, size_t align)
{
    if (size > SIZE_MAX / 4) {
        if (!a->failed)
            a->failed_bytes = size;
        a->failed = 1;
        return NULL;
    }
    if (!a->next_cap)
        a->next_cap = FIRST_BLOCK;
    bool alone = size > a->next_cap / 4;
    ls_arena_block *b = new_block(alone ? size : a->next_cap);
    if (!b) {
        if (!a->failed)
            a->failed_bytes = alone ? size : a->next_cap;
        a->failed = 1;
        return NULL;
    }
    a->reserved += offsetof(ls_arena_block, data) + b->cap;
    if (alone && a->head) {
        b->next = a->head->next;
        a->head->next = b;
    } else {
        b->next = a->head;
        a->head = b;
        if (!alone && a->next_cap < MAX_BLOCK)
            a->next_cap *= 2;
    }
    (void)align; /* block data is aligned for any type */
    b->off = size;
    a->used += size;
    return b->data;
}

/* size bytes at an offset that is a multiple of align (a power of two). */
static inline void *bump(ls_arena *a, size_t size, size_t align)
{
    ls_arena_block *b = a->head;
    if (b) {
        size_t off = (b->off + align - 1) & ~(align - 1);
        if (off <= b->cap && b->cap - off >= size) {
            a->used += off - b->off + size;
            b->off = off + size;
            return (char *)b->data + off;
        }
    }
    return bump_new(a, size, align);
}

void *ls_arena_alloc(ls_arena *a, size_t size)
{
    /* Block memory is zero until handed out (calloc or a fresh mapping) and is
     * never handed out twice, so there is nothing to clear. */
    return bump(a, size, size % 16 == 0 ? 16 : 8);
}

char *ls_arena_alloc_bytes(ls_arena *a, size_t size)
{
    return bump(a, size, 1);
}

char *ls_arena_strndup(ls_arena *a, const char *s, size_t n)
{
    char *p = n < SIZE_MAX ? bump(a, n + 1, 1) : NULL;
    if (p) {
        memcpy(p, s, n);
        p[n] = 0;
    } else {
        a->failed = 1;
    }
    return p;
}

char *ls_arena_strdup(ls_arena *a, const char *s)
{
    return ls_arena_strndup(a, s, strlen(s));
}

char *ls_arena_printf(ls_arena *a, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    if (n < 0)
        return NULL;
    char *p = bump(a, (size_t)n + 1, 1);
    if (!p)
        return NULL;
    va_start(ap, fmt);
    vsnprintf(p, (size_t)n + 1, fmt, ap);
    va_end(ap);
    return p;
}

ls_arena_mark ls_arena_mark_now(const ls_arena *a)
{
    ls_arena_mark m = {a->head, a->head ? a->head->next : NULL, a->head ? a->head->off : 0, a->used,
                       a->reserved, a->next_cap};
    return m;
}

/* Give the blocks from b up to (not including) stop back to the system;
 * returns stop. */
static ls_arena_block *drop_blocks(ls_arena_block *b, const ls_arena_block *stop)
{
    while (b && b != stop) {
        ls_arena_block *n = b->next;
        if (b->map_len)
            ls_pages_unmap(b, b->map_len);
        else
            free(b);
        b = n;
    }
    return b;
}

void ls_arena_release(ls_arena *a, const ls_arena_mark *m)
{
    /* Blocks obtained since the mark sit before the marked head (ordinary
     * blocks are pushed in front) or right after it (a large object's block
     * is placed second). */
    ls_arena_block *b = drop_blocks(a->head, m->head);
    a->head = b;
    if (b) {
        b->next = drop_blocks(b->next, m->head_next);
        if (b->off > m->head_off)
            memset((char *)b->data + m->head_off, 0, b->off - m->head_off);
        b->off = m->head_off;
    }
    a->used = m->used;
    a->reserved = m->reserved;
    a->next_cap = m->next_cap;
}

void ls_arena_free(ls_arena *a)
{
    drop_blocks(a->head, NULL);
    a->head = NULL;
    a->used = 0;
    a->reserved = 0;
    a->next_cap = 0;
}
