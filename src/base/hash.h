/* hash.h — string-keyed open-addressing table (keys are borrowed, not copied).
 *
 * Linear probing; each slot keeps its key's 32-bit hash beside the key, so a
 * probe compares strings only when the hashes agree, and growing never hashes
 * a key again.  The table grows to keep at most three quarters of its slots
 * in use.  A table of 4 MB or more asks for huge pages (hash.c, new_slots). */
#ifndef LS_HASH_H
#define LS_HASH_H

#include <stddef.h>
#include <stdint.h>

typedef struct ls_hash_slot {
    const char *key;       /* NULL: empty */
    uint32_t hash;         /* ls_hash_string(key), truncated */
    int val;
} ls_hash_slot;

typedef struct ls_hash {
    ls_hash_slot *slots;
    size_t cap, count;     /* cap: 0 or a power of two */
} ls_hash;

void ls_hash_init(ls_hash *h);
void ls_hash_free(ls_hash *h);
/* Value stored for key, or -1.  */
int ls_hash_get(const ls_hash *h, const char *key);
/* Insert or replace; the key pointer must outlive the table.  0 ok, -1 no memory. */
int ls_hash_put(ls_hash *h, const char *key, int val);

/* Make room for n keys in all (those already in the table included), so that
 * the next n - count insertions do not grow the table.  0 ok, -1 no memory
 * (the table is unchanged and still usable). */
int ls_hash_reserve(ls_hash *h, size_t n);

/* Get-or-insert with one probe sequence.  When key is already in the table,
 * sets *val to its value, changes nothing and returns 0.  Otherwise stores key
 * (borrowed, as for ls_hash_put) with the value val_if_new, sets *val to
 * val_if_new and returns 1.  -1: no memory, nothing inserted, *val = -1.
 * A caller that would make a new object for a new key should make room for it
 * first (and pass its index as val_if_new), so that nothing can fail after
 * the key is in the table. */
int ls_hash_intern(ls_hash *h, const char *key, int val_if_new, int *val);

/* ls_hash_intern with the key's hash already known: hv must be
 * (uint32_t)ls_hash_string(key) (as ls_hash_prefetch returns it), so a key
 * is hashed once when it was prefetched. */
int ls_hash_intern_hashed(ls_hash *h, const char *key, uint32_t hv, int val_if_new, int *val);

/* Start loading the slot where key's probe begins (a hint, no effect on the
 * table): a caller about to look up many keys in a large table can ask a few
 * keys ahead, so that the memory latency of one overlaps the work of others.
 * Returns the key's hash as ls_hash_intern_hashed takes it. */
uint32_t ls_hash_prefetch(const ls_hash *h, const char *key);

/* The hash of a NUL-terminated string (64 bits, well mixed; the table uses
 * its low 32 bits).  Exposed for tests. */
uint64_t ls_hash_string(const char *key);
/* The same hash of the n bytes at key (no NUL needed): ls_hash_bytes(k,
 * strlen(k)) == ls_hash_string(k), for a caller that knows the length. */
uint64_t ls_hash_bytes(const char *key, size_t n);

#endif
