/* dgesv_ref.c — the bare-LAPACK reference of the dense benchmark.
 *
 * Usage: dgesv_ref MATRIX_FILE
 * Reads the system written by `gen.py dense N --matrix FILE` (an int64 order n,
 * then the n*n matrix column-major, then the n right-hand-side values, all
 * native doubles), solves it with one LAPACKE_dgesv call and prints the order,
 * the seconds spent in dgesv alone, and x[0] (the driven pad's voltage, for a
 * cross-check against loadstack).  Exit 0 ok, 1 bad file or no memory,
 * 3 singular. */
#include <lapacke.h>

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

/* Read count doubles into a new array (caller frees), or NULL. */
static double *read_doubles(FILE *f, size_t count)
{
    double *v = malloc((count ? count : 1) * sizeof *v);
    if (v && fread(v, sizeof *v, count, f) != count) {
        free(v);
        return NULL;
    }
    return v;
}

int main(int argc, char **argv)
{
    if (argc != 2) {
        fprintf(stderr, "usage: dgesv_ref MATRIX_FILE\n");
        return 1;
    }
    FILE *f = fopen(argv[1], "rb");
    int64_t n64 = 0;
    if (!f || fread(&n64, sizeof n64, 1, f) != 1 || n64 < 1 || n64 > 40000) {
        fprintf(stderr, "dgesv_ref: cannot read '%s'\n", argv[1]);
        return 1;
    }
    int n = (int)n64;
    double *a = read_doubles(f, (size_t)n * (size_t)n);
    double *b = a ? read_doubles(f, (size_t)n) : NULL;
    lapack_int *ipiv = malloc((size_t)n * sizeof *ipiv);
    fclose(f);
    if (!a || !b || !ipiv) {
        fprintf(stderr, "dgesv_ref: short file or out of memory\n");
        return 1;
    }
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    lapack_int info = LAPACKE_dgesv(LAPACK_COL_MAJOR, n, 1, a, n, ipiv, b, n);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    double s = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    printf("n %d dgesv_s %.4f x0 %.17g\n", n, s, b[0]);
    free(a);
    free(b);
    free(ipiv);
    return info == 0 ? 0 : 3;
}
