/* amg.c — the iterative backend: conjugate gradients preconditioned by
 * algebraic multigrid (hypre's BoomerAMG and PCG), for systems whose
 * resistor network is symmetric positive definite, however large.
 *
 * A direct factor of a 3-D mesh fills in by orders of magnitude (a 100^3
 * mesh's Cholesky factor takes gigabytes); AMG-PCG needs memory proportional
 * to the matrix and a number of iterations that hardly grows with the mesh.
 * hypre is Debian's well-kept implementation (libhypre-dev); it links MPI,
 * so this backend exists only in the build with `-Dmpi=enabled`
 * (docs/iterative.md).
 *
 * The MNA matrix is bordered:
 *
 *     A = [ G  B ]   G: the node block (m x m), symmetric, positive diagonal,
 *         [ C  D ]      weakly diagonally dominant: the resistors, the
 *                       conductances of diodes at their operating point;
 *                    B, C, D: the k branch unknowns of voltage sources, ports,
 *                       op-amps and controlled sources (any signs: C need not
 *                       be B^T).
 *
 * G is solved by AMG-PCG; the branches through the k x k Schur complement
 * S = D - C G^-1 B (k solves with G at setup, then a dense LU), so that
 *     t = G^-1 b1,  S y = b2 - C t,  x = G^-1 (b1 - B y)
 * (two solves with G per solve; one when k = 0).  A^T has the same form with
 * B and C^T exchanged, so transposed solves cost the same.  A part of the
 * resistor network tied to ground only through sources (G singular on it) is
 * pinned: G + g e e^T with one more border unknown z = e^T x taking the
 * conductance out again, exactly.
 *
 * Stopping rule, on the true residual: each G solve runs PCG until the
 * recursively updated residual is below LS_AMG_RTOL (relative, 2-norm), then
 * computes b - G x itself and restarts from x while that true residual is
 * above LS_AMG_RTOL (at most AMG_RESTARTS times).  The operating point then
 * refines against the whole A as it does for the direct solvers. */
#ifdef LS_HAVE_AMG

#include "base/csc.h"
#include "base/unionfind.h"
#include "solve/amg.h"
#include "solve/sparse.h"

#include <HYPRE.h>
#include <HYPRE_krylov.h>
#include <HYPRE_parcsr_ls.h>
#include <lapacke.h>
#include <mpi.h>

#include <float.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

#define AMG_MAX_ITER 500     /* PCG iterations per run; a mesh needs tens */
#define AMG_RESTARTS 4       /* runs after the first while the true residual is too large */
#define AMG_MIN_N 50000      /* the automatic choice: see ls_amg_preferred */
#define AMG_MIN_FILL 150.0
#define AMG_MAX_AUTO_BORDER 16

/* hypre keeps process-wide state (its error flag, its memory bookkeeping)
 * and needs MPI initialized: one lock serializes every hypre call of the
 * process (tol's worker threads solve one at a time through it), and MPI is
 * initialized on first use unless the program (loadstack-mpi) did it. */
static pthread_mutex_t hypre_lock = PTHREAD_MUTEX_INITIALIZER;
static pthread_once_t hypre_once = PTHREAD_ONCE_INIT;
static int hypre_ready; /* written once under hypre_once */
/* Set once by ls_amg_spread_ranks before any solve: each system's node block
 * is split by rows among MPI_COMM_WORLD's ranks.  A fact about the process
 * (it is one rank of a distributed run), like hypre's own state. */
static int spread_ranks;

void ls_amg_spread_ranks(void)
{
    spread_ranks = 1;
}

static void hypre_start(void)
{
    int up = 0;
    MPI_Initialized(&up);
    if (!up) {
        /* A singleton that talks to no one: OpenMPI then starts no helper
         * daemon and probes no network transport, 0.1 s instead of 0.6
         * (measured).  setenv(.., 0) leaves whatever the user set. */
        static const char *const quiet[][2] = {
            {"OMPI_MCA_ess_singleton_isolated", "1"}, {"OMPI_MCA_pml", "ob1"}, {"OMPI_MCA_btl", "self"},
            {"OMPI_MCA_osc", "^ucx"}, {"OMPI_MCA_mtl", "^ofi"},
        };
        for (size_t i = 0; i < sizeof quiet / sizeof quiet[0]; i++)
            setenv(quiet[i][0], quiet[i][1], 0);
        int provided;
        if (MPI_Init_thread(NULL, NULL, MPI_THREAD_SERIALIZED, &provided) != MPI_SUCCESS)
            return;
    }
    HYPRE_Init();
    hypre_ready = 1;
}

typedef struct amg {
    int n, m, k;            /* order, node block, border (branches and pins) */
    int nodes_hint;         /* set_nodes: m, or 0 when not told */
    ls_csc g;               /* the node block G (pinned), full symmetric pattern */
    int *bp, *bi;           /* B: k columns over rows < m (CSC) */
    double *bv;
    int *cp, *ci;           /* C^T: k columns over rows < m (row i of C as column i) */
    double *cv;
    double *s;              /* k x k Schur complement, LU-factored (column-major) */
    int *ipiv;
    double *t, *r, *y, *z;  /* scratch: m, m, k, k+m */
    HYPRE_IJMatrix ij;
    HYPRE_ParCSRMatrix pg;
    HYPRE_IJVector ijb, ijx;
    HYPRE_ParVector pb, px;
    HYPRE_Solver pcg, prec;
    int *rows;              /* 0 .. m-1, for vector transfers */
    int *ncols;             /* entries in each of this rank's rows, for hypre's setup */
    double gnorm;           /* ||G||_1 (pins included): the residual's rounding floor */
    bool factored;
    /* Spread over ranks (ls_amg_spread_ranks): this rank owns the rows
     * lo..hi of G in hypre's matrices and vectors; every rank keeps the whole
     * system and every solution whole (gathered after each PCG run), so all
     * ranks take the same steps and meet in the same collective calls. */
    bool spread;
    MPI_Comm comm;          /* MPI_COMM_WORLD when spread, else MPI_COMM_SELF */
    int rank, size, lo, hi;
    int *counts, *displs;   /* rows per rank and their first row, for MPI_Allgatherv */
    char library[40];       /* "hypre", or "hypre, K ranks" when spread */
} amg;

/* A new backend state, or NULL without memory (or without MPI).  Freed by amg_destroy. */
static void *amg_create(void)
{
    pthread_once(&hypre_once, hypre_start);
    if (!hypre_ready)
        return NULL;
    return calloc(1, sizeof(amg));
}

/* Release the hypre objects (under the lock). */
static void hypre_release(amg *h)
{
    pthread_mutex_lock(&hypre_lock);
    if (h->pcg)
        HYPRE_ParCSRPCGDestroy(h->pcg);
    if (h->prec)
        HYPRE_BoomerAMGDestroy(h->prec);
    if (h->ij)
        HYPRE_IJMatrixDestroy(h->ij);
    if (h->ijb)
        HYPRE_IJVectorDestroy(h->ijb);
    if (h->ijx)
        HYPRE_IJVectorDestroy(h->ijx);
    HYPRE_ClearAllErrors();
    pthread_mutex_unlock(&hypre_lock);
    h->pcg = h->prec = NULL;
    h->ij = NULL;
    h->ijb = h->ijx = NULL;
}

/* Free everything the last factor built; h stays usable. */
static void amg_release(amg *h)
{
    hypre_release(h);
    ls_csc_free(&h->g);
    free(h->bp); free(h->bi); free(h->bv);
    free(h->cp); free(h->ci); free(h->cv);
    free(h->s); free(h->ipiv);
    free(h->t); free(h->r); free(h->y); free(h->z);
    free(h->rows);
    free(h->ncols);
    h->ncols = NULL;
    free(h->counts);
    free(h->displs);
    h->counts = h->displs = NULL;
    h->bp = h->bi = h->cp = h->ci = h->ipiv = h->rows = NULL;
    h->bv = h->cv = h->s = h->t = h->r = h->y = h->z = NULL;
    h->factored = false;
}

/* Free the state; accepts NULL. */
static void amg_destroy(void *self)
{
    amg *h = self;
    if (!h)
        return;
    amg_release(h);
    free(h);
}

/* ---- splitting A into G, B, C, D ------------------------------------------------ */

/* The node block's order: the hint of set_nodes, else the leading columns
 * with a positive diagonal (a matrix with no branches has only those). */
static int node_count(const amg *h, const ls_csc *a)
{
    if (h && h->nodes_hint > 0 && h->nodes_hint <= a->n)
        return h->nodes_hint;
    int m = 0;
    while (m < a->n) {
        double d = 0;
        for (int p = a->colptr[m]; p < a->colptr[m + 1]; p++)
            if (a->rowind[p] == m)
                d = a->val[p];
        if (!(d > 0))
            break;
        m++;
    }
    return m;
}

static void amg_set_nodes(void *self, int m)
{
    ((amg *)self)->nodes_hint = m;
}

/* Copy the leading m x m block of a into g (rows sorted, as in a), with a
 * diagonal entry in every column (0 where a has none: a node that only
 * sources touch).  0, or -1 without memory. */
static int take_block(const ls_csc *a, int m, ls_csc *g)
{
    size_t nnz = (size_t)m;
    for (int j = 0; j < m; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            nnz += a->rowind[p] < m;
    g->n = m;
    g->colptr = malloc(((size_t)m + 1) * sizeof(int));
    g->rowind = malloc((nnz ? nnz : 1) * sizeof(int));
    g->val = malloc((nnz ? nnz : 1) * sizeof(double));
    if (!g->colptr || !g->rowind || !g->val)
        return -1;
    int w = 0;
    for (int j = 0; j < m; j++) {
        g->colptr[j] = w;
        bool diag = false;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i >= m)
                continue;
            if (i > j && !diag) {
                g->rowind[w] = j;
                g->val[w++] = 0;
            }
            diag |= i >= j;
            g->rowind[w] = i;
            g->val[w++] = a->val[p];
        }
        if (!diag) {
            g->rowind[w] = j;
            g->val[w++] = 0;
        }
    }
    g->colptr[m] = w;
    return 0;
}

/* The diagonal entry of column j of g (take_block put one in every column). */
static double *diag_of(ls_csc *g, int j)
{
    for (int p = g->colptr[j]; p < g->colptr[j + 1]; p++)
        if (g->rowind[p] == j)
            return &g->val[p];
    return NULL;
}

/* Nodes with no conductance at all (only sources touch them: a node
 * between two stacked cells) get the pin conductance gpin on their diagonal
 * and are listed in pin[]; returns their number. */
static int bare_nodes(ls_csc *g, double gpin, int *pin)
{
    int np = 0;
    for (int j = 0; j < g->n; j++) {
        bool any = false;
        for (int p = g->colptr[j]; p < g->colptr[j + 1]; p++)
            any |= g->val[p] != 0;
        if (!any) {
            *diag_of(g, j) = gpin;
            pin[np++] = j;
        }
    }
    return np;
}

/* The components of G's graph with no conductance to ground: one node of
 * each into pin[] (at most m).  Returns their number, or -1 without memory. */
static int floating_parts(const ls_csc *g, const unsigned char *strict, int *pin)
{
    int m = g->n, np = 0;
    int *parent = malloc(((size_t)m + 1) * sizeof *parent);
    unsigned char *grounded = calloc((size_t)m + 1, 1);
    if (!parent || !grounded) {
        free(parent);
        free(grounded);
        return -1;
    }
    for (int i = 0; i < m; i++)
        parent[i] = i;
    for (int j = 0; j < m; j++)
        for (int p = g->colptr[j]; p < g->colptr[j + 1]; p++)
            if (g->rowind[p] != j && g->val[p] != 0)
                ls_uf_union(parent, g->rowind[p], j);
    for (int j = 0; j < m; j++)
        if (strict[j])
            grounded[ls_uf_find(parent, j)] = 1;
    for (int j = 0; j < m; j++) {
        int r = ls_uf_find(parent, j);
        if (!grounded[r]) {
            grounded[r] = 1;
            pin[np++] = j;
        }
    }
    free(parent);
    free(grounded);
    return np;
}

/* Room for the border of k columns with one pin per floating component
 * (npin of them): B's and C^T's columns, D dense.  0, or -1 without memory
 * (what was had is freed with h). */
static int border_alloc(amg *h, const ls_csc *a, int npin)
{
    int m = h->m, k = h->k;
    size_t nb = (size_t)npin, nc = (size_t)npin;
    for (int j = m; j < a->n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            nb += a->rowind[p] < m;
    for (int j = 0; j < m; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            nc += a->rowind[p] >= m;
    h->bp = calloc((size_t)k + 1, sizeof(int));
    h->cp = calloc((size_t)k + 2, sizeof(int));
    h->bi = malloc((nb ? nb : 1) * sizeof(int));
    h->bv = malloc((nb ? nb : 1) * sizeof(double));
    h->ci = malloc((nc ? nc : 1) * sizeof(int));
    h->cv = malloc((nc ? nc : 1) * sizeof(double));
    h->s = calloc((size_t)(k ? k : 1) * (k ? k : 1), sizeof(double));
    return h->bp && h->cp && h->bi && h->bv && h->ci && h->cv && h->s ? 0 : -1;
}

/* B (the branch columns' node rows, then -g e per pin) and D (the branch
 * columns' branch rows, then -1 per pin). */
static void border_b(amg *h, const ls_csc *a, const int *pin, int npin, double gpin)
{
    int m = h->m, kb = a->n - m, k = h->k, w = 0;
    for (int c = 0; c < kb; c++) {
        h->bp[c] = w;
        for (int p = a->colptr[m + c]; p < a->colptr[m + c + 1]; p++) {
            int i = a->rowind[p];
            if (i < m) {
                h->bi[w] = i;
                h->bv[w++] = a->val[p];
            } else {
                h->s[(size_t)c * k + (i - m)] = a->val[p];
            }
        }
    }
    for (int q = 0; q < npin; q++) {
        h->bp[kb + q] = w;
        h->bi[w] = pin[q];
        h->bv[w++] = -gpin;
        h->s[(size_t)(kb + q) * k + kb + q] = -1;
    }
    h->bp[k] = w;
}

/* C^T (the branch rows' node columns, then e^T per pin): count per border
 * row, then fill (node columns in order: sorted). */
static void border_ct(amg *h, const ls_csc *a, const int *pin, int npin)
{
    int m = h->m, kb = a->n - m, k = h->k;
    for (int j = 0; j < m; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            if (a->rowind[p] >= m)
                h->cp[a->rowind[p] - m + 2]++;
    for (int q = 0; q < npin; q++)
        h->cp[kb + q + 2]++;
    for (int c = 0; c < k; c++)
        h->cp[c + 2] += h->cp[c + 1];
    for (int j = 0; j < m; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            if (a->rowind[p] >= m) {
                int at = h->cp[a->rowind[p] - m + 1]++;
                h->ci[at] = j;
                h->cv[at] = a->val[p];
            }
    for (int q = 0; q < npin; q++) {
        int at = h->cp[kb + q + 1]++;
        h->ci[at] = pin[q];
        h->cv[at] = 1;
    }
}

/* The border: B and C^T as k sparse columns over the node rows, D dense
 * (into h->s, column-major), with one pin per floating component (B: -g e,
 * C: e^T, D: -1) after the branches.  0, or -1 without memory. */
static int take_border(amg *h, const ls_csc *a, const int *pin, int npin, double gpin)
{
    if (border_alloc(h, a, npin) != 0)
        return -1;
    border_b(h, a, pin, npin, gpin);
    border_ct(h, a, pin, npin);
    return 0;
}

/* Bytes this rank's share of hypre's objects is expected to take: the
 * matrix in hypre's CSR form (a value and a column index per entry, kept
 * twice while it is assembled), the BoomerAMG hierarchy and the setup's
 * intermediate products, together counted as six times the fine matrix
 * (from memory: operator complexities of 1.5 to 3 are usual for HMIS
 * coarsening with truncated interpolation on meshes), and the vectors of
 * PCG and of every level (about 12 per row). */
static size_t hypre_bytes(const amg *h)
{
    size_t nnz = (size_t)(h->g.colptr[h->hi + 1] - h->g.colptr[h->lo]), rows = (size_t)(h->hi - h->lo + 1);
    return nnz * (sizeof(double) + sizeof(HYPRE_Int)) * 6 + rows * (sizeof(double) * 12 + sizeof(HYPRE_Int) * 6);
}

/* For the tests only (tests/mpi/oom_rank.py): LOADSTACK_TEST_RANK_AS=R:MB
 * limits the address space of rank R (0 without ranks), from here on, to
 * what it holds now plus MB megabytes (setrlimit), so that the memory
 * hypre's share needs is really not there: the allocations below fail as
 * they would on a machine without it.  Without the variable, nothing. */
static void limit_rank_for_test(const amg *h)
{
    const char *v = getenv("LOADSTACK_TEST_RANK_AS");
    int rank = -1;
    double mb = 0;
    if (!v || sscanf(v, "%d:%lf", &rank, &mb) != 2 || rank != h->rank)
        return;
    FILE *f = fopen("/proc/self/status", "r");
    char line[256];
    unsigned long long kb = 0;
    while (f && fgets(line, sizeof line, f))
        if (sscanf(line, "VmSize: %llu kB", &kb) == 1)
            break;
    if (f)
        fclose(f);
    struct rlimit rl;
    if (kb == 0 || getrlimit(RLIMIT_AS, &rl) != 0)
        return;
    rl.rlim_cur = (rlim_t)(kb * 1024 + mb * 1e6);
    setrlimit(RLIMIT_AS, &rl);
}

/* Can this process still get what hypre will take (hypre_bytes)?  hypre
 * does not survive a failed allocation (it goes on with a null pointer),
 * so the memory is asked for once beforehand and given back at once
 * (never touched: it costs no physical memory).  LS_SOLVER_OK, or
 * LS_SOLVER_NOMEM with st->bytes_needed.  The tests make one rank (0
 * without ranks) find no room on purpose: LOADSTACK_TEST_HYPRE_NOMEM=RANK
 * (tests/mpi/one_mesh.py). */
static int room_for_hypre(const amg *h, ls_solver_stats *st)
{
    size_t bytes = hypre_bytes(h);
    limit_rank_for_test(h);
    const char *fail = getenv("LOADSTACK_TEST_HYPRE_NOMEM");
    void *p = fail && *fail && atoi(fail) == h->rank ? NULL : malloc(bytes);
    bool room = p != NULL;
    free(p);
    if (room)
        return LS_SOLVER_OK;
    st->bytes_needed = bytes;
    return LS_SOLVER_NOMEM;
}

/* ---- hypre ------------------------------------------------------------------------ */

/* G to hypre, BoomerAMG set up as PCG's preconditioner.  Under the lock.
 * LS_SOLVER_* status. */
static int hypre_setup(amg *h)
{
    int m = h->m, lo = h->lo, hi = h->hi, nloc = hi - lo + 1;
    const ls_csc *g = &h->g;
    int *ncols = h->ncols; /* (allocated by build_local: no rank may stop here alone) */
    for (int i = 0; i < m; i++)
        h->rows[i] = i;
    for (int i = lo; i <= hi; i++)
        ncols[i - lo] = g->colptr[i + 1] - g->colptr[i];
    MPI_Comm comm = h->comm;
    /* G is symmetric: its column i is its row i, so the compressed columns
     * are handed over as rows (this rank's: lo..hi) */
    HYPRE_IJMatrixCreate(comm, lo, hi, lo, hi, &h->ij);
    HYPRE_IJMatrixSetObjectType(h->ij, HYPRE_PARCSR);
    HYPRE_IJMatrixSetRowSizes(h->ij, ncols);
    HYPRE_IJMatrixInitialize(h->ij);
    HYPRE_IJMatrixSetValues(h->ij, nloc, ncols, h->rows + lo, g->rowind + g->colptr[lo], g->val + g->colptr[lo]);
    HYPRE_IJMatrixAssemble(h->ij);
    HYPRE_IJMatrixGetObject(h->ij, (void **)&h->pg);
    HYPRE_IJVectorCreate(comm, lo, hi, &h->ijb);
    HYPRE_IJVectorSetObjectType(h->ijb, HYPRE_PARCSR);
    HYPRE_IJVectorInitialize(h->ijb);
    HYPRE_IJVectorAssemble(h->ijb);
    HYPRE_IJVectorGetObject(h->ijb, (void **)&h->pb);
    HYPRE_IJVectorCreate(comm, lo, hi, &h->ijx);
    HYPRE_IJVectorSetObjectType(h->ijx, HYPRE_PARCSR);
    HYPRE_IJVectorInitialize(h->ijx);
    HYPRE_IJVectorAssemble(h->ijx);
    HYPRE_IJVectorGetObject(h->ijx, (void **)&h->px);

    /* BoomerAMG as one V-cycle per PCG step: HMIS coarsening with extended+i
     * interpolation truncated to 4 entries a row keeps the coarse operators
     * sparse on 3-D meshes; symmetric hybrid Gauss-Seidel keeps the
     * preconditioner symmetric, as CG needs.  Strength threshold 0.25:
     * measured on 50^3 and 60^3 meshes against 0.5, a third less time for
     * the same iterations (tests/bench/mesh3d.sh). */
    HYPRE_BoomerAMGCreate(&h->prec);
    HYPRE_BoomerAMGSetPrintLevel(h->prec, 0);
    HYPRE_BoomerAMGSetCoarsenType(h->prec, 10);
    HYPRE_BoomerAMGSetInterpType(h->prec, 6);
    HYPRE_BoomerAMGSetPMaxElmts(h->prec, 4);
    HYPRE_BoomerAMGSetStrongThreshold(h->prec, 0.25);
    HYPRE_BoomerAMGSetRelaxType(h->prec, 6);
    HYPRE_BoomerAMGSetNumSweeps(h->prec, 1);
    HYPRE_BoomerAMGSetTol(h->prec, 0.0);
    HYPRE_BoomerAMGSetMaxIter(h->prec, 1);
    HYPRE_ParCSRPCGCreate(comm, &h->pcg);
    HYPRE_PCGSetMaxIter(h->pcg, AMG_MAX_ITER);
    HYPRE_PCGSetTol(h->pcg, LS_AMG_RTOL);
    HYPRE_PCGSetTwoNorm(h->pcg, 1);
    HYPRE_PCGSetPrintLevel(h->pcg, 0);
    HYPRE_PCGSetLogging(h->pcg, 1);
    HYPRE_PCGSetPrecond(h->pcg, (HYPRE_PtrToSolverFcn)HYPRE_BoomerAMGSolve,
                        (HYPRE_PtrToSolverFcn)HYPRE_BoomerAMGSetup, h->prec);
    int err = HYPRE_ParCSRPCGSetup(h->pcg, h->pg, h->pb, h->px);
    /* hypre's own allocations: a failed one sets the memory error flag */
    int nomem = HYPRE_GetError() & HYPRE_ERROR_MEMORY;
    HYPRE_ClearAllErrors();
    return nomem ? LS_SOLVER_NOMEM : err == 0 ? LS_SOLVER_OK : LS_SOLVER_FAILED;
}

/* One PCG run on G x = b from x = 0; *iters gets its iterations.  Under the lock. */
static void pcg_run(amg *h, const double *b, double *x, int *iters)
{
    int lo = h->lo, nloc = h->hi - h->lo + 1;
    HYPRE_IJVectorSetValues(h->ijb, nloc, h->rows + lo, b + lo);
    memset(x, 0, (size_t)h->m * sizeof *x);
    HYPRE_IJVectorSetValues(h->ijx, nloc, h->rows + lo, x + lo);
    HYPRE_ParCSRPCGSolve(h->pcg, h->pg, h->pb, h->px);
    HYPRE_IJVectorGetValues(h->ijx, nloc, h->rows + lo, x + lo);
    if (h->spread) /* every rank's rows to all: the rest of the work is whole in every rank */
        MPI_Allgatherv(MPI_IN_PLACE, 0, MPI_DATATYPE_NULL, x, h->counts, h->displs, MPI_DOUBLE, h->comm);
    HYPRE_Int it = 0;
    HYPRE_PCGGetNumIterations(h->pcg, &it);
    *iters = (int)it;
    HYPRE_ClearAllErrors(); /* a run that stopped short is judged below, by its true residual */
}

static double norm2(const double *v, int n)
{
    double s = 0;
    for (int i = 0; i < n; i++)
        s += v[i] * v[i];
    return sqrt(s);
}

/* The smallest relative residual ||b - G x|| / ||b|| that can be told from
 * rounding when it is computed in double precision: each row's sum of at
 * most k + 1 products errs by about (k + 2) eps (|b| + |G| |x|), and
 * || |G| |x| ||_2 <= ||G||_1 ||x||_2 for a symmetric G.  A large, smooth
 * solution (a 2-D mesh of millions of nodes, condition ~10^6 and up) puts
 * this above LS_AMG_RTOL: asking for less would only fail the solve, and
 * the refinement against the whole system in extra precision takes the
 * answer the rest of the way. */
static double residual_floor(const amg *h, const double *x, double bn)
{
    return 16 * DBL_EPSILON * (1 + h->gnorm * norm2(x, h->m) / bn);
}

/* r = b - G x, whole in every rank.  Spread over ranks, each rank has
 * only its columns of G (keep_own_columns), which by symmetry are its rows:
 * it computes its rows of r as dot products, in the same order of terms as
 * the product by columns, and the ranks gather them.  Under the lock. */
static void g_residual(const amg *h, const double *b, const double *x, double *r)
{
    if (!h->spread) {
        ls_csc_matvec(&h->g, x, r, 0);
        for (int i = 0; i < h->m; i++)
            r[i] = b[i] - r[i];
        return;
    }
    const ls_csc *g = &h->g;
    for (int i = h->lo; i <= h->hi; i++) {
        double s = 0;
        for (int p = g->colptr[i]; p < g->colptr[i + 1]; p++)
            s += g->val[p] * x[g->rowind[p]];
        r[i] = b[i] - s;
    }
    MPI_Allgatherv(MPI_IN_PLACE, 0, MPI_DATATYPE_NULL, r, h->counts, h->displs, MPI_DOUBLE, h->comm);
}

/* x = G^-1 b (b kept), by PCG runs restarted on the true residual b - G x
 * until it is below LS_AMG_RTOL relative to b.  Adds the iterations to
 * st->cg_iterations and raises st->cg_residual to the true relative
 * residual reached.  LS_SOLVER_OK or LS_SOLVER_NOT_CONVERGED. */
static int g_solve(amg *h, const double *b, double *x, ls_solver_stats *st)
{
    int m = h->m;
    double bn = norm2(b, m);
    if (bn == 0) {
        memset(x, 0, (size_t)m * sizeof *x);
        return LS_SOLVER_OK;
    }
    double *r = h->r, *d = h->t;
    memcpy(r, b, (size_t)m * sizeof *r);
    memset(x, 0, (size_t)m * sizeof *x);
    double rel = 1, goal = LS_AMG_RTOL;
    pthread_mutex_lock(&hypre_lock);
    for (int run = 0; run <= AMG_RESTARTS && rel > goal; run++) {
        int it;
        pcg_run(h, r, d, &it);
        st->cg_iterations += it;
        for (int i = 0; i < m; i++)
            x[i] += d[i];
        g_residual(h, b, x, r);
        rel = norm2(r, m) / bn;
        goal = fmax(LS_AMG_RTOL, residual_floor(h, x, bn));
    }
    pthread_mutex_unlock(&hypre_lock);
    if (!(rel <= st->cg_residual))
        st->cg_residual = rel;
    return rel <= goal ? LS_SOLVER_OK : LS_SOLVER_NOT_CONVERGED;
}

/* ---- factor and solve ------------------------------------------------------------- */

/* In a run spread over ranks, the worst status of any rank (LS_SOLVER_*
 * statuses are 0 or negative), so that a rank that fails alone (out of
 * memory) does not leave the others waiting in hypre's collective calls:
 * they all fail the same way.  Without ranks, rc itself. */
static int agree(const amg *h, int rc)
{
    if (!h->spread)
        return rc;
    int all = rc;
    if (MPI_Allreduce(&rc, &all, 1, MPI_INT, MPI_MIN, h->comm) != MPI_SUCCESS)
        return LS_SOLVER_FAILED;
    return all;
}

/* The Schur complement S = D - C G^-1 B, column by column, LU-factored.
 * LS_SOLVER_* status; a singular S names its column (a branch). */
static int schur(amg *h, ls_solver_stats *st)
{
    int m = h->m, k = h->k;
    if (k == 0)
        return LS_SOLVER_OK;
    double *col = calloc((size_t)m, sizeof *col), *w = malloc((size_t)m * sizeof *w);
    h->ipiv = malloc((size_t)k * sizeof *h->ipiv);
    int rc = agree(h, col && w && h->ipiv ? LS_SOLVER_OK : LS_SOLVER_NOMEM);
    if (rc != LS_SOLVER_OK) {
        free(col);
        free(w);
        return rc;
    }
    for (int c = 0; c < k && rc == LS_SOLVER_OK; c++) {
        for (int p = h->bp[c]; p < h->bp[c + 1]; p++)
            col[h->bi[p]] = h->bv[p];
        rc = g_solve(h, col, w, st);
        for (int p = h->bp[c]; p < h->bp[c + 1]; p++)
            col[h->bi[p]] = 0;
        for (int i = 0; i < k; i++) { /* S_ic -= (C w)_i */
            double s = 0;
            for (int p = h->cp[i]; p < h->cp[i + 1]; p++)
                s += h->cv[p] * w[h->ci[p]];
            h->s[(size_t)c * k + i] -= s;
        }
    }
    free(col);
    free(w);
    if (rc != LS_SOLVER_OK)
        return rc;
    int info = LAPACKE_dgetrf(LAPACK_COL_MAJOR, k, k, h->s, k, h->ipiv);
    if (info > 0) {
        st->bad_column = m + info - 1;
        return LS_SOLVER_SINGULAR;
    }
    return info == 0 ? LS_SOLVER_OK : LS_SOLVER_FAILED;
}

static int keep_own_columns(amg *h);

/* A pin's conductance: the mean positive diagonal of g, so G + g e e^T
 * stays as well conditioned as the mesh itself (1 without one). */
static double pin_conductance(ls_csc *g)
{
    double dsum = 0;
    int dn = 0;
    for (int j = 0; j < g->n; j++) {
        double d = *diag_of(g, j);
        if (d > 0) {
            dsum += d;
            dn++;
        }
    }
    return dn ? dsum / dn : 1;
}

/* Check G (symmetric, diagonally dominant) and choose its pins into work:
 * the bare nodes, then one node per floating component, each given the
 * conductance gpin to ground.  LS_SOLVER_* status; *npin the pins. */
static int pin_g(amg *h, double gpin, int *work, int *npin, ls_solver_stats *st)
{
    int m = h->m;
    unsigned char *strict = calloc((size_t)m, 1);
    int *scratch = malloc((size_t)m * sizeof *scratch);
    if (!strict || !scratch) {
        free(strict);
        free(scratch);
        return LS_SOLVER_NOMEM;
    }
    int nbare = bare_nodes(&h->g, gpin, work);
    int bad = ls_csc_asym_column(&h->g, scratch);
    free(scratch);
    if (bad < 0)
        bad = ls_csc_dominance(&h->g, strict);
    int nfloat = bad < 0 ? floating_parts(&h->g, strict, work + nbare) : 0;
    free(strict);
    if (bad >= 0 || nfloat < 0) {
        st->bad_column = bad;
        return bad >= 0 ? LS_SOLVER_NOT_SPD : LS_SOLVER_NOMEM;
    }
    for (int q = nbare; q < nbare + nfloat; q++)
        *diag_of(&h->g, work[q]) += gpin;
    *npin = nbare + nfloat;
    return LS_SOLVER_OK;
}

/* The 1-norm of g (its largest column sum of |entries|). */
static double csc_norm1(const ls_csc *g)
{
    double norm = 0;
    for (int j = 0; j < g->n; j++) {
        double c = 0;
        for (int p = g->colptr[j]; p < g->colptr[j + 1]; p++)
            c += fabs(g->val[p]);
        norm = fmax(norm, c);
    }
    return norm;
}

/* Split a, check G, pin its floating parts, take the border and the
 * scratch: everything before hypre, in this process alone.  LS_SOLVER_*
 * status, as amg_build's. */
static int build_local(amg *h, const ls_csc *a, ls_solver_stats *st)
{
    if (take_block(a, h->m, &h->g) != 0)
        return LS_SOLVER_NOMEM;
    int m = h->m, npin = 0;
    int *work = malloc((size_t)m * sizeof *work);
    if (!work)
        return LS_SOLVER_NOMEM;
    double gpin = pin_conductance(&h->g);
    int rc = pin_g(h, gpin, work, &npin, st);
    if (rc != LS_SOLVER_OK) {
        free(work);
        return rc;
    }
    h->gnorm = csc_norm1(&h->g);
    h->k = a->n - m + npin;
    rc = take_border(h, a, work, npin, gpin);
    free(work);
    if (rc != 0)
        return LS_SOLVER_NOMEM;
    size_t sk = (size_t)h->k;
    h->t = malloc((size_t)m * sizeof *h->t);
    h->r = malloc((size_t)m * sizeof *h->r);
    h->y = malloc((sk ? sk : 1) * sizeof *h->y);
    h->z = malloc(((size_t)m + sk) * sizeof *h->z);
    h->rows = malloc((size_t)m * sizeof *h->rows);
    h->ncols = malloc((size_t)(h->hi - h->lo + 1) * sizeof *h->ncols);
    if (!h->t || !h->r || !h->y || !h->z || !h->rows || !h->ncols)
        return LS_SOLVER_NOMEM;
    if (h->spread && keep_own_columns(h) != 0)
        return LS_SOLVER_NOMEM;
    return room_for_hypre(h, st);
}

/* Spread over ranks, keep of G only this rank's columns lo..hi (its rows,
 * G being symmetric): the checks above needed all of it, hypre and the
 * true residual (g_residual) need only these.  colptr stays whole (m + 1
 * ints) with empty columns outside lo..hi, so that column j still starts
 * at colptr[j].  Saves (K - 1) / K of G's entries in each of K ranks.
 * 0, or -1 without memory (G is then left whole). */
static int keep_own_columns(amg *h)
{
    ls_csc *g = &h->g;
    int lo = g->colptr[h->lo], hi = g->colptr[h->hi + 1], nnz = hi - lo;
    int *ri = malloc((size_t)(nnz ? nnz : 1) * sizeof *ri);
    double *rv = malloc((size_t)(nnz ? nnz : 1) * sizeof *rv);
    if (!ri || !rv) {
        free(ri);
        free(rv);
        return -1;
    }
    memcpy(ri, g->rowind + lo, (size_t)nnz * sizeof *ri);
    memcpy(rv, g->val + lo, (size_t)nnz * sizeof *rv);
    for (int j = 0; j <= g->n; j++)
        g->colptr[j] = j <= h->lo ? 0 : j > h->hi ? nnz : g->colptr[j] - lo;
    free(g->rowind);
    free(g->val);
    g->rowind = ri;
    g->val = rv;
    return 0;
}

/* Decide whether this system is spread over the ranks (ls_amg_spread_ranks,
 * more than one rank, at least one row each: the same answer in every rank,
 * since every rank has the same system) and this rank's rows lo..hi.
 * 0, or -1 without memory. */
static int split_rows(amg *h)
{
    int m = h->m;
    h->comm = MPI_COMM_SELF;
    h->spread = false;
    h->rank = 0;
    h->size = 1;
    if (spread_ranks) {
        MPI_Comm_size(MPI_COMM_WORLD, &h->size);
        MPI_Comm_rank(MPI_COMM_WORLD, &h->rank);
        h->spread = h->size > 1 && m >= h->size;
    }
    if (!h->spread) {
        h->rank = 0;
        h->size = 1;
        h->lo = 0;
        h->hi = m - 1;
        return 0;
    }
    h->comm = MPI_COMM_WORLD;
    h->counts = malloc((size_t)h->size * sizeof *h->counts);
    h->displs = malloc((size_t)h->size * sizeof *h->displs);
    if (!h->counts || !h->displs)
        return -1;
    for (int r = 0; r < h->size; r++) {
        h->displs[r] = (int)((long long)m * r / h->size);
        h->counts[r] = (int)((long long)m * (r + 1) / h->size) - h->displs[r];
    }
    h->lo = h->displs[h->rank];
    h->hi = h->lo + h->counts[h->rank] - 1;
    return 0;
}

/* The library's name in the report: the ranks change hypre's coarsening
 * and smoothing, so the iteration count, and the report says how many there
 * were. */
static void set_library(amg *h)
{
    if (h->spread)
        snprintf(h->library, sizeof h->library, "hypre, %d ranks", h->size);
    else
        snprintf(h->library, sizeof h->library, "hypre");
}

/* Split a, check G, pin its floating parts, set up AMG and the Schur
 * complement.  LS_SOLVER_* status: not this shape (or G not positive
 * definite) is LS_SOLVER_NOT_SPD with st->bad_column at the first column
 * that shows it.  Spread over ranks, every rank returns the same status. */
static int amg_build(amg *h, const ls_csc *a, ls_solver_stats *st)
{
    amg_release(h);
    h->n = a->n;
    h->m = node_count(h, a);
    if (h->m <= 0) {
        st->bad_column = 0;
        return LS_SOLVER_NOT_SPD;
    }
    int rc = split_rows(h) == 0 ? build_local(h, a, st) : LS_SOLVER_NOMEM;
    set_library(h);
    rc = agree(h, rc);
    if (rc == LS_SOLVER_NOMEM && h->spread) { /* what the rank that ran short asked for, in every rank */
        unsigned long long want = st->bytes_needed, most = want;
        MPI_Allreduce(&want, &most, 1, MPI_UNSIGNED_LONG_LONG, MPI_MAX, h->comm);
        st->bytes_needed = (size_t)most;
    }
    if (rc != LS_SOLVER_OK)
        return rc;
    pthread_mutex_lock(&hypre_lock);
    rc = hypre_setup(h);
    pthread_mutex_unlock(&hypre_lock);
    rc = agree(h, rc);
    if (rc != LS_SOLVER_OK)
        return rc;
    st->cg_iterations = 0;
    st->cg_residual = 0;
    rc = schur(h, st);
    h->factored = rc == LS_SOLVER_OK;
    return rc;
}

static int amg_analyze(void *self, const ls_csc *a, ls_solver_stats *st)
{
    (void)self;
    (void)a;
    st->analyses++;
    return LS_SOLVER_OK; /* the AMG setup reads the values: all of it is in factor */
}

static int amg_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    st->method = LS_METHOD_ITERATIVE_AMG;
    amg *h = self;
    st->rcond = NAN; /* not estimated: the iterations and the residual stand for it */
    snprintf(h->library, sizeof h->library, "hypre");
    st->library = h->library; /* (set_library adds the ranks) */
    int rc = amg_build(h, a, st);
    if (rc == LS_SOLVER_OK)
        st->factorizations++;
    return rc;
}

static int amg_analyze_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    st->analyses++;
    return amg_factor(self, a, st);
}

/* y -= M^T x over the k sparse columns (p, i, v) of an m x k matrix M:
 * y_c -= sum_i M_ic x_i. */
static void sub_cols_t(const int *cp, const int *ci, const double *cv, int k, const double *x, double *y)
{
    for (int c = 0; c < k; c++) {
        double s = 0;
        for (int p = cp[c]; p < cp[c + 1]; p++)
            s += cv[p] * x[ci[p]];
        y[c] -= s;
    }
}

/* x -= M y over the k sparse columns of M. */
static void sub_cols(const int *cp, const int *ci, const double *cv, int k, const double *y, double *x)
{
    for (int c = 0; c < k; c++)
        for (int p = cp[c]; p < cp[c + 1]; p++)
            x[ci[p]] -= cv[p] * y[c];
}

/* Solve A x = b (or A^T x = b) in place through the Schur complement (the
 * steps in the banner); pins' unknowns live only in scratch.  LS_SOLVER_* status. */
static int amg_solve(void *self, double *b, int transpose, ls_solver_stats *st)
{
    amg *h = self;
    if (!h->factored)
        return LS_SOLVER_FAILED;
    int m = h->m, k = h->k, kb = h->n - m;
    st->cg_residual = 0;
    /* A: right border B (bp), bottom border rows C (cp); A^T: right C^T, bottom B^T */
    const int *rp = transpose ? h->cp : h->bp, *ri = transpose ? h->ci : h->bi;
    const double *rv = transpose ? h->cv : h->bv;
    const int *lp = transpose ? h->bp : h->cp, *li = transpose ? h->bi : h->ci;
    const double *lv = transpose ? h->bv : h->cv;
    double *x = h->z, *y = h->y;
    int rc = g_solve(h, b, x, st); /* t = G^-1 b1 */
    if (rc != LS_SOLVER_OK || k == 0) {
        if (rc == LS_SOLVER_OK)
            memcpy(b, x, (size_t)m * sizeof *b);
        return rc;
    }
    for (int c = 0; c < k; c++) /* y = b2 - C t (a pin's b2 is 0) */
        y[c] = c < kb ? b[m + c] : 0;
    sub_cols_t(lp, li, lv, k, x, y);
    int info = LAPACKE_dgetrs(LAPACK_COL_MAJOR, transpose ? 'T' : 'N', k, 1, h->s, k, h->ipiv, y, k);
    if (info != 0)
        return LS_SOLVER_FAILED;
    sub_cols(rp, ri, rv, k, y, b); /* b1 - B y */
    rc = g_solve(h, b, x, st);
    if (rc != LS_SOLVER_OK)
        return rc;
    memcpy(b, x, (size_t)m * sizeof *b);
    memcpy(b + m, y, (size_t)kb * sizeof *b);
    return LS_SOLVER_OK;
}

/* ---- the automatic choice --------------------------------------------------------- */

/* See amg.h.  The rule, measured with tests/bench/mesh3d.py (figures in
 * docs/performance.md): the iterative backend when the system has at least
 * AMG_MIN_N unknowns, its node block is the SPD shape this backend takes
 * (checked as amg_build does, O(nnz)), the border is small, and AMD's
 * estimate of the direct factor's fill is at least AMG_MIN_FILL entries per
 * column.  A 2-D mesh's factor holds about 30-60 entries per column at these
 * sizes and CHOLMOD solves it faster than AMG-PCG; a 3-D mesh's holds
 * hundreds and grows with the mesh, and there AMG-PCG wins in time and,
 * by far, in memory. */
int ls_amg_preferred(const ls_csc *a, int nodes)
{
    if (!a || a->n < AMG_MIN_N || nodes <= 0 || nodes > a->n)
        return 0;
    int m = nodes;
    if (m <= 0 || a->n - m > AMG_MAX_AUTO_BORDER)
        return 0;
    ls_csc g = {0};
    int *work = malloc((size_t)m * sizeof *work);
    unsigned char *strict = calloc((size_t)m, 1);
    int ok = work && strict && take_block(a, m, &g) == 0 && ls_csc_asym_column(&g, work) < 0 &&
             ls_csc_dominance(&g, strict) < 0;
    free(work);
    free(strict);
    ls_csc_free(&g);
    return ok && ls_csc_fill_per_column(a) >= AMG_MIN_FILL;
}

const ls_backend ls_backend_amg = {
    "hypre", amg_create, amg_analyze, amg_factor, amg_solve, amg_destroy, amg_analyze_factor, amg_set_nodes, NULL,
};

#endif /* LS_HAVE_AMG */
