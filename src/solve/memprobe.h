/* memprobe.h — can the process still get the memory a library will insist on? */
#ifndef LS_MEMPROBE_H
#define LS_MEMPROBE_H

#include <stdbool.h>
#include <stddef.h>

/* Bytes of the work buffer OpenBLAS takes (Debian's build: 32 << 22 bytes, and
 * a page) the first time a thread calls into it. */
#define LS_BLAS_BUFFER_BYTES ((size_t)(32u << 22) + 4096u)

/* Is there room for the BLAS work buffers right now (two: see memprobe.c)?  OpenBLAS does not fail
 * when it cannot get that buffer: it retries forever, so a solve under a tight
 * memory limit would hang instead of reporting.  The buffer is asked for and
 * given back at once (never touched, so it costs no physical memory). */
bool ls_blas_buffer_fits(void);

#endif
