/* test_selinv.c — entries of A^-1 from the selected-inverse factor
 * (src/solve/selinv.c), by two triangular solves each and from the pattern
 * pass (ls_selinv_fill), against LAPACK's dgesv on the identity (Debian's
 * liblapacke, the outside reference), on random sparse unsymmetric matrices shaped like MNA systems:
 * conductances between random nodes, voltage-source branch rows with a zero
 * diagonal (so KLU must pivot), and controlled-source entries off the
 * symmetric pattern. */
#include "../../cu_run.h"
#include "mna/mna.h"
#include "base/rng.h"
#include "solve/selinv.h"
#include "random_system.h"

#include <lapacke.h>
#include <math.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

/* With fill, the entries come from the pattern pass (ls_selinv_fill) where
 * they lie in it, and the pattern's own entries are checked too. */
static void entries_match_lapack(bool fill)
{
    ls_rng r;
    ls_rng_seed(&r, 19, 0);
    int checked = 0, systems = 0;
    for (int trial = 0; trial < 40; trial++) {
        int nodes = 3 + trial * 2, vs = 1 + trial % 4, n = nodes + vs;
        double *d = calloc((size_t)n * n, sizeof *d), *inv = calloc((size_t)n * n, sizeof *inv);
        double *m = malloc((size_t)n * n * sizeof *m);
        lapack_int *piv = malloc((size_t)n * sizeof *piv);
        ls_triplets t = {0};
        ls_csc a = {0};
        if (!d || !inv || !m || !piv)
            abort();
        random_system(&r, nodes, vs, d, &t);
        CU_ASSERT_EQUAL_FATAL(ls_triplets_to_csc(&t, n, &a), 0);
        for (int i = 0; i < n; i++)
            inv[i + (size_t)i * n] = 1;
        memcpy(m, d, (size_t)n * n * sizeof *m);
        /* two sources on one node make it singular by chance: nothing to
         * compare.  dgesv may miss that (rounding leaves a tiny pivot where
         * the exact one is zero), so its condition estimate decides too. */
        double anorm = 0, lrcond = 0;
        for (int j = 0; j < n; j++) {
            double cs = 0;
            for (int i = 0; i < n; i++)
                cs += fabs(d[i + (size_t)j * n]);
            anorm = fmax(anorm, cs);
        }
        if (LAPACKE_dgesv(LAPACK_COL_MAJOR, n, n, m, n, piv, inv, n) == 0 &&
            LAPACKE_dgecon(LAPACK_COL_MAJOR, '1', n, m, n, anorm, &lrcond) == 0 && lrcond > 1e-12) {
            systems++;
            double rcond = 0, big = 0;
            for (size_t q = 0; q < (size_t)n * n; q++)
                big = fmax(big, fabs(inv[q]));
            ls_selinv *s = ls_selinv_new(&a, &rcond);
            CU_ASSERT_PTR_NOT_NULL_FATAL(s);
            CU_ASSERT(rcond > 0);
            if (fill) {
                CU_ASSERT_EQUAL_FATAL(ls_selinv_fill(s), 0);
                long size = ls_selinv_pattern_size(s);
                CU_ASSERT(size >= n);
                for (long k = 0; k < size; k++) {
                    int i, j;
                    double v, mg;
                    CU_ASSERT_EQUAL(ls_selinv_pattern_entry(s, k, &i, &j, &v, &mg), 0);
                    CU_ASSERT(fabs(v - inv[i + (size_t)j * n]) <= 1e-9 * big);
                    CU_ASSERT(mg >= fabs(v));
                    checked++;
                }
                int i, j;
                double v;
                CU_ASSERT_EQUAL(ls_selinv_pattern_entry(s, size, &i, &j, &v, NULL), -1);
            }
            for (int i0 = 0; i0 < n; i0 += 2)
                for (int j0 = 0; j0 < n; j0 += 3) {
                    int rows[2] = {i0, i0 + 1 < n ? i0 + 1 : -1}, cols[3];
                    for (int c = 0; c < 3; c++)
                        cols[c] = j0 + c < n ? j0 + c : -1;
                    double out[6];
                    double mag[6];
                    CU_ASSERT_EQUAL(ls_selinv_block(s, rows, 2, cols, 3, out, mag), 0);
                    for (int rr = 0; rr < 2; rr++)
                        for (int c = 0; c < 3; c++) {
                            double want = rows[rr] < 0 || cols[c] < 0 ? 0 : inv[rows[rr] + (size_t)cols[c] * n];
                            /* against the inverse's scale: both are backward-stable LUs */
                            CU_ASSERT(fabs(out[rr * 3 + c] - want) <= 1e-9 * big);
                            CU_ASSERT(mag[rr * 3 + c] >= fabs(out[rr * 3 + c]));
                            checked++;
                        }
                }
            int bad_rows[1] = {n}, cols1[1] = {0};
            double o;
            CU_ASSERT_EQUAL(ls_selinv_block(s, bad_rows, 1, cols1, 1, &o, NULL), -1);
            ls_selinv_free(&s);
            CU_ASSERT_PTR_NULL(s);
        }
        free(m); free(d); free(inv); free(piv);
        ls_triplets_free(&t);
        ls_csc_free(&a);
    }
    CU_ASSERT(systems >= 30);
    CU_ASSERT(checked > 10000);
}

static void test_entries_match_lapack(void) { entries_match_lapack(false); }
static void test_pattern_matches_lapack(void) { entries_match_lapack(true); }

int main(void)
{
    static const ls_cu_case cases[] = {
        {"entries of A^-1 match LAPACK's inverse", test_entries_match_lapack},
        {"the selected inverse on the factor's pattern matches LAPACK's", test_pattern_matches_lapack},
    };
    return ls_cu_run("selinv", NULL, NULL, cases, LS_CU_COUNT(cases));
}
