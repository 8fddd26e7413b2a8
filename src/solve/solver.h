/* solver.h — the linear-solver interface shared by the dense and sparse backends.
 *
 * Lifecycle (every backend):  new -> analyze (structure only) -> factor (numbers)
 * -> solve (in place, any number of times, plain or transposed) -> factor again
 * with the same pattern (reuses the analysis) -> free (sets the handle to NULL,
 * accepts NULL).
 *
 * Matrices are square, compressed-column, 0-based, duplicates already summed,
 * row indices sorted within each column.  The solver never keeps a pointer to the
 * caller's matrix past a call; it copies what it needs.
 */
#ifndef LS_SOLVER_H
#define LS_SOLVER_H

#include <stdbool.h>
#include <stddef.h>

#include "base/csc.h"

typedef enum ls_method {
    LS_METHOD_DENSE_LU = 0,      /* LAPACK dgetrf with equilibration */
    LS_METHOD_SPARSE_LU,         /* KLU or UMFPACK, chosen by structure */
    LS_METHOD_SPARSE_CHOLESKY,   /* CHOLMOD, symmetric positive definite systems only */
    LS_METHOD_ITERATIVE_AMG,     /* hypre BoomerAMG-PCG on the node block (amg.c; -Dmpi=enabled builds) */
    LS_METHOD_DENSE_CHOLESKY     /* LAPACK dpotrf with symmetric scaling: set by the dense backend itself */
} ls_method;

/* A dense method (the dense backend's own choice between LU and Cholesky). */
static inline bool ls_method_is_dense(ls_method m)
{
    return m == LS_METHOD_DENSE_LU || m == LS_METHOD_DENSE_CHOLESKY;
}

typedef enum ls_solver_status {
    LS_SOLVER_OK = 0,
    LS_SOLVER_SINGULAR = -1,     /* exactly or numerically singular; see bad_column */
    LS_SOLVER_NOMEM = -2,
    LS_SOLVER_TOO_LARGE = -3,    /* refused before allocating: see bytes_needed */
    LS_SOLVER_NOT_SPD = -4,      /* Cholesky asked for a matrix that is not positive definite */
    LS_SOLVER_FAILED = -5,       /* any other library failure */
    LS_SOLVER_NOT_CONVERGED = -6 /* an iterative solve stopped above its tolerance: see cg_residual */
} ls_solver_status;

/* Statistics a backend fills in; controls are the arguments of the calls. */
typedef struct ls_solver_stats {
    ls_method method;
    const char *library;   /* "lapack", "klu", "umfpack", "cholmod", "hypre" */
    double rcond;          /* reciprocal condition estimate (1-norm); NAN if unknown */
    bool rcond_floor;      /* rcond is only a floor under the estimate (ls_solver_singularity_only) */
    /* Dense backend: the last factorization tried Cholesky (the matrix passed
     * ls_csc_likely_spd) and dpotrf found a non-positive pivot or dpocon a
     * numerically singular matrix, so LU factored it (method dense-lu). */
    bool cholesky_refused;
    int bad_column;        /* first zero or tiny pivot column, -1 if none */
    size_t bytes_needed;   /* with LS_SOLVER_TOO_LARGE: what the factor would take */
    int factorizations;    /* numeric factorizations done */
    int analyses;          /* symbolic analyses done */
    /* Iterative backend only: CG iterations since the last factor (its setup
     * and every solve, runs and restarts), and the largest true relative
     * residual ||b - G x||_2 / ||b||_2 the last solve ended with. */
    long cg_iterations;
    double cg_residual;
    /* The work of the last numeric factorization and of one solve with it,
     * in floating-point operations as the library counts them (0: not
     * known): what choosing a low-rank update over a refactorization
     * weighs (update.c). */
    double factor_flops, solve_flops;
} ls_solver_stats;

typedef struct ls_solver ls_solver;

/* One backend: a table of functions.  `self` is backend-private state. */
typedef struct ls_backend {
    const char *name;
    void *(*create)(void);
    int (*analyze)(void *self, const ls_csc *a, ls_solver_stats *st);
    int (*factor)(void *self, const ls_csc *a, ls_solver_stats *st);
    /* Solve A x = b (transpose = 0) or A^T x = b (transpose = 1) in place,
     * b is n values.  Only valid after a successful factor. */
    int (*solve)(void *self, double *b, int transpose, ls_solver_stats *st);
    void (*destroy)(void *self);
    /* Optional (NULL: analyze, then factor): both at once, for a backend whose
     * analysis already does most of the factor's work on the same matrix. */
    int (*analyze_factor)(void *self, const ls_csc *a, ls_solver_stats *st);
    /* Optional (NULL: ignored): the leading m unknowns are node voltages and
     * the rest branch currents, for a backend that treats them apart. */
    void (*set_nodes)(void *self, int m);
    /* Optional (NULL: ignored): ls_solver_singularity_only's switch. */
    void (*singularity_only)(void *self, bool on);
    /* Optional (NULL: ignored): ls_solver_own_lu's switch. */
    void (*own_lu)(void *self, bool on);
} ls_backend;

extern const ls_backend ls_backend_dense;
/* Provided by sparse.c when built with SuiteSparse. */
extern const ls_backend ls_backend_klu;
extern const ls_backend ls_backend_umfpack;
extern const ls_backend ls_backend_cholmod;

/* Generic front end over a backend (solver.c). */
ls_solver *ls_solver_new(const ls_backend *be, ls_method method);
int ls_solver_analyze(ls_solver *s, const ls_csc *a);
int ls_solver_factor(ls_solver *s, const ls_csc *a);
/* ls_solver_analyze then ls_solver_factor on the same matrix, in one step where
 * the backend can share their work.  Returns the first failing status. */
int ls_solver_analyze_factor(ls_solver *s, const ls_csc *a);
/* Solve in place; `work` scratch is internal.  Returns LS_SOLVER_OK or an error. */
int ls_solver_solve(ls_solver *s, double *b, int transpose);
const ls_solver_stats *ls_solver_stats_of(const ls_solver *s);
/* Tell the backend that the leading m unknowns are node voltages (before
 * analyze; a backend that does not need it ignores it). */
void ls_solver_set_nodes(ls_solver *s, int m);
/* With on, the caller wants of the condition estimate only the test that
 * refuses a numerically singular matrix: a backend that can prove the test
 * passes more cheaply (the dense one: a floor under the reciprocal condition)
 * may then skip the estimate, and stats.rcond is that floor, with
 * stats.rcond_floor set.  The factors, the solves and the verdict (singular
 * or not, bad_column) are those of the full path.  Ignored while low-rank
 * updates are allowed (they weigh the estimate).  Off by default. */
void ls_solver_singularity_only(ls_solver *s, bool on);
/* With on, the dense backend factors and solves a system of at most
 * LS_DENSE_OWN_MAX unknowns with its own LU with partial pivoting and
 * triangular solves instead of LAPACK's dgetrf and dgetrs: the same method
 * and verdict, the factors and solutions the same up to rounding (not the
 * same bits), without the library's calls, which cost more than the
 * arithmetic at that size.  For a caller whose decisions are safe under a
 * difference in the last bits (fit's candidates, docs/fit.md).  Ignored
 * while low-rank updates are allowed.  Off by default. */
void ls_solver_own_lu(ls_solver *s, bool on);
#define LS_DENSE_OWN_MAX 64
/* The program's own thread settings between solves: one BLAS and one OpenMP
 * thread (a factorization of a large system raises them for its duration).
 * For the command-line program only: a library caller keeps its own, which
 * every call puts back. */
void ls_solver_threads_for_program(void);
/* The program's allocation for SuiteSparse (sparse.c): the factor's large
 * blocks in mappings of their own with huge pages (base/pages.h,
 * ls_big_malloc), which cut the page faults of a large factor's first touch
 * by up to 512 times.  Call before any solver is made; for the command-line
 * program only (it sets SuiteSparse's process-wide functions): a library
 * caller keeps SuiteSparse's allocation, or its own. */
void ls_solver_pages_for_program(void);
void ls_solver_free(ls_solver **s);

/* Allow low-rank updates, `factored` being the matrix s last factored (NULL:
 * stop them): a later ls_solver_factor of a matrix
 * with the pattern of the one factored, differing from it in a few rows,
 * may keep the factor and solve through the Sherman-Morrison-Woodbury
 * identity when its estimated work is below a refactorization's (update.c).
 * Solves stay within a backward error of 1e-10 of the true matrix (checked
 * per solve, refactoring where it fails).  For studies that refactor many
 * times (sweep points, tol trials, fit candidates).  Out of memory: no
 * updates. */
void ls_solver_allow_update(ls_solver *s, const ls_csc *factored);
/* How many factorizations the updates replaced, and how many updated solves
 * their residual check sent to a refactorization (benchmarks, tests). */
void ls_solver_update_counts(const ls_solver *s, long *updates, long *rejected);

/* Largest order the dense backend accepts, and the bytes it would need for n. */
#define LS_DENSE_MAX_UNKNOWNS 8000
size_t ls_dense_bytes(int n);

/* y = A x  (or A^T x with transpose = 1). */
void ls_csc_matvec(const ls_csc *a, const double *x, double *y, int transpose);
/* Infinity norm of A (max row sum of |a_ij|). */
double ls_csc_norm_inf(const ls_csc *a);

#endif
