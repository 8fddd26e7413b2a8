/* nodenames.c — numbering the parser's node names (see nodenames.h). */
#include "lang/nodenames.h"

#include <limits.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include "base/hash.h"

void ls_node_names_init(ls_node_names *nn)
{
    nn->n = 0;
    nn->recent = calloc(LS_RECENT_NAMES, sizeof *nn->recent);
}

void ls_node_names_free(ls_node_names *nn)
{
    free(nn->recent);
    nn->recent = NULL;
}

/* Is the kept name `name` the n bytes at text? */
static inline bool same_name(const char *name, const char *text, size_t n)
{
    return strncmp(name, text, n) == 0 && name[n] == '\0';
}

const char *ls_node_names_intern(ls_node_names *nn, ls_arena *a, const char *text, size_t n, int *key)
{
    *key = 0;
    if (!nn->recent)
        return ls_arena_strndup(a, text, n);
    uint32_t hv = (uint32_t)ls_hash_bytes(text, n);
    struct ls_recent_name *r = &nn->recent[hv % LS_RECENT_NAMES];
    if (r->name && r->hv == hv && same_name(r->name, text, n)) {
        *key = r->key;
        return r->name;
    }
    const char *name = ls_arena_strndup(a, text, n);
    if (!name)
        return NULL;
    if (nn->n < INT_MAX - 1) { /* past that, names go unnumbered: looked up as before */
        *key = ++nn->n;
        *r = (struct ls_recent_name){name, hv, *key};
    }
    return name;
}
