/* memprobe.c — see memprobe.h. */
#include "memprobe.h"

#include <stdlib.h>

/* Two buffers at once: the calling thread's, and the one OpenBLAS's worker
 * thread may still be trying to get (it retries in the background from the
 * start of the process and would take the room a single probe had found). */
bool ls_blas_buffer_fits(void)
{
    void *a = malloc(LS_BLAS_BUFFER_BYTES);
    void *b = a ? malloc(LS_BLAS_BUFFER_BYTES) : NULL;
    free(a);
    free(b);
    return b != NULL;
}
