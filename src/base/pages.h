/* pages.h — fresh memory mapped in at once, for the large tables of a large
 * circuit (the arena's big blocks, the name table, the part table).
 *
 * A fresh page costs its first touch a page fault; on the virtual machines
 * this runs on that fault is dear (12-15 us a 4 KiB page:
 * docs/performance.md, "Front end, the sixth round"), and a 1000 x 1000
 * grid's front end writes 670 MB.  Asking the kernel to map a range in with
 * huge pages (MADV_HUGEPAGE, then MADV_POPULATE_WRITE, Linux 5.14 and later)
 * in one call made that 4 to 50 times cheaper there; populating small pages
 * only halved it, as the program's first touch of each still trapped.  Both
 * are advice: where the kernel lacks them, or refuses, the memory is the
 * same and is faulted in as it is touched. */
#ifndef LS_PAGES_H
#define LS_PAGES_H

#include <stdbool.h>
#include <stddef.h>

#define LS_HUGE_PAGE ((size_t)2 << 20)   /* x86-64 and arm64 with 4 KiB base pages */

/* Ask for the whole pages inside [p, p + bytes) to be mapped in now
 * (writable), with huge pages first where huge is true.  Their contents do
 * not change.  Nothing for a range under 256 KiB (its faults are few). */
void ls_pages_populate(void *p, size_t bytes, bool huge);

/* A zeroed mapping of len bytes (a multiple of LS_HUGE_PAGE), aligned to
 * LS_HUGE_PAGE and populated with huge pages where the kernel gives them;
 * NULL when the system refuses.  Given back by ls_pages_unmap. */
void *ls_pages_map(size_t len);
void ls_pages_unmap(void *p, size_t len);

/* malloc, calloc, realloc and free for a library's large blocks (the
 * sparse factor's values and indices): a block of LS_BIG_BLOCK bytes or more
 * is a mapping of its own, aligned to LS_HUGE_PAGE and advised to take huge
 * pages, faulted in as it is first touched (a 2 MiB fault where 4 KiB pages
 * take 512); smaller ones come from malloc.  ls_big_free and ls_big_realloc
 * take any pointer malloc gave as well (the mappings are kept in a table of
 * LS_BIG_SLOTS, under a lock; a block that finds the table full comes from
 * malloc).  A block that shrinks stays where it is, the whole huge pages
 * past its new end unmapped.  NULL when the system refuses, as malloc. */
#define LS_BIG_BLOCK ((size_t)4 << 20)
#define LS_BIG_SLOTS 512
void *ls_big_malloc(size_t bytes);
void *ls_big_calloc(size_t count, size_t size);
void *ls_big_realloc(void *p, size_t bytes);
void ls_big_free(void *p);

#endif
