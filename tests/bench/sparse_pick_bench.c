/* sparse_pick_bench.c — times KLU, UMFPACK and CHOLMOD on the three matrix
 * families ls_sparse_pick has to tell apart, and prints what it picks.
 * Not part of the test suite.  Usage: sparse_pick_bench [scale]  (default 1)
 *
 *   grid   N×N unit-resistor grid, corner grounded, every node leaking 1e-3 S:
 *          nodal matrix, SPD.
 *   grid+  the same with 8 VCCS stamps between far-apart nodes: unsymmetric.
 *   chain  S inverting stages (R1 = R2 = 1k, op-amp = VCVS of gain 1e5):
 *          3 unknowns per stage, very sparse, unsymmetric.
 *
 * `sparse_pick_bench dense` instead measures the automatic dense-or-sparse
 * rule of src/analysis.c (docs/performance.md): random unsymmetric networks
 * of n nodes, each tied to d others, timed through the dense LU and KLU
 * (analyze + factor + one solve), beside ls_sparse_lu_flops.
 */
#include "solve/solver.h"
#include "solve/sparse.h"

#include <amd.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

typedef struct coo {
    int n, nnz, cap;
    int *r, *c;
    double *v;
} coo;

static void die(const char *m)
{
    fprintf(stderr, "sparse_pick_bench: %s\n", m);
    exit(2);
}

static void add(coo *t, int r, int c, double v)
{
    if (r < 0 || c < 0)
        return; /* ground */
    if (t->nnz == t->cap) {
        t->cap = t->cap ? 2 * t->cap : 1024;
        t->r = realloc(t->r, (size_t)t->cap * sizeof(int));
        t->c = realloc(t->c, (size_t)t->cap * sizeof(int));
        t->v = realloc(t->v, (size_t)t->cap * sizeof(double));
        if (!t->r || !t->c || !t->v)
            die("out of memory");
    }
    t->r[t->nnz] = r;
    t->c[t->nnz] = c;
    t->v[t->nnz++] = v;
}

static void conductance(coo *t, int a, int b, double g)
{
    add(t, a, a, g);
    add(t, b, b, g);
    add(t, a, b, -g);
    add(t, b, a, -g);
}

/* Compressed columns, rows sorted, duplicates summed (counting sort by column,
 * then insertion into a dense row marker). */
static ls_csc to_csc(const coo *t)
{
    int n = t->n;
    ls_csc a = {n, calloc((size_t)n + 1, sizeof(int)), NULL, NULL};
    int *cnt = calloc((size_t)n + 1, sizeof(int)), *mark = malloc((size_t)n * sizeof(int));
    int *ord = malloc((size_t)t->nnz * sizeof(int));
    a.rowind = malloc((size_t)t->nnz * sizeof(int));
    a.val = malloc((size_t)t->nnz * sizeof(double));
    if (!a.colptr || !cnt || !mark || !ord || !a.rowind || !a.val)
        die("out of memory");
    for (int k = 0; k < t->nnz; k++)
        cnt[t->c[k] + 1]++;
    for (int j = 0; j < n; j++)
        cnt[j + 1] += cnt[j];
    for (int k = 0; k < t->nnz; k++)
        ord[cnt[t->c[k]]++] = k;
    /* cnt[j] is now the end of column j's block in ord */
    int nz = 0, start = 0;
    for (int j = 0; j < n; j++) mark[j] = -1;
    for (int j = 0; j < n; j++) {
        int col0 = nz;
        for (int q = start; q < cnt[j]; q++) {
            int k = ord[q], i = t->r[k];
            if (mark[i] >= col0) {
                a.val[mark[i]] += t->v[k];
            } else {
                mark[i] = nz;
                a.rowind[nz] = i;
                a.val[nz++] = t->v[k];
            }
        }
        start = cnt[j];
        for (int p = col0 + 1; p < nz; p++) /* insertion sort: columns are short */
            for (int q = p; q > col0 && a.rowind[q - 1] > a.rowind[q]; q--) {
                int ti = a.rowind[q]; a.rowind[q] = a.rowind[q - 1]; a.rowind[q - 1] = ti;
                double tv = a.val[q]; a.val[q] = a.val[q - 1]; a.val[q - 1] = tv;
                mark[a.rowind[q]] = q; mark[a.rowind[q - 1]] = q - 1;
            }
        a.colptr[j + 1] = nz;
    }
    free(cnt); free(mark); free(ord);
    return a;
}

static ls_csc grid(int N, int unsym)
{
    coo t = {N * N, 0, 0, NULL, NULL, NULL};
    for (int i = 0; i < N; i++)
        for (int j = 0; j < N; j++) {
            int k = i * N + j;
            if (j + 1 < N) conductance(&t, k, k + 1, 1.0);
            if (i + 1 < N) conductance(&t, k, k + N, 1.0);
            add(&t, k, k, 1e-3);
        }
    add(&t, 0, 0, 1.0);
    if (unsym) /* VCCS: i(a->b) = gm (v(c) - v(d)) */
        for (int s = 0; s < 8; s++) {
            int a = (s * 7919) % (N * N), b = (a + N / 2) % (N * N);
            int c = (a + N * N / 3) % (N * N), d = (c + 1) % (N * N);
            double gm = 0.1;
            add(&t, a, c, gm); add(&t, a, d, -gm);
            add(&t, b, c, -gm); add(&t, b, d, gm);
        }
    ls_csc a = to_csc(&t);
    free(t.r); free(t.c); free(t.v);
    return a;
}

static ls_csc chain(int S)
{
    /* stage s: unknowns in = 3s-1 (previous out; node 0's source for s = 0),
     * minus = 3s, out = 3s+1, branch current of the VCVS = 3s+2.  Node -1 is
     * ground; the first stage's input is a current-source-fed 1k to ground. */
    coo t = {3 * S + 1, 0, 0, NULL, NULL, NULL};
    const double g = 1e-3, A = 1e5;
    int in = 3 * S; /* extra unknown: the input node */
    conductance(&t, in, -1, g);
    for (int s = 0; s < S; s++) {
        int minus = 3 * s, out = 3 * s + 1, br = 3 * s + 2;
        conductance(&t, in, minus, g);
        conductance(&t, minus, out, g);
        add(&t, out, br, 1.0);                 /* branch current leaves out */
        add(&t, br, out, 1.0);                 /* v(out) - A (0 - v(minus)) = 0 */
        add(&t, br, minus, A);
        in = out;
    }
    ls_csc a = to_csc(&t);
    free(t.r); free(t.c); free(t.v);
    return a;
}

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* y = A x; local so the bench links without the front end. */
static void matvec(const ls_csc *a, const double *x, double *y, int transpose)
{
    for (int i = 0; i < a->n; i++)
        y[i] = 0;
    for (int j = 0; j < a->n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            if (transpose) y[j] += a->val[p] * x[a->rowind[p]];
            else y[a->rowind[p]] += a->val[p] * x[j];
        }
}

/* Best of `reps` runs, in milliseconds, for analyze, factor, refactor, solve. */
static void run(const char *name, const ls_csc *a, const ls_backend *be, int reps)
{
    double best[4] = {INFINITY, INFINITY, INFINITY, INFINITY}, resid = NAN;
    const char *note = "";
    int n = a->n, nnz = ls_csc_nnz(a);
    double *b = malloc((size_t)n * sizeof(double)), *x = malloc((size_t)n * sizeof(double));
    double *y = malloc((size_t)n * sizeof(double));
    ls_csc a2 = *a;
    a2.val = malloc((size_t)nnz * sizeof(double));
    if (!b || !x || !y || !a2.val)
        die("out of memory");
    for (int p = 0; p < nnz; p++)
        a2.val[p] = a->val[p] * 1.5; /* same pattern, new numbers */
    for (int i = 0; i < n; i++)
        b[i] = 1.0 + (i % 7);
    for (int r = 0; r < reps; r++) {
        ls_solver_stats st;
        memset(&st, 0, sizeof st);
        void *h = be->create();
        if (!h)
            die("create failed");
        double t0 = now();
        int rc = be->analyze(h, a, &st);
        double t1 = now();
        if (rc == 0) rc = be->factor(h, a, &st);
        double t2 = now();
        if (rc == 0) rc = be->factor(h, &a2, &st);
        double t3 = now();
        memcpy(x, b, (size_t)n * sizeof(double));
        if (rc == 0) rc = be->solve(h, x, 0, &st);
        double t4 = now();
        be->destroy(h);
        if (rc != 0) {
            note = rc == LS_SOLVER_NOT_SPD ? "not SPD" : "failed";
            break;
        }
        double d[4] = {t1 - t0, t2 - t1, t3 - t2, t4 - t3};
        for (int k = 0; k < 4; k++)
            if (d[k] * 1e3 < best[k]) best[k] = d[k] * 1e3;
        matvec(&a2, x, y, 0);
        /* normwise backward error |b - A x| / (|A| |x| + |b|), infinity norms */
        double rn = 0, bn = 0, xn = 0, an = 0;
        for (int i = 0; i < n; i++) {
            rn = fmax(rn, fabs(y[i] - b[i]));
            bn = fmax(bn, fabs(b[i]));
            xn = fmax(xn, fabs(x[i]));
            y[i] = 1.0; /* ones: |A| y gives the row sums */
        }
        ls_csc abs_a = a2;
        double *absv = malloc((size_t)nnz * sizeof(double));
        if (!absv) die("out of memory");
        for (int p = 0; p < nnz; p++) absv[p] = fabs(a2.val[p]);
        abs_a.val = absv;
        double *rs = malloc((size_t)n * sizeof(double));
        if (!rs) die("out of memory");
        matvec(&abs_a, y, rs, 0);
        for (int i = 0; i < n; i++) an = fmax(an, rs[i]);
        free(rs); free(absv);
        resid = rn / (an * xn + bn);
    }
    if (*note)
        printf("| %-12s | %7d | %8d | %-7s | %9s | %9s | %9s | %9s | %-8s |\n", name, n, nnz,
               be->name, "-", "-", "-", "-", note);
    else
        printf("| %-12s | %7d | %8d | %-7s | %9.3f | %9.3f | %9.3f | %9.3f | %8.1e |\n", name, n,
               nnz, be->name, best[0], best[1], best[2], best[3], resid);
    free(b); free(x); free(y); free(a2.val);
}

/* n nodes, node k tied by 1 S to d nodes (k + 1 + (s * 7919 + k) mod (n - 1)),
 * each leaking 1e-3 S, plus a VCCS per node towards its neighbour: unsymmetric
 * like an MNA matrix with controlled sources.  d >= n - 1 is a full matrix. */
static ls_csc network(int n, int d)
{
    coo t = {n, 0, 0, NULL, NULL, NULL};
    for (int k = 0; k < n; k++) {
        for (int s = 0; s < d && s < n - 1; s++) {
            int o = d >= n - 1 ? s : (int)(((long)s * 7919 + k) % (n - 1));
            int j = (k + 1 + o) % n;
            if (j > k || d >= n - 1)
                conductance(&t, k, j, 1.0);
        }
        add(&t, k, k, 1e-3);
        add(&t, k, (k + 1) % n, 0.05); /* VCCS gm 0.05: row k, column k+1 */
    }
    ls_csc a = to_csc(&t);
    free(t.r); free(t.c); free(t.v);
    return a;
}

/* Best of `reps` whole solves (analyze, factor, one solve) through `be`, in ms. */
static double whole_solve_ms(const ls_csc *a, const ls_backend *be, int reps)
{
    double best = INFINITY;
    double *b = malloc((size_t)a->n * sizeof(double));
    if (!b)
        die("out of memory");
    for (int r = 0; r < reps; r++) {
        for (int i = 0; i < a->n; i++)
            b[i] = 1.0 + (i % 7);
        ls_solver *s = ls_solver_new(be, be == &ls_backend_dense ? LS_METHOD_DENSE_LU : LS_METHOD_SPARSE_LU);
        if (!s)
            die("out of memory");
        double t0 = now();
        int rc = ls_solver_analyze_factor(s, a);
        if (rc == 0)
            rc = ls_solver_solve(s, b, 0);
        double t1 = now();
        ls_solver_free(&s);
        if (rc != 0)
            die("a network did not solve");
        best = fmin(best, (t1 - t0) * 1e3);
    }
    free(b);
    return best;
}

/* The dense-or-sparse table: see the file comment. */
static int dense_rule(void)
{
    const int ns[] = {100, 200, 400, 800, 1500}, ds[] = {3, 10, 30, 100, 1 << 30};
    printf("| n | d | nnz | dense flops | sparse flops (est.) | ratio | dense ms | klu ms | dense/klu |\n");
    printf("|--:|--:|--:|--:|--:|--:|--:|--:|--:|\n");
    for (int i = 0; i < 5; i++)
        for (int k = 0; k < 5; k++) {
            int n = ns[i], d = ds[k] < n ? ds[k] : n - 1;
            if (k == 4 && ds[3] >= n - 1)
                continue;
            ls_csc a = network(n, d);
            double fs = ls_sparse_lu_flops(&a), fd = 2.0 / 3.0 * n * (double)n * n;
            int reps = n <= 400 ? 7 : 3;
            double td = whole_solve_ms(&a, &ls_backend_dense, reps), ts = whole_solve_ms(&a, &ls_backend_klu, reps);
            printf("| %d | %d | %d | %.3g | %.3g | %.1f | %.3f | %.3f | %.2f |\n", n, d, ls_csc_nnz(&a), fd, fs,
                   fd / fs, td, ts, td / ts);
            free(a.colptr); free(a.rowind); free(a.val);
        }
    return 0;
}

int main(int argc, char **argv)
{
    if (argc > 1 && strcmp(argv[1], "dense") == 0)
        return dense_rule();
    double scale = argc > 1 ? atof(argv[1]) : 1.0;
    const int Ns[] = {30, 100, 300, 500}, Ss[] = {1000, 30000, 300000};
    const ls_backend *bes[] = {&ls_backend_klu, &ls_backend_umfpack, &ls_backend_cholmod};
    printf("| matrix       |       n |      nnz | backend | analyze ms | factor ms | refactor ms | solve ms | backward err |\n");
    printf("|--------------|--------:|---------:|---------|----------:|----------:|----------:|----------:|----------|\n");
    ls_csc mats[11];
    char names[11][32];
    int m = 0;
    for (int k = 0; k < 4; k++) {
        int N = (int)(Ns[k] * sqrt(scale));
        mats[m] = grid(N, 0); snprintf(names[m++], 32, "grid %d", N);
        mats[m] = grid(N, 1); snprintf(names[m++], 32, "grid+ %d", N);
    }
    for (int k = 0; k < 3; k++) {
        int S = (int)(Ss[k] * scale);
        mats[m] = chain(S); snprintf(names[m++], 32, "chain %d", S);
    }
    for (int i = 0; i < m; i++) {
        int reps = mats[i].n < 20000 ? 7 : mats[i].n < 200000 ? 3 : 2;
        for (int b = 0; b < 3; b++)
            run(names[i], &mats[i], bes[b], reps);
    }
    printf("\n| matrix       | nnz/col | AMD nnz(L)/col | pick    | pick ms |\n|--------------|--------:|---------------:|---------|--------:|\n");
    for (int i = 0; i < m; i++) {
        ls_method meth;
        double t0 = now();
        const ls_backend *be = ls_sparse_pick(&mats[i], &meth);
        double t1 = now();
        double ctl[AMD_CONTROL], info[AMD_INFO];
        int *perm = malloc((size_t)mats[i].n * sizeof(int));
        if (!perm) die("out of memory");
        amd_defaults(ctl);
        amd_order(mats[i].n, mats[i].colptr, mats[i].rowind, perm, ctl, info);
        free(perm);
        printf("| %-12s | %7.2f | %14.1f | %-7s | %7.3f |\n", names[i],
               (double)ls_csc_nnz(&mats[i]) / mats[i].n, (info[AMD_LNZ] + mats[i].n) / mats[i].n,
               be->name, (t1 - t0) * 1e3);
        free(mats[i].colptr); free(mats[i].rowind); free(mats[i].val);
    }
    return 0;
}
