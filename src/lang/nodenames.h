/* nodenames.h — numbering the node names a parse reads, through a cache of
 * the names seen last.
 *
 * The parser passes the FROM and TO names of every part statement through
 * here as it reads them.  A name found among the recently seen ones gets the
 * same string and the same number as there; any other gets a new copy and a
 * new number.  So equal numbers mean equal spellings (the converse need not
 * hold: a name seen long ago gets a second number), which is all the
 * elaborator relies on: it resolves each number once at the top level and
 * maps every later mention with that number straight to the node, without a
 * probe of the netlist's name table (docs/performance.md, "Front end, the
 * fourth round").  What a name means (a node, ground, a part, a name inside a
 * block) stays the elaborator's to decide.
 *
 * Only a cache, not a table of every name: a grid file mentions a node again
 * within a row or two, so the cache answers most repeated mentions, and a
 * table of every name would cost the parser a cache miss per new name (the
 * elaborator pays that miss anyway, once per number). */
#ifndef LS_NODENAMES_H
#define LS_NODENAMES_H

#include <stddef.h>
#include <stdint.h>

#include "base/arena.h"

/* Entries of the cache: direct-mapped by the name's hash, 16 bytes each
 * (256 kB, within a second-level cache).  A grid row of 1000 cells keeps
 * about 2000 names in play, of which about 88 % survive in 16384 entries
 * until their next mention. */
#define LS_RECENT_NAMES 16384

typedef struct ls_node_names {
    int n;                   /* numbers given: 1 .. n */
    struct ls_recent_name {
        const char *name;    /* NULL: empty */
        uint32_t hv;         /* (uint32_t)ls_hash_bytes(name, strlen(name)) */
        int key;
    } *recent;               /* LS_RECENT_NAMES entries, or NULL (out of memory: nothing is numbered) */
} ls_node_names;

/* An empty cache; the caller frees it with ls_node_names_free. */
void ls_node_names_init(ls_node_names *nn);
void ls_node_names_free(ls_node_names *nn);

/* The string (NUL-terminated, in arena a) for the n bytes at text (no NUL
 * among them): the cached one when the name was seen recently, else a new
 * copy; its number (1 ..) in *key, 0 when not numbered.  NULL when out of
 * memory (a is then marked failed). */
const char *ls_node_names_intern(ls_node_names *nn, ls_arena *a, const char *text, size_t n, int *key);

#endif
