/* selinv_dump.c — the selected inverse of one sparse matrix, for
 * tests/scale/selinv_ref.py to compare with numpy's dense inverse.
 *
 * Reads from standard input "n nnz" and then nnz lines "i j value" (0-based,
 * duplicates summed); factors the matrix (ls_selinv_new), runs the
 * pattern pass (ls_selinv_fill) and prints "rcond R", "size K" and then one
 * line "i j value mag" per entry of A^-1 on the factor's closed pattern.
 * Exit 0, or 1 on bad input, a singular matrix or no memory. */
#include "mna/mna.h"
#include "solve/selinv.h"

#include <stdio.h>
#include <stdlib.h>

/* Reads the triplets into t (grown as needed); 0, or -1 on bad input. */
static int read_triplets(ls_triplets *t, int *n)
{
    long nnz = 0;
    if (scanf("%d %ld", n, &nnz) != 2 || *n <= 0 || nnz < 0)
        return -1;
    t->cap = (size_t)(nnz ? nnz : 1);
    t->ti = malloc(t->cap * sizeof *t->ti);
    t->tj = malloc(t->cap * sizeof *t->tj);
    t->tx = malloc(t->cap * sizeof *t->tx);
    if (!t->ti || !t->tj || !t->tx)
        return -1;
    for (long k = 0; k < nnz; k++) {
        int i, j;
        double v;
        if (scanf("%d %d %lf", &i, &j, &v) != 3 || i < 0 || j < 0 || i >= *n || j >= *n)
            return -1;
        t->ti[t->nnz] = i;
        t->tj[t->nnz] = j;
        t->tx[t->nnz++] = v;
    }
    t->n = *n;
    return 0;
}

int main(void)
{
    ls_triplets t = {0};
    ls_csc a = {0};
    int n = 0, rc = 1;
    double rcond = 0;
    ls_selinv *s = NULL;
    if (read_triplets(&t, &n) != 0 || ls_triplets_to_csc(&t, n, &a) != 0) {
        fprintf(stderr, "selinv_dump: bad input\n");
        goto done;
    }
    s = ls_selinv_new(&a, &rcond);
    if (!s || ls_selinv_fill(s) != 0) {
        fprintf(stderr, "selinv_dump: singular or out of memory\n");
        goto done;
    }
    long size = ls_selinv_pattern_size(s);
    printf("rcond %.17g\nsize %ld\n", rcond, size);
    for (long k = 0; k < size; k++) {
        int i, j;
        double v, m;
        if (ls_selinv_pattern_entry(s, k, &i, &j, &v, &m) != 0)
            goto done;
        printf("%d %d %.17g %.17g\n", i, j, v, m);
    }
    rc = 0;
done:
    ls_selinv_free(&s);
    ls_csc_free(&a);
    ls_triplets_free(&t);
    return rc;
}
