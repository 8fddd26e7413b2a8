/* hash.c — word-at-a-time string hashing, linear probing with stored hashes,
 * grown at three quarters full. */
#include "base/hash.h"

#include "base/pages.h"

#include <stdbool.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define MIN_CAP 64
#define MAX_CAP ((size_t)1 << 31)   /* a 32-bit stored hash still picks any slot */

/* The 64-bit finalizer of MurmurHash3 (fmix64): every input bit affects
 * every output bit. */
static inline uint64_t fmix64(uint64_t h)
{
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdull;
    h ^= h >> 33;
    h *= 0xc4ceb9fe1a85ec53ull;
    h ^= h >> 33;
    return h;
}

/* One 8-byte word into the state: a multiply by an odd constant (the 64-bit
 * golden ratio) and a shift that brings the high bits back down, so that the
 * next word lands on a well-mixed state. */
static inline uint64_t absorb(uint64_t h, uint64_t w)
{
    h = (h ^ w) * 0x9e3779b97f4a7c15ull;
    return h ^ (h >> 29);
}

/* Little words in host byte order: the hash is for this process only. */
static inline uint64_t read4(const char *p)
{
    uint32_t v;
    memcpy(&v, p, 4);
    return v;
}

static inline uint64_t read8(const char *p)
{
    uint64_t v;
    memcpy(&v, p, 8);
    return v;
}

/* Eight bytes at a time, then the last 1 to 8 bytes as one word: two
 * overlapping 4-byte reads for 4 to 8 bytes, the first, middle and last byte
 * for 1 to 3 (every byte is read, and only bytes of the key).  Given the
 * length, which seeds the state, the words determine the key. */
uint64_t ls_hash_string(const char *key)
{
    return ls_hash_bytes(key, strlen(key));
}

uint64_t ls_hash_bytes(const char *key, size_t n)
{
    uint64_t h = 0x6a09e667f3bcc908ull ^ ((uint64_t)n * 0xbf58476d1ce4e5b9ull), w = 0;
    for (; n > 8; n -= 8, key += 8)
        h = absorb(h, read8(key));
    if (n >= 4)
        w = read4(key) | read4(key + n - 4) << 32;
    else if (n > 0)
        w = (uint64_t)(unsigned char)key[0] << 16 | (uint64_t)(unsigned char)key[n / 2] << 8 |
            (unsigned char)key[n - 1];
    return fmix64(absorb(h, w));
}

void ls_hash_init(ls_hash *h)
{
    memset(h, 0, sizeof *h);
}

static void free_slots(ls_hash_slot *s, size_t cap);

void ls_hash_free(ls_hash *h)
{
    free_slots(h->slots, h->cap);
    memset(h, 0, sizeof *h);
}

/* Whether count keys fit in cap slots without passing three quarters full
 * (linear probing stays short there, and the name table of a large circuit
 * is half the size it would be at half full). */
static inline int fits(size_t count, size_t cap)
{
    return count <= cap - cap / 4;
}


/* Whether a table of cap slots is mapped on its own (new_slots). */
static inline bool mapped(size_t cap)
{
    return cap * sizeof(ls_hash_slot) >= 2 * LS_HUGE_PAGE;
}

/* cap zeroed slots, given back by free_slots.  A table of many megabytes is
 * probed at random, one translation-buffer miss per probe with base pages,
 * and every page of it is touched, so it is mapped on its own and mapped in
 * at once, with huge pages where the kernel has them (base/pages.h); a fresh
 * mapping reads as zero, so it is not cleared by hand. */
static ls_hash_slot *new_slots(size_t cap)
{
    if (!mapped(cap))
        return calloc(cap, sizeof(ls_hash_slot));
    return ls_pages_map(cap * sizeof(ls_hash_slot)); /* a power of two of at least 2 huge pages */
}

/* Give back the cap slots s of new_slots (NULL: nothing). */
static void free_slots(ls_hash_slot *s, size_t cap)
{
    if (s && mapped(cap))
        ls_pages_unmap(s, cap * sizeof(ls_hash_slot));
    else
        free(s);
}

/* Rebuild with cap slots (a power of two holding every key); -1 no memory. */
static int rebuild(ls_hash *h, size_t cap)
{
    ls_hash_slot *s = new_slots(cap);
    if (!s)
        return -1;
    size_t m = cap - 1;
    for (size_t j = 0; j < h->cap; j++) {
        const ls_hash_slot *o = &h->slots[j];
        if (!o->key)
            continue;
        size_t i = o->hash & m;
        while (s[i].key)
            i = (i + 1) & m;
        s[i] = *o;
    }
    free_slots(h->slots, h->cap);
    h->slots = s;
    h->cap = cap;
    return 0;
}

int ls_hash_reserve(ls_hash *h, size_t n)
{
    if (!fits(n, MAX_CAP))
        return -1;
    size_t cap = h->cap ? h->cap : MIN_CAP;
    while (!fits(n, cap))
        cap *= 2;
    return cap > h->cap ? rebuild(h, cap) : 0;
}

uint32_t ls_hash_prefetch(const ls_hash *h, const char *key)
{
    uint32_t hv = (uint32_t)ls_hash_string(key);
    if (h->cap)
        __builtin_prefetch(&h->slots[hv & (h->cap - 1)], 0, 1);
    return hv;
}

/* The slot holding key, or the empty slot where it would go (cap > 0). */
static inline ls_hash_slot *probe(const ls_hash *h, const char *key, uint32_t hv)
{
    size_t m = h->cap - 1;
    for (size_t i = hv & m;; i = (i + 1) & m) {
        ls_hash_slot *s = &h->slots[i];
        if (!s->key || (s->hash == hv && strcmp(s->key, key) == 0))
            return s;
    }
}

/* The slot holding key, or an empty slot for it with the table still at most
 * three quarters full once it is filled; NULL when the table cannot grow. */
static ls_hash_slot *slot_for(ls_hash *h, const char *key, uint32_t hv)
{
    if (h->cap) {
        ls_hash_slot *s = probe(h, key, hv);
        if (s->key || fits(h->count + 1, h->cap))
            return s;
        if (h->cap >= MAX_CAP)
            return NULL;
    }
    if (rebuild(h, h->cap ? h->cap * 2 : MIN_CAP) != 0)
        return NULL;
    return probe(h, key, hv);
}

int ls_hash_get(const ls_hash *h, const char *key)
{
    if (!h->count)
        return -1;
    const ls_hash_slot *s = probe(h, key, (uint32_t)ls_hash_string(key));
    return s->key ? s->val : -1;
}

int ls_hash_put(ls_hash *h, const char *key, int val)
{
    uint32_t hv = (uint32_t)ls_hash_string(key);
    ls_hash_slot *s = slot_for(h, key, hv);
    if (!s)
        return -1;
    if (!s->key) {
        s->key = key;
        s->hash = hv;
        h->count++;
    }
    s->val = val;
    return 0;
}

int ls_hash_intern(ls_hash *h, const char *key, int val_if_new, int *val)
{
    return ls_hash_intern_hashed(h, key, (uint32_t)ls_hash_string(key), val_if_new, val);
}

int ls_hash_intern_hashed(ls_hash *h, const char *key, uint32_t hv, int val_if_new, int *val)
{
    ls_hash_slot *s = slot_for(h, key, hv);
    if (!s) {
        *val = -1;
        return -1;
    }
    if (s->key) {
        *val = s->val;
        return 0;
    }
    s->key = key;
    s->hash = hv;
    s->val = val_if_new;
    h->count++;
    *val = val_if_new;
    return 1;
}
