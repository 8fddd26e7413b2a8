/* arena.h — one region per parsed circuit: names, syntax, diagnostics.
 * Everything allocated here is freed by one ls_arena_free call. */
#ifndef LS_ARENA_H
#define LS_ARENA_H

#include <stddef.h>

typedef struct ls_arena_block ls_arena_block;
typedef struct ls_arena {
    ls_arena_block *head;
    size_t used;        /* bytes handed out so far (statistics) */
    int failed;         /* set once an allocation fails; stays set */
} ls_arena;

void ls_arena_init(ls_arena *a);
/* Zeroed memory aligned for any type; NULL (and a->failed set) when out of memory. */
void *ls_arena_alloc(ls_arena *a, size_t size);
/* Copy of s[0..n) with a terminating NUL. */
char *ls_arena_strndup(ls_arena *a, const char *s, size_t n);
char *ls_arena_strdup(ls_arena *a, const char *s);
/* printf into the arena. */
char *ls_arena_printf(ls_arena *a, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
void ls_arena_free(ls_arena *a);

#endif
