/* memprobe.c — see memprobe.h. */
#include "solve/memprobe.h"

#include <sys/mman.h>

/* Reserve `n` bytes of address space and give them back: mmap, not malloc,
 * so no page is touched (a malloc of this size is an mmap too, but a
 * debugging allocator — MALLOC_PERTURB_, as meson's test runner sets it —
 * would fill it byte by byte on every solve). */
static void *reserve(size_t n)
{
    void *p = mmap(NULL, n, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS | MAP_NORESERVE, -1, 0);
    return p == MAP_FAILED ? NULL : p;
}

/* Two buffers at once: the calling thread's, and the one OpenBLAS's worker
 * thread may still be trying to get (it retries in the background from the
 * start of the process and would take the room a single probe had found). */
bool ls_blas_buffer_fits(void)
{
    void *a = reserve(LS_BLAS_BUFFER_BYTES);
    void *b = a ? reserve(LS_BLAS_BUFFER_BYTES) : NULL;
    if (a)
        munmap(a, LS_BLAS_BUFFER_BYTES);
    if (b)
        munmap(b, LS_BLAS_BUFFER_BYTES);
    return b != NULL;
}
