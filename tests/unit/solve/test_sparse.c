/* test_sparse.c — the KLU, UMFPACK and CHOLMOD backends against closed forms
 * and against LAPACK (an outside reference), and ls_sparse_pick's choices. */
#include "solve/solver.h"
#include "solve/sparse.h"

#include "../../cu_run.h"
#include <lapacke.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const ls_backend *const LU[] = {&ls_backend_klu, &ls_backend_umfpack};
static const ls_backend *const ALL[] = {&ls_backend_klu, &ls_backend_umfpack, &ls_backend_cholmod};
#define COUNT(a) ((int)(sizeof(a) / sizeof((a)[0])))

/* CU_ASSERT that also says which backend failed. */
#define CHECK(be, cond)                                                                  \
    do {                                                                                 \
        int ok_ = (cond);                                                                \
        CU_ASSERT(ok_);                                                                  \
        if (!ok_)                                                                        \
            fprintf(stderr, "\n  [%s] %s:%d: %s", (be)->name, __FILE__, __LINE__, #cond); \
    } while (0)

static int close_to(double x, double ref, double tol)
{
    return fabs(x - ref) <= tol * fmax(1.0, fabs(ref));
}

/* ---- matrices --------------------------------------------------------- */

/* Column-major dense n×n to CSC.  Keeps nonzeros, or every entry with full. */
static ls_csc from_dense(const double *d, int n, int full)
{
    ls_csc a = {n, malloc(((size_t)n + 1) * sizeof(int)), malloc((size_t)n * n * sizeof(int)),
                malloc((size_t)n * n * sizeof(double))};
    if (!a.colptr || !a.rowind || !a.val)
        abort();
    int nz = 0;
    a.colptr[0] = 0;
    for (int j = 0; j < n; j++) {
        for (int i = 0; i < n; i++)
            if (full || d[i + (size_t)j * n] != 0) {
                a.rowind[nz] = i;
                a.val[nz++] = d[i + (size_t)j * n];
            }
        a.colptr[j + 1] = nz;
    }
    return a;
}

static void csc_free(ls_csc *a)
{
    free(a->colptr);
    free(a->rowind);
    free(a->val);
}

static double *dense_new(int n)
{
    double *d = calloc((size_t)n * n, sizeof(double));
    if (!d)
        abort();
    return d;
}

/* Conductance g between nodes a and b (-1 = ground), stamped into dense G. */
static void stamp(double *G, int n, int a, int b, double g)
{
    if (a >= 0) G[a + (size_t)a * n] += g;
    if (b >= 0) G[b + (size_t)b * n] += g;
    if (a >= 0 && b >= 0) {
        G[a + (size_t)b * n] -= g;
        G[b + (size_t)a * n] -= g;
    }
}

/* n resistors R in series: node k -- node k+1 for k < n-1, node n-1 -- ground. */
static double *chain_dense(int n, double R)
{
    double *G = dense_new(n);
    for (int k = 0; k + 1 < n; k++)
        stamp(G, n, k, k + 1, 1 / R);
    stamp(G, n, n - 1, -1, 1 / R);
    return G;
}

/* L×L grid of unit resistors, node (x,y) = x + L*y; `ground` is removed from
 * the unknowns (its row and column dropped), so the result is (L²-1)². */
static double *grid_dense(int L, int ground, int *n_out)
{
    int N = L * L, n = N - 1;
    double *full = dense_new(N), *G = dense_new(n);
    for (int y = 0; y < L; y++)
        for (int x = 0; x < L; x++) {
            int k = x + L * y;
            if (x + 1 < L) stamp(full, N, k, k + 1, 1);
            if (y + 1 < L) stamp(full, N, k, k + L, 1);
        }
    for (int j = 0, jj = 0; j < N; j++) {
        if (j == ground) continue;
        for (int i = 0, ii = 0; i < N; i++) {
            if (i == ground) continue;
            G[ii++ + (size_t)jj * n] = full[i + (size_t)j * N];
        }
        jj++;
    }
    free(full);
    *n_out = n;
    return G;
}

/* Wu's two-point resistance of a free-boundary L1×L2 grid of unit resistors
 * (F. Y. Wu, "Theory of resistor networks: the two-point resistance",
 * J. Phys. A 37 (2004) 6653, eq. for the rectangular network):
 *   R = sum over (m,n) != (0,0) of (psi(a) - psi(b))^2 / lambda,
 *   lambda = 4 sin^2(pi m / 2 L1) + 4 sin^2(pi n / 2 L2),
 *   psi(x,y) = c_m c_n cos(pi m (x+1/2) / L1) cos(pi n (y+1/2) / L2),
 *   c_0 = 1/sqrt(L), c_k = sqrt(2/L). */
static double wu_resistance(int L, int ax, int ay, int bx, int by)
{
    double r = 0;
    for (int m = 0; m < L; m++)
        for (int k = 0; k < L; k++) {
            if (m == 0 && k == 0) continue;
            double cm = m ? sqrt(2.0 / L) : sqrt(1.0 / L), ck = k ? sqrt(2.0 / L) : sqrt(1.0 / L);
            double sm = sin(M_PI * m / (2.0 * L)), sk = sin(M_PI * k / (2.0 * L));
            double lam = 4 * sm * sm + 4 * sk * sk;
            double pa = cm * ck * cos(M_PI * m * (ax + 0.5) / L) * cos(M_PI * k * (ay + 0.5) / L);
            double pb = cm * ck * cos(M_PI * m * (bx + 0.5) / L) * cos(M_PI * k * (by + 0.5) / L);
            r += (pa - pb) * (pa - pb) / lam;
        }
    return r;
}

/* x = A^-1 b (or A^-T b) by LAPACKE_dgesv on a copy: the outside reference. */
static double *lapack_solve(const double *A, int n, const double *b, int transpose)
{
    double *M = dense_new(n), *x = malloc((size_t)n * sizeof(double));
    lapack_int *piv = malloc((size_t)n * sizeof(lapack_int));
    if (!x || !piv)
        abort();
    for (int j = 0; j < n; j++)
        for (int i = 0; i < n; i++)
            M[i + (size_t)j * n] = transpose ? A[j + (size_t)i * n] : A[i + (size_t)j * n];
    memcpy(x, b, (size_t)n * sizeof(double));
    int info = LAPACKE_dgesv(LAPACK_COL_MAJOR, n, 1, M, n, piv, x, n);
    CU_ASSERT_EQUAL(info, 0);
    free(M);
    free(piv);
    return x;
}

/* analyze + factor + solve with backend be; returns the factor status. */
static int solve_with(const ls_backend *be, const ls_csc *a, double *b, int transpose,
                      ls_solver_stats *st)
{
    void *h = be->create();
    CHECK(be, h != NULL);
    if (!h)
        return LS_SOLVER_NOMEM;
    memset(st, 0, sizeof *st);
    int rc = be->analyze(h, a, st);
    if (rc == LS_SOLVER_OK)
        rc = be->factor(h, a, st);
    if (rc == LS_SOLVER_OK)
        rc = be->solve(h, b, transpose, st);
    be->destroy(h);
    return rc;
}

/* ---- tests ------------------------------------------------------------ */

/* Series chain fed by I into node 0: the whole I flows through every resistor
 * to ground (KCL), so V_k = I R (n - k) for k = 0..n-1 (Ohm's law on the
 * n - k resistors between node k and ground). */
static void test_chain_closed_form(void)
{
    const int n = 200;
    const double R = 470.0, Isrc = 2e-3;
    double *G = chain_dense(n, R);
    ls_csc a = from_dense(G, n, 0);
    for (int b = 0; b < COUNT(ALL); b++) {
        double *v = calloc((size_t)n, sizeof(double));
        ls_solver_stats st;
        v[0] = Isrc;
        CHECK(ALL[b], solve_with(ALL[b], &a, v, 0, &st) == LS_SOLVER_OK);
        int good = 1;
        for (int k = 0; k < n; k++)
            good &= close_to(v[k], Isrc * R * (n - k), 1e-10);
        CHECK(ALL[b], good);
        CHECK(ALL[b], strcmp(st.library, ALL[b]->name) == 0);
        CHECK(ALL[b], st.analyses == 1 && st.factorizations == 1);
        CHECK(ALL[b], st.bad_column == -1 && st.rcond > 0 && st.rcond <= 1);
        CHECK(ALL[b], st.method == (ALL[b] == &ls_backend_cholmod ? LS_METHOD_SPARSE_CHOLESKY
                                                                  : LS_METHOD_SPARSE_LU));
        free(v);
    }
    csc_free(&a);
    free(G);
}

/* 2-D grid two-point resistance: ground node b, inject 1 A at node a, then
 * V_a = R_ab.  References: Wu's closed form, and LAPACK dgesv on the same
 * matrix.  The 2×2 grid is a square of four 1 Ω resistors: 3/4 Ω between
 * adjacent corners (1 Ω in parallel with 3 Ω), 1 Ω across the diagonal. */
static void test_grid_two_point(void)
{
    struct { int L, ax, ay, bx, by; double exact; } cases[] = {
        {2, 0, 0, 1, 0, 0.75}, {2, 0, 0, 1, 1, 1.0}, {12, 2, 3, 9, 7, NAN}, {25, 0, 0, 24, 24, NAN},
    };
    for (int c = 0; c < COUNT(cases); c++) {
        int L = cases[c].L, ga = cases[c].ax + L * cases[c].ay, gb = cases[c].bx + L * cases[c].by;
        int n;
        double *G = grid_dense(L, gb, &n);
        ls_csc a = from_dense(G, n, 0);
        int ia = ga > gb ? ga - 1 : ga; /* index after dropping the ground row */
        double *rhs = calloc((size_t)n, sizeof(double));
        rhs[ia] = 1.0;
        double *ref = lapack_solve(G, n, rhs, 0);
        double wu = wu_resistance(L, cases[c].ax, cases[c].ay, cases[c].bx, cases[c].by);
        CU_ASSERT(close_to(ref[ia], wu, 1e-10)); /* the two references agree */
        if (!isnan(cases[c].exact))
            CU_ASSERT(close_to(wu, cases[c].exact, 1e-12));
        for (int b = 0; b < COUNT(ALL); b++) {
            double *v = calloc((size_t)n, sizeof(double));
            ls_solver_stats st;
            v[ia] = 1.0;
            CHECK(ALL[b], solve_with(ALL[b], &a, v, 0, &st) == LS_SOLVER_OK);
            CHECK(ALL[b], close_to(v[ia], wu, 1e-10));
            int good = 1;
            for (int i = 0; i < n; i++)
                good &= close_to(v[i], ref[i], 1e-10);
            CHECK(ALL[b], good);
            free(v);
        }
        free(rhs);
        free(ref);
        csc_free(&a);
        free(G);
    }
}

/* Unsymmetric grid (VCCS stamps, no symmetry) solved plain and transposed,
 * each against LAPACK dgesv on A or on A^T. */
static void test_transpose(void)
{
    int n;
    double *G = grid_dense(6, 35, &n);
    for (int s = 0; s < 5; s++) { /* gm = 0.3 S from v(c) into nodes a, b */
        int a = 3 * s, b = 3 * s + 13, c = 34 - 2 * s;
        G[a + (size_t)c * n] += 0.3;
        G[b + (size_t)c * n] -= 0.3;
    }
    ls_csc A = from_dense(G, n, 0);
    double *rhs = malloc((size_t)n * sizeof(double));
    for (int i = 0; i < n; i++)
        rhs[i] = sin(1.0 + i);
    for (int t = 0; t < 2; t++) {
        double *ref = lapack_solve(G, n, rhs, t);
        for (int b = 0; b < COUNT(LU); b++) {
            double *x = malloc((size_t)n * sizeof(double));
            ls_solver_stats st;
            memcpy(x, rhs, (size_t)n * sizeof(double));
            CHECK(LU[b], solve_with(LU[b], &A, x, t, &st) == LS_SOLVER_OK);
            int good = 1;
            for (int i = 0; i < n; i++)
                good &= close_to(x[i], ref[i], 1e-10);
            CHECK(LU[b], good);
            free(x);
        }
        free(ref);
    }
    /* CHOLMOD refuses the unsymmetric matrix rather than use one triangle. */
    ls_solver_stats st;
    double *x = malloc((size_t)n * sizeof(double));
    memcpy(x, rhs, (size_t)n * sizeof(double));
    CHECK(&ls_backend_cholmod, solve_with(&ls_backend_cholmod, &A, x, 0, &st) == LS_SOLVER_NOT_SPD);
    /* ... and on an SPD matrix a transposed solve is the plain one (chain, V_k
     * = I R (n - k) as in test_chain_closed_form). */
    double *C = chain_dense(10, 1.0);
    ls_csc ca = from_dense(C, 10, 0);
    memset(x, 0, 10 * sizeof(double));
    x[0] = 1.0;
    CHECK(&ls_backend_cholmod, solve_with(&ls_backend_cholmod, &ca, x, 1, &st) == LS_SOLVER_OK);
    CHECK(&ls_backend_cholmod, close_to(x[3], 7.0, 1e-12));
    free(x);
    csc_free(&ca);
    free(C);
    free(rhs);
    csc_free(&A);
    free(G);
}

/* Same pattern, new numbers: the analysis is reused.  Chain with R, then 2R:
 * V_k = I R (n - k), then I 2R (n - k). */
static void test_refactor(void)
{
    const int n = 50;
    double *G = chain_dense(n, 100.0);
    ls_csc a = from_dense(G, n, 0);
    for (int b = 0; b < COUNT(ALL); b++) {
        const ls_backend *be = ALL[b];
        ls_solver_stats st;
        memset(&st, 0, sizeof st);
        void *h = be->create();
        CHECK(be, h && be->analyze(h, &a, &st) == LS_SOLVER_OK);
        for (int pass = 1; pass <= 2; pass++) {
            if (pass == 2)
                for (int p = 0; p < ls_csc_nnz(&a); p++)
                    a.val[p] *= 0.5; /* G = 1/(2R) */
            CHECK(be, be->factor(h, &a, &st) == LS_SOLVER_OK);
            double *v = calloc((size_t)n, sizeof(double));
            v[0] = 1e-3;
            CHECK(be, be->solve(h, v, 0, &st) == LS_SOLVER_OK);
            CHECK(be, close_to(v[n / 2], 1e-3 * 100.0 * pass * (n - n / 2), 1e-11));
            free(v);
        }
        CHECK(be, st.analyses == 1 && st.factorizations == 2);
        /* A different pattern makes factor analyze again by itself. */
        double *G2 = chain_dense(n - 1, 100.0);
        ls_csc other = from_dense(G2, n - 1, 0);
        CHECK(be, be->factor(h, &other, &st) == LS_SOLVER_OK && st.analyses == 2);
        csc_free(&other);
        free(G2);
        be->destroy(h);
        for (int p = 0; p < ls_csc_nnz(&a); p++)
            a.val[p] *= 2.0;
    }
    csc_free(&a);
    free(G);
}

/* klu_refactor keeps the old pivots; new numbers that zero the old pivot must
 * fall back to a pivoting factorization.  [[4,1],[1,3]] then [[0,1],[1,0]]
 * (explicit zero kept in the pattern): x = [2,1] for b = [1,2] by inspection. */
static void test_refactor_needs_pivoting(void)
{
    double A1[4] = {4, 1, 1, 3}, A2[4] = {0, 1, 1, 0};
    for (int b = 0; b < COUNT(LU); b++) {
        const ls_backend *be = LU[b];
        ls_csc a = from_dense(A1, 2, 1);
        ls_solver_stats st;
        memset(&st, 0, sizeof st);
        void *h = be->create();
        CHECK(be, h && be->factor(h, &a, &st) == LS_SOLVER_OK); /* analyzes implicitly */
        memcpy(a.val, A2, sizeof A2);
        CHECK(be, be->factor(h, &a, &st) == LS_SOLVER_OK);
        double x[2] = {1, 2};
        CHECK(be, be->solve(h, x, 0, &st) == LS_SOLVER_OK);
        CHECK(be, close_to(x[0], 2, 1e-15) && close_to(x[1], 1, 1e-15));
        CHECK(be, st.analyses == 1);
        /* KLU: the refactor (1) hit the zero pivot, a full factor (2) redid it */
        CHECK(be, be != &ls_backend_klu || st.factorizations == 3);
        be->destroy(h);
        csc_free(&a);
    }
}

/* Singular matrices.  (1) Nodes 0 and 1 joined by 1 Ω and nothing else, node 2
 * grounded: the block [[1,-1],[-1,1]] has an exactly zero second pivot.
 * (2) Node 1 connected to nothing: an empty column 1. */
static void test_singular(void)
{
    double F[9] = {0};
    stamp(F, 3, 0, 1, 1.0);
    stamp(F, 3, 2, -1, 1.0);
    double E[9] = {0};
    stamp(E, 3, 0, 2, 1.0);
    stamp(E, 3, 0, -1, 1.0);
    stamp(E, 3, 2, -1, 1.0);
    ls_csc f = from_dense(F, 3, 0), e = from_dense(E, 3, 0);
    for (int b = 0; b < COUNT(LU); b++) {
        ls_solver_stats st;
        double x[3] = {1, 0, 0};
        CHECK(LU[b], solve_with(LU[b], &f, x, 0, &st) == LS_SOLVER_SINGULAR);
        CHECK(LU[b], st.bad_column == 0 || st.bad_column == 1);
        CHECK(LU[b], solve_with(LU[b], &e, x, 0, &st) == LS_SOLVER_SINGULAR);
        CHECK(LU[b], st.bad_column == 1);
    }
    /* Semidefinite is not definite: CHOLMOD says so, and LU decides. */
    ls_solver_stats st;
    double x[3] = {1, 0, 0};
    CHECK(&ls_backend_cholmod, solve_with(&ls_backend_cholmod, &f, x, 0, &st) == LS_SOLVER_NOT_SPD);
    CHECK(&ls_backend_cholmod, st.bad_column >= 0 && st.bad_column < 3);
    /* A solve after a failed factor is refused. */
    for (int b = 0; b < COUNT(ALL); b++) {
        void *h = ALL[b]->create();
        memset(&st, 0, sizeof st);
        CHECK(ALL[b], ALL[b]->solve(h, x, 0, &st) == LS_SOLVER_FAILED);
        CHECK(ALL[b], ALL[b]->factor(h, &f, &st) != LS_SOLVER_OK);
        CHECK(ALL[b], ALL[b]->solve(h, x, 0, &st) == LS_SOLVER_FAILED);
        ALL[b]->destroy(h);
    }
    ALL[0]->destroy(NULL);
    csc_free(&f);
    csc_free(&e);
}

/* Not SPD, each for a different reason: symmetric indefinite [[1,2],[2,1]]
 * (eigenvalues 3 and -1); an MNA voltage-source matrix with its zero diagonal
 * [[1,1],[1,0]] (det -1 < 0); a symmetric negative definite -I. */
static void test_not_spd(void)
{
    double M[3][4] = {{1, 2, 2, 1}, {1, 1, 1, 0}, {-1, 0, 0, -1}};
    for (int k = 0; k < 3; k++) {
        ls_csc a = from_dense(M[k], 2, 0);
        ls_solver_stats st;
        double x[2] = {1, 1};
        CHECK(&ls_backend_cholmod, solve_with(&ls_backend_cholmod, &a, x, 0, &st) == LS_SOLVER_NOT_SPD);
        CHECK(&ls_backend_cholmod, st.bad_column >= 0 && st.bad_column < 2);
        /* LU solves them: references by hand, x = A^-1 [1,1]. */
        const double ref[3][2] = {{1.0 / 3, 1.0 / 3}, {1, 0}, {-1, -1}};
        for (int b = 0; b < COUNT(LU); b++) {
            double y[2] = {1, 1};
            CHECK(LU[b], solve_with(LU[b], &a, y, 0, &st) == LS_SOLVER_OK);
            CHECK(LU[b], close_to(y[0], ref[k][0], 1e-15) && close_to(y[1], ref[k][1], 1e-15));
        }
        csc_free(&a);
    }
}

/* The pick rule of sparse_select.c on the three families it separates. */
static void test_pick(void)
{
    ls_method m;
    int n;
    double *G = grid_dense(8, 0, &n);
    ls_csc spd = from_dense(G, n, 0);
    CU_ASSERT_PTR_EQUAL(ls_sparse_pick(&spd, &m), &ls_backend_cholmod);
    CU_ASSERT_EQUAL(m, LS_METHOD_SPARSE_CHOLESKY);
    G[1 + (size_t)7 * n] += 0.5; /* one controlled-source entry */
    ls_csc uns = from_dense(G, n, 0);
    CU_ASSERT_PTR_EQUAL(ls_sparse_pick(&uns, &m), &ls_backend_klu);
    CU_ASSERT_EQUAL(m, LS_METHOD_SPARSE_LU);
    double V[4] = {1, 1, 1, 0}; /* voltage source: zero diagonal */
    ls_csc mna = from_dense(V, 2, 0);
    CU_ASSERT_PTR_EQUAL(ls_sparse_pick(&mna, &m), &ls_backend_klu);
    csc_free(&spd);
    csc_free(&uns);
    csc_free(&mna);
    free(G);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"chain closed form", test_chain_closed_form},
        {"grid two-point resistance", test_grid_two_point},
        {"transposed solves", test_transpose},
        {"refactor same pattern", test_refactor},
        {"refactor needs pivoting", test_refactor_needs_pivoting},
        {"singular", test_singular},
        {"not SPD", test_not_spd},
        {"pick", test_pick},
    };
    return ls_cu_run("sparse", NULL, NULL, cases, LS_CU_COUNT(cases));
}
