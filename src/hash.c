/* hash.c — FNV-1a hashing, linear probing, grown at half full. */
#include "hash.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

static uint64_t fnv1a(const char *s)
{
    uint64_t h = 1469598103934665603ull;
    for (; *s; s++) {
        h ^= (unsigned char)*s;
        h *= 1099511628211ull;
    }
    return h;
}

void ls_hash_init(ls_hash *h)
{
    memset(h, 0, sizeof *h);
}

void ls_hash_free(ls_hash *h)
{
    free(h->keys);
    free(h->vals);
    memset(h, 0, sizeof *h);
}

int ls_hash_get(const ls_hash *h, const char *key)
{
    if (!h->cap)
        return -1;
    size_t m = h->cap - 1;
    for (size_t i = fnv1a(key) & m;; i = (i + 1) & m) {
        if (!h->keys[i])
            return -1;
        if (strcmp(h->keys[i], key) == 0)
            return h->vals[i];
    }
}

static int grow(ls_hash *h)
{
    size_t cap = h->cap ? h->cap * 2 : 64;
    const char **keys = calloc(cap, sizeof *keys);
    int *vals = malloc(cap * sizeof *vals);
    if (!keys || !vals) {
        free(keys);
        free(vals);
        return -1;
    }
    for (size_t j = 0; j < h->cap; j++) {
        if (!h->keys[j])
            continue;
        size_t i = fnv1a(h->keys[j]) & (cap - 1);
        while (keys[i])
            i = (i + 1) & (cap - 1);
        keys[i] = h->keys[j];
        vals[i] = h->vals[j];
    }
    free(h->keys);
    free(h->vals);
    h->keys = keys;
    h->vals = vals;
    h->cap = cap;
    return 0;
}

int ls_hash_put(ls_hash *h, const char *key, int val)
{
    if ((h->count + 1) * 2 > h->cap && grow(h) != 0)
        return -1;
    size_t m = h->cap - 1;
    size_t i = fnv1a(key) & m;
    while (h->keys[i] && strcmp(h->keys[i], key) != 0)
        i = (i + 1) & m;
    if (!h->keys[i]) {
        h->keys[i] = key;
        h->count++;
    }
    h->vals[i] = val;
    return 0;
}
