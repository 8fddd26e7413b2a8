/* test_hash.c — the name table: get, put, reserve and intern against a plain
 * linear list searched with the C library's strcmp (the reference), through
 * growth, many keys, keys that share a home slot and keys whose stored 32-bit
 * hashes are equal; and the spread of the hash function (Pearson's chi-square
 * goodness-of-fit test). */
#include "../../cu_run.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "base/hash.h"

/* splitmix64 (G. Steele, D. Lea, C. Flood, "Fast splittable pseudorandom
 * number generators", OOPSLA 2014): deterministic test inputs. */
static uint64_t next64(uint64_t *s)
{
    uint64_t z = (*s += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

/* The reference: keys and values in insertion order, found by linear search. */
typedef struct ref_list {
    char **keys;
    int *vals;
    size_t n, cap;
} ref_list;

static long ref_find(const ref_list *r, const char *key)
{
    for (size_t i = 0; i < r->n; i++)
        if (strcmp(r->keys[i], key) == 0)
            return (long)i;
    return -1;
}

static void ref_add(ref_list *r, char *key, int val)
{
    if (r->n == r->cap) {
        r->cap = r->cap ? 2 * r->cap : 256;
        r->keys = realloc(r->keys, r->cap * sizeof *r->keys);
        r->vals = realloc(r->vals, r->cap * sizeof *r->vals);
    }
    r->keys[r->n] = key;
    r->vals[r->n++] = val;
}

static void ref_free(ref_list *r)
{
    for (size_t i = 0; i < r->n; i++)
        free(r->keys[i]);
    free(r->keys);
    free(r->vals);
}

/* Whether every slot holding a key is reachable from its home slot without
 * crossing an empty one, and the count and load are right. */
static int table_consistent(const ls_hash *h)
{
    size_t used = 0;
    for (size_t i = 0; i < h->cap; i++) {
        const ls_hash_slot *s = &h->slots[i];
        if (!s->key)
            continue;
        used++;
        if (s->hash != (uint32_t)ls_hash_string(s->key))
            return 0;
        for (size_t j = s->hash & (h->cap - 1); j != i; j = (j + 1) & (h->cap - 1))
            if (!h->slots[j].key)
                return 0;
    }
    return used == h->count && (h->cap == 0 || (h->cap & (h->cap - 1)) == 0) && 4 * h->count <= 3 * h->cap;
}

static void test_put_get_replace(void)
{
    ls_hash h;
    ls_hash_init(&h);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "a"), -1);
    CU_ASSERT_EQUAL(ls_hash_put(&h, "a", 1), 0);
    CU_ASSERT_EQUAL(ls_hash_put(&h, "", 2), 0); /* the empty string is a key like any other */
    CU_ASSERT_EQUAL(ls_hash_get(&h, "a"), 1);
    CU_ASSERT_EQUAL(ls_hash_get(&h, ""), 2);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "b"), -1);
    char copy[] = "a"; /* keys compare by content, not by pointer */
    CU_ASSERT_EQUAL(ls_hash_get(&h, copy), 1);
    CU_ASSERT_EQUAL(ls_hash_put(&h, copy, 7), 0);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "a"), 7);
    CU_ASSERT_EQUAL(h.count, 2);
    CU_ASSERT(table_consistent(&h));
    ls_hash_free(&h);
    CU_ASSERT_PTR_NULL(h.slots);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "a"), -1);
}

static void test_intern(void)
{
    ls_hash h;
    ls_hash_init(&h);
    int v = 99;
    CU_ASSERT_EQUAL(ls_hash_intern(&h, "node", 5, &v), 1);
    CU_ASSERT_EQUAL(v, 5);
    CU_ASSERT_EQUAL(ls_hash_intern(&h, "node", 6, &v), 0); /* present: value kept */
    CU_ASSERT_EQUAL(v, 5);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "node"), 5);
    CU_ASSERT_EQUAL(h.count, 1);
    CU_ASSERT_EQUAL(ls_hash_put(&h, "node", 8), 0);
    CU_ASSERT_EQUAL(ls_hash_intern(&h, "node", 9, &v), 0);
    CU_ASSERT_EQUAL(v, 8);
    CU_ASSERT_EQUAL(ls_hash_intern(&h, "other", -1, &v), 1); /* any value may be stored */
    CU_ASSERT_EQUAL(v, -1);
    CU_ASSERT_EQUAL(h.count, 2);
    ls_hash_free(&h);
}

/* The hash a caller carries (ls_hash_prefetch, ls_hash_bytes) is the one
 * the table computes itself: a key interned with its carried hash is found
 * by a plain lookup, and a plain insertion by an intern with the carried
 * hash, at every key length around the 4- and 8-byte word boundaries. */
static void test_carried_hash(void)
{
    ls_hash h;
    ls_hash_init(&h);
    static char keys[40][40];
    for (int n = 1; n < 40; n++) {
        for (int i = 0; i < n; i++)
            keys[n][i] = (char)('a' + (i * 7 + n) % 26);
        keys[n][n] = 0;
        CU_ASSERT_EQUAL(ls_hash_bytes(keys[n], (size_t)n), ls_hash_string(keys[n]));
        CU_ASSERT_EQUAL(ls_hash_bytes("0123456789abcdefghijklmnopqrstuvwxyz0123", (size_t)n) ==
                            ls_hash_string(keys[n]), 0);
        uint32_t hv = ls_hash_prefetch(&h, keys[n]);
        CU_ASSERT_EQUAL(hv, (uint32_t)ls_hash_string(keys[n]));
        int v = -7;
        if (n % 2) {
            CU_ASSERT_EQUAL(ls_hash_intern_hashed(&h, keys[n], hv, n, &v), 1);
        } else {
            CU_ASSERT_EQUAL(ls_hash_put(&h, keys[n], n), 0);
            CU_ASSERT_EQUAL(ls_hash_intern_hashed(&h, keys[n], hv, -1, &v), 0);
        }
        CU_ASSERT_EQUAL(v, n);
    }
    for (int n = 1; n < 40; n++)
        CU_ASSERT_EQUAL(ls_hash_get(&h, keys[n]), n);
    CU_ASSERT_EQUAL(h.count, 39);
    ls_hash_free(&h);
}

/* Growth from empty, one key at a time: every key stays reachable. */
static void test_growth(void)
{
    enum { N = 100000 };
    static char keys[N][16];
    ls_hash h;
    ls_hash_init(&h);
    size_t caps_seen = 0, last_cap = 0;
    for (int i = 0; i < N; i++) {
        snprintf(keys[i], sizeof keys[i], "n%d_%d", i / 317, i % 317);
        int v;
        CU_ASSERT_EQUAL_FATAL(ls_hash_intern(&h, keys[i], i, &v), 1);
        if (h.cap != last_cap) {
            caps_seen++;
            last_cap = h.cap;
            CU_ASSERT(table_consistent(&h));
        }
    }
    CU_ASSERT(caps_seen > 10); /* 64 -> 262144 slots */
    CU_ASSERT_EQUAL(h.count, N);
    int wrong = 0;
    for (int i = 0; i < N; i++)
        wrong += ls_hash_get(&h, keys[i]) != i;
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT(table_consistent(&h));
    ls_hash_free(&h);
}

static void test_reserve(void)
{
    enum { N = 5000 };
    static char keys[N][16];
    ls_hash h;
    ls_hash_init(&h);
    CU_ASSERT_EQUAL(ls_hash_put(&h, "early", 1), 0);
    CU_ASSERT_EQUAL(ls_hash_reserve(&h, N + 1), 0);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "early"), 1); /* kept through the rebuild */
    const ls_hash_slot *slots = h.slots;
    size_t cap = h.cap;
    CU_ASSERT(4 * (N + 1) <= 3 * cap); /* at most three quarters full once filled */
    for (int i = 0; i < N; i++) {
        snprintf(keys[i], sizeof keys[i], "r%d", i);
        CU_ASSERT_EQUAL(ls_hash_put(&h, keys[i], i), 0);
    }
    CU_ASSERT(h.slots == slots && h.cap == cap); /* no growth after the reservation */
    CU_ASSERT_EQUAL(ls_hash_reserve(&h, 10), 0); /* smaller than the count: nothing to do */
    CU_ASSERT(h.slots == slots && h.cap == cap);
    CU_ASSERT_EQUAL(ls_hash_reserve(&h, (size_t)-1 / 2), -1); /* impossible: refused, table intact */
    CU_ASSERT(h.slots == slots && h.cap == cap);
    int wrong = 0;
    for (int i = 0; i < N; i++)
        wrong += ls_hash_get(&h, keys[i]) != i;
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT(table_consistent(&h));
    ls_hash_free(&h);
}

/* A random key of 0 to 40 bytes, any byte but NUL, often from a small
 * alphabet so that keys repeat. */
static char *random_key(uint64_t *s)
{
    size_t n = next64(s) % 41;
    char *k = malloc(n + 1);
    int narrow = next64(s) % 2;
    if (narrow)
        n %= 4;
    for (size_t i = 0; i < n; i++)
        k[i] = narrow ? (char)('a' + next64(s) % 3) : (char)(1 + next64(s) % 255);
    k[n] = 0;
    return k;
}

/* Random gets, puts and interns, each checked against the linear list. */
static void test_random_against_list(void)
{
    uint64_t seed = 20261201;
    ls_hash h;
    ls_hash_init(&h);
    ref_list r = {0};
    int wrong = 0;
    for (int op = 0; op < 30000; op++) {
        char *k = random_key(&seed);
        long at = ref_find(&r, k);
        int val = (int)(next64(&seed) % 1000000);
        int v;
        switch (next64(&seed) % 3) {
        case 0:
            wrong += ls_hash_get(&h, k) != (at >= 0 ? r.vals[at] : -1);
            free(k);
            break;
        case 1:
            if (at >= 0) {
                wrong += ls_hash_put(&h, r.keys[at], val) != 0;
                r.vals[at] = val;
                free(k);
            } else {
                ref_add(&r, k, val);
                wrong += ls_hash_put(&h, k, val) != 0;
            }
            break;
        default:
            if (at >= 0) {
                wrong += ls_hash_intern(&h, k, val, &v) != 0 || v != r.vals[at];
                free(k);
            } else {
                ref_add(&r, k, val);
                wrong += ls_hash_intern(&h, k, val, &v) != 1 || v != val;
            }
            break;
        }
    }
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT_EQUAL(h.count, r.n);
    for (size_t i = 0; i < r.n; i++)
        wrong += ls_hash_get(&h, r.keys[i]) != r.vals[i];
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT(table_consistent(&h));
    ls_hash_free(&h);
    ref_free(&r);
}

/* Keys that all start at the same slot of a 1024-slot table: one long probe
 * run, with later keys found past earlier ones. */
static void test_same_home_slot(void)
{
    enum { WANT = 200 };
    static char keys[WANT][16];
    int n = 0;
    for (int i = 0; n < WANT; i++) {
        char k[16];
        snprintf(k, sizeof k, "k%d", i);
        if ((ls_hash_string(k) & 1023) == 77)
            memcpy(keys[n++], k, sizeof k);
    }
    ls_hash h;
    ls_hash_init(&h);
    CU_ASSERT_EQUAL(ls_hash_reserve(&h, 500), 0);
    CU_ASSERT_EQUAL(h.cap, 1024);
    for (int i = 0; i < WANT; i++)
        CU_ASSERT_EQUAL(ls_hash_put(&h, keys[i], i), 0);
    CU_ASSERT_EQUAL(h.cap, 1024);
    int wrong = 0;
    for (int i = 0; i < WANT; i++)
        wrong += ls_hash_get(&h, keys[i]) != i;
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "absent"), -1);
    CU_ASSERT(table_consistent(&h));
    ls_hash_free(&h);
}

static int cmp_u64(const void *a, const void *b)
{
    uint64_t x = *(const uint64_t *)a, y = *(const uint64_t *)b;
    return x < y ? -1 : x > y;
}

/* Two different keys with the same stored 32-bit hash (found by sorting the
 * hashes of many keys: the birthday bound makes a few such pairs likely in
 * 300000): the string comparison still tells them apart. */
static void test_equal_stored_hash(void)
{
    enum { N = 300000 };
    uint64_t *hv = malloc(N * sizeof *hv); /* hash << 32 | index */
    for (uint64_t i = 0; i < N; i++) {
        char k[24];
        snprintf(k, sizeof k, "x%llu", (unsigned long long)i);
        hv[i] = (uint64_t)(uint32_t)ls_hash_string(k) << 32 | i;
    }
    qsort(hv, N, sizeof *hv, cmp_u64);
    int pairs = 0, wrong = 0;
    for (int i = 1; i < N; i++) {
        if (hv[i] >> 32 != hv[i - 1] >> 32)
            continue;
        char a[24], b[24];
        snprintf(a, sizeof a, "x%llu", (unsigned long long)(hv[i - 1] & 0xffffffffu));
        snprintf(b, sizeof b, "x%llu", (unsigned long long)(hv[i] & 0xffffffffu));
        ls_hash h;
        ls_hash_init(&h);
        int v;
        wrong += ls_hash_intern(&h, a, 1, &v) != 1;
        wrong += ls_hash_get(&h, b) != -1;
        wrong += ls_hash_intern(&h, b, 2, &v) != 1 || v != 2;
        wrong += ls_hash_get(&h, a) != 1 || ls_hash_get(&h, b) != 2;
        wrong += !table_consistent(&h);
        ls_hash_free(&h);
        pairs++;
    }
    free(hv);
    CU_ASSERT(pairs >= 1); /* about 10 expected: N^2 / 2^33 */
    CU_ASSERT_EQUAL(wrong, 0);
}

/* Pearson's chi-square goodness-of-fit test of the home slots of a large
 * circuit's names ("n12_345") over 4096 slots.  The statistic has 4095
 * degrees of freedom; its 0.1% upper critical value, by the Wilson-Hilferty
 * approximation, is k (1 - 2/(9k) + 3.0902 sqrt(2/(9k)))^3 ≈ 4380.4 (scipy's
 * chi2.ppf(0.999, 4095) gives 4380.37). */
static void test_spread(void)
{
    enum { BINS = 4096, N = 1000 * 400 };
    static long count[BINS];
    memset(count, 0, sizeof count);
    for (int i = 0; i < 1000; i++)
        for (int j = 0; j < 400; j++) {
            char k[24];
            snprintf(k, sizeof k, "n%d_%d", i, j);
            count[ls_hash_string(k) & (BINS - 1)]++;
        }
    double e = (double)N / BINS, chi2 = 0;
    for (int b = 0; b < BINS; b++)
        chi2 += (count[b] - e) * (count[b] - e) / e;
    double k = BINS - 1, crit = k * pow(1 - 2 / (9 * k) + 3.0902 * sqrt(2 / (9 * k)), 3);
    CU_ASSERT(chi2 < crit);
    /* and the high half of the 32 stored bits spreads as well */
    memset(count, 0, sizeof count);
    for (int i = 0; i < N; i++) {
        char key[24];
        snprintf(key, sizeof key, "h%d", i);
        count[((uint32_t)ls_hash_string(key) >> 20) & (BINS - 1)]++;
    }
    chi2 = 0;
    for (int b = 0; b < BINS; b++)
        chi2 += (count[b] - e) * (count[b] - e) / e;
    CU_ASSERT(chi2 < crit);
}

/* A table of 4 MB or more (slots from the huge-page path, new_slots): empty
 * when made, growing past it keeps every key, and it frees like any other. */
static void test_large_table(void)
{
    enum { N = 400000 }; /* 2^19 slots of 16 bytes: 8 MB */
    char *keys = malloc((size_t)N * 12);
    CU_ASSERT_PTR_NOT_NULL_FATAL(keys);
    ls_hash h;
    ls_hash_init(&h);
    CU_ASSERT_EQUAL(ls_hash_reserve(&h, N / 2), 0);
    CU_ASSERT(h.cap * sizeof(ls_hash_slot) >= ((size_t)4 << 20));
    size_t used = 0;
    for (size_t i = 0; i < h.cap; i++)
        used += h.slots[i].key != NULL || h.slots[i].hash != 0 || h.slots[i].val != 0;
    CU_ASSERT_EQUAL(used, 0); /* zeroed, as calloc's would be */
    for (int i = 0; i < N; i++) {
        snprintf(keys + (size_t)i * 12, 12, "n%d", i);
        CU_ASSERT_EQUAL_FATAL(ls_hash_put(&h, keys + (size_t)i * 12, i), 0); /* grows once past N / 2 */
    }
    int wrong = 0;
    for (int i = 0; i < N; i++)
        wrong += ls_hash_get(&h, keys + (size_t)i * 12) != i;
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT_EQUAL(ls_hash_get(&h, "n400000"), -1);
    CU_ASSERT(table_consistent(&h));
    ls_hash_free(&h);
    free(keys);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"a table of 4 MB or more", test_large_table},
        {"put, get, replace", test_put_get_replace},
        {"intern", test_intern},
        {"carried hash", test_carried_hash},
        {"growth", test_growth},
        {"reserve", test_reserve},
        {"random operations against a linear list", test_random_against_list},
        {"keys with one home slot", test_same_home_slot},
        {"keys with one stored hash", test_equal_stored_hash},
        {"spread (chi-square)", test_spread},
    };
    return ls_cu_run("hash", NULL, NULL, cases, LS_CU_COUNT(cases));
}
