/* test_pages.c — fresh memory mapped in at once (base/pages.h), checked
 * against the kernel's own account of which pages are resident (mincore(2))
 * and against the bytes written before: a mapping is aligned and zero, every
 * page of it resident from the start; populating a block the C library gave
 * keeps its contents and makes its whole pages resident; the arena's large
 * blocks and the name table's large slot arrays come out zeroed and
 * resident. */
#include "../../cu_run.h"
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

int main(void)
{
    static const ls_cu_case cases[] = {
        {"a mapping: aligned, zero, resident", test_map},
        {"populating keeps the contents", test_populate_keeps_contents},
        {"the arena's and the name table's large memory", test_users},
    };
    return ls_cu_run("pages", NULL, NULL, cases, LS_CU_COUNT(cases));
}
