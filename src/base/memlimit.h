/* memlimit.h — how much memory this process may hold, for limits that are
 * derived from memory rather than fixed counts (docs/limits.md). */
#ifndef LS_MEMLIMIT_H
#define LS_MEMLIMIT_H

#include <stddef.h>

/* Bytes this process can expect to hold at most: the smallest of the
 * machine's physical memory and the address-space and data-segment limits
 * (setrlimit, `ulimit -v`, `prlimit --as`), and for the tests only the
 * variable LOADSTACK_TEST_MEMORY_MB (the fuzz targets' budget).  SIZE_MAX
 * when none is known. */
size_t ls_memory_limit_bytes(void);

#endif
