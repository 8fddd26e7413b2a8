/* test_pages.c — fresh memory mapped in at once (base/pages.h), checked
 * against the kernel's own account of which pages are resident (mincore(2))
 * and against the bytes written before: a mapping is aligned and zero, every
 * page of it resident from the start; populating a block the C library gave
 * keeps its contents and makes its whole pages resident; the arena's large
 * blocks and the name table's large slot arrays come out zeroed and
 * resident; the large blocks of ls_big_malloc (mappings of their own, handed
 * back when freed). */
#include "../../cu_run.h"
#include <errno.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/utsname.h>
#include <unistd.h>

#include "base/arena.h"
#include "base/hash.h"
#include "base/pages.h"

/* Whether this kernel maps a range in on request (MADV_POPULATE_WRITE came
 * with Linux 5.14): where not, pages.h promises only the same memory, and
 * residency is not checked. */
static bool kernel_populates(void)
{
#ifdef MADV_POPULATE_WRITE
    struct utsname u;
    int major = 0, minor = 0;
    if (uname(&u) != 0 || sscanf(u.release, "%d.%d", &major, &minor) != 2)
        return false;
    return major > 5 || (major == 5 && minor >= 14);
#else
    return false;
#endif
}

/* Pages of the whole pages inside [p, p + bytes) that mincore reports not
 * resident; -1 when mincore fails. */
static long missing_pages(const void *p, size_t bytes)
{
    size_t page = (size_t)sysconf(_SC_PAGESIZE);
    uintptr_t s = ((uintptr_t)p + page - 1) & ~(uintptr_t)(page - 1);
    uintptr_t e = ((uintptr_t)p + bytes) & ~(uintptr_t)(page - 1);
    if (e <= s)
        return 0;
    size_t n = (e - s) / page;
    unsigned char *v = malloc(n);
    if (!v || mincore((void *)s, e - s, v) != 0) {
        free(v);
        return -1;
    }
    long missing = 0;
    for (size_t i = 0; i < n; i++)
        missing += !(v[i] & 1);
    free(v);
    return missing;
}

/* Whether every byte of [p, p + n) is zero. */
static bool all_zero(const unsigned char *p, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (p[i])
            return false;
    return true;
}

static void test_map(void)
{
    size_t len = 3 * LS_HUGE_PAGE;
    unsigned char *p = ls_pages_map(len);
    CU_ASSERT_PTR_NOT_NULL_FATAL(p);
    CU_ASSERT_EQUAL((uintptr_t)p % LS_HUGE_PAGE, 0);
    if (kernel_populates())
        CU_ASSERT_EQUAL(missing_pages(p, len), 0); /* before any touch of ours */
    CU_ASSERT(all_zero(p, len));
    memset(p, 0xa5, len); /* writable throughout */
    CU_ASSERT_EQUAL(p[len - 1], 0xa5);
    ls_pages_unmap(p, len);
    ls_pages_unmap(NULL, len); /* nothing */
}

/* A block of the C library's, not page-aligned at either end: its bytes as
 * written, and its whole pages resident afterwards. */
static void test_populate_keeps_contents(void)
{
    size_t bytes = ((size_t)5 << 20) + 123;
    unsigned char *p = malloc(bytes);
    CU_ASSERT_PTR_NOT_NULL_FATAL(p);
    size_t page = (size_t)sysconf(_SC_PAGESIZE);
    for (size_t i = 0; i < bytes; i += page / 2) /* every other half page: some pages stay untouched */
        if ((i / page) % 3 == 0)
            p[i] = (unsigned char)(i * 2654435761u >> 24 | 1);
    ls_pages_populate(p, bytes, true);
    if (kernel_populates())
        CU_ASSERT_EQUAL(missing_pages(p, bytes), 0);
    int wrong = 0;
    for (size_t i = 0; i < bytes; i += page / 2)
        if ((i / page) % 3 == 0)
            wrong += p[i] != (unsigned char)(i * 2654435761u >> 24 | 1);
    CU_ASSERT_EQUAL(wrong, 0);
    ls_pages_populate(p, 100, true); /* a small range: nothing to do */
    ls_pages_populate(p, 0, false);
    free(p);
}

/* The arena's block for a large object and the name table's slots for a
 * large table: zero, and resident before they are written. */
static void test_users(void)
{
    ls_arena a;
    ls_arena_init(&a);
    size_t big = (size_t)6 << 20;
    unsigned char *b = ls_arena_alloc(&a, big);
    CU_ASSERT_PTR_NOT_NULL_FATAL(b);
    if (kernel_populates())
        CU_ASSERT_EQUAL(missing_pages(b, big), 0);
    CU_ASSERT(all_zero(b, big));
    ls_arena_free(&a);

    ls_hash h;
    ls_hash_init(&h);
    CU_ASSERT_EQUAL_FATAL(ls_hash_reserve(&h, 600000), 0); /* 2^20 slots: 16 MB */
    size_t bytes = h.cap * sizeof(ls_hash_slot);
    CU_ASSERT(bytes >= ((size_t)4 << 20));
    if (kernel_populates())
        CU_ASSERT_EQUAL(missing_pages(h.slots, bytes), 0);
    CU_ASSERT(all_zero((const unsigned char *)h.slots, bytes));
    ls_hash_free(&h);
}

/* Whether [p, p + bytes) is unmapped: mincore(2) answers ENOMEM for a range
 * that holds unmapped pages (the kernel's account, not ours). */
static bool unmapped(const void *p, size_t bytes)
{
    unsigned char v[64];
    size_t page = (size_t)sysconf(_SC_PAGESIZE);
    if (bytes > sizeof v * page)
        bytes = sizeof v * page;
    return mincore((void *)p, bytes, v) != 0 && errno == ENOMEM;
}

/* The large blocks: malloc's below LS_BIG_BLOCK, a mapping of their own
 * from it on (aligned, zero, given back to the kernel when freed), contents
 * kept by realloc both ways (a shrinking one gives back its whole huge pages
 * past the new end), malloc's blocks taken by ls_big_realloc and
 * ls_big_free, and a full table falling back on malloc. */
static void test_big_blocks(void)
{
    unsigned char *small = ls_big_malloc(1000);
    CU_ASSERT_PTR_NOT_NULL_FATAL(small);
    memset(small, 7, 1000);
    small = ls_big_realloc(small, 3000); /* malloc's block, realloc's way */
    CU_ASSERT_PTR_NOT_NULL_FATAL(small);
    CU_ASSERT_EQUAL(small[999], 7);
    ls_big_free(small);
    ls_big_free(NULL);
    void *plain = malloc(100); /* a block ls_big_* never gave */
    ls_big_free(plain);

    size_t n = LS_BIG_BLOCK / sizeof(double) + 3;
    double *x = ls_big_calloc(n, sizeof *x);
    CU_ASSERT_PTR_NOT_NULL_FATAL(x);
    CU_ASSERT_EQUAL((uintptr_t)x % LS_HUGE_PAGE, 0);
    CU_ASSERT(all_zero((const unsigned char *)x, n * sizeof *x));
    for (size_t i = 0; i < n; i++)
        x[i] = (double)i;
    double *y = ls_big_realloc(x, 3 * n * sizeof *y); /* grows: a new mapping */
    CU_ASSERT_PTR_NOT_NULL_FATAL(y);
    CU_ASSERT(unmapped(x, n * sizeof *x));
    bool same = true;
    for (size_t i = 0; i < n; i++)
        same &= y[i] == (double)i;
    CU_ASSERT(same);
    double *z = ls_big_realloc(y, 10 * sizeof *z); /* shrinks in place */
    CU_ASSERT_PTR_EQUAL(z, y);
    CU_ASSERT_EQUAL(z[9], 9.0);
    CU_ASSERT(!unmapped(z, LS_HUGE_PAGE));                      /* its first huge page stays */
    CU_ASSERT(unmapped((char *)z + LS_HUGE_PAGE, LS_HUGE_PAGE)); /* the rest went back */
    memset(z, 1, LS_HUGE_PAGE);
    ls_big_free(z);
    CU_ASSERT(unmapped(z, LS_HUGE_PAGE));
    CU_ASSERT_PTR_NULL(ls_big_calloc(SIZE_MAX / 2, 4)); /* the product overflows */

    /* more large blocks than the table holds: the last ones are malloc's */
    enum { MANY = LS_BIG_SLOTS + 3 };
    unsigned char **b = calloc(MANY, sizeof *b);
    CU_ASSERT_PTR_NOT_NULL_FATAL(b);
    int got = 0;
    for (int i = 0; i < MANY; i++) {
        b[i] = ls_big_malloc(LS_BIG_BLOCK);
        if (b[i]) {
            b[i][0] = (unsigned char)i;
            b[i][LS_BIG_BLOCK - 1] = (unsigned char)(i + 1);
            got++;
        }
    }
    CU_ASSERT_EQUAL(got, MANY);
    bool kept = true;
    for (int i = 0; i < MANY; i++)
        if (b[i]) {
            kept &= b[i][0] == (unsigned char)i && b[i][LS_BIG_BLOCK - 1] == (unsigned char)(i + 1);
            ls_big_free(b[i]);
        }
    CU_ASSERT(kept);
    free(b);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"a mapping: aligned, zero, resident", test_map},
        {"populating keeps the contents", test_populate_keeps_contents},
        {"the arena's and the name table's large memory", test_users},
        {"large blocks: mappings of their own, malloc's below", test_big_blocks},
    };
    return ls_cu_run("pages", NULL, NULL, cases, LS_CU_COUNT(cases));
}
