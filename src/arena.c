/* arena.c — bump allocation in large blocks. */
#include "arena.h"

#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

struct ls_arena_block {
    ls_arena_block *next;
    size_t cap, off;
    max_align_t data[];
};

enum { BLOCK_BYTES = 64 * 1024 };

void ls_arena_init(ls_arena *a)
{
    memset(a, 0, sizeof *a);
}

void *ls_arena_alloc(ls_arena *a, size_t size)
{
    const size_t align = sizeof(max_align_t);
    if (size > SIZE_MAX / 2) {
        a->failed = 1;
        return NULL;
    }
    size = (size + align - 1) / align * align;
    ls_arena_block *b = a->head;
    if (!b || b->cap - b->off < size) {
        size_t cap = size > BLOCK_BYTES ? size : BLOCK_BYTES;
        b = malloc(sizeof *b + cap);
        if (!b) {
            a->failed = 1;
            return NULL;
        }
        b->cap = cap;
        b->off = 0;
        /* A block made for one big object goes second so the current block
         * keeps serving small ones. */
        if (a->head && cap > BLOCK_BYTES) {
            b->next = a->head->next;
            a->head->next = b;
        } else {
            b->next = a->head;
            a->head = b;
        }
    }
    void *p = (char *)b->data + b->off;
    b->off += size;
    a->used += size;
    memset(p, 0, size);
    return p;
}

char *ls_arena_strndup(ls_arena *a, const char *s, size_t n)
{
    char *p = ls_arena_alloc(a, n + 1);
    if (p) {
        memcpy(p, s, n);
        p[n] = 0;
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
    char *p = ls_arena_alloc(a, (size_t)n + 1);
    if (!p)
        return NULL;
    va_start(ap, fmt);
    vsnprintf(p, (size_t)n + 1, fmt, ap);
    va_end(ap);
    return p;
}

void ls_arena_free(ls_arena *a)
{
    ls_arena_block *b = a->head;
    while (b) {
        ls_arena_block *n = b->next;
        free(b);
        b = n;
    }
    a->head = NULL;
    a->used = 0;
}
