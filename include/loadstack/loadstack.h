/* loadstack.h — the public C interface of the loadstack library.
 *
 * Read a circuit written in the loadstack language (loadstack-language(5)),
 * solve its DC operating point, and read node
 * voltages, part results and the loading report of every port; run the sag,
 * Thevenin, influence, tolerance and sweep analyses and the circuit's own
 * checks.
 *
 * Lifecycle
 *   ls_circuit *c = NULL;
 *   ls_status st = ls_circuit_parse_file("chain.stack", NULL, 0, &c);
 *   (walk the diagnostics with ls_circuit_diag_count / ls_circuit_diag)
 *   if (st >= 0) st = ls_circuit_solve(c, NULL);
 *   (read results; run analyses)
 *   ls_circuit_free(&c);          (sets c to NULL; accepts NULL)
 *
 * Conventions
 *   - Every function that can fail returns an ls_status: 0 ok, positive
 *     "done, with warnings", negative an error.  Results come back through
 *     out-parameters, which are left untouched on an error unless the
 *     function says otherwise.
 *   - Strings handed out (names, messages, file names) belong to the circuit
 *     and stay valid until ls_circuit_free.  Arrays handed out (sag and
 *     sensitivity entries) belong to the caller, who releases them with
 *     ls_free.
 *   - Numbers are SI units without prefix: volts, amperes, ohms, watts.  A
 *     value with no finite answer is NaN when undefined (0/0) and +-INFINITY
 *     when unbounded (no DC path, an ideal input).
 *   - Handles share no state of the library's own: many circuits may be
 *     built and solved side by side, also on different threads at once
 *     (tests/api/test_api_threads.c runs two, also under ThreadSanitizer).  One
 *     handle must not be used by two threads at once.
 *   - Unbounded versus undefined: +-INFINITY is a value with no bound (an
 *     ideal input's impedance, a node nothing ties to ground); NaN is a value
 *     with no definition (0/0, a solve that failed, a share of no sag).
 *   - Threads: a factorization or solve picks its own BLAS and OpenMP thread
 *     counts (one thread for small systems, where worker threads only spin)
 *     and puts the caller's back before it returns: OpenBLAS's thread count
 *     (openblas_get_num_threads) and the calling thread's OpenMP maximum and
 *     dynamic setting (omp_get_max_threads, omp_get_dynamic) are the same
 *     after every call as before it.  OpenBLAS's count is process-wide, so
 *     while a solve is running, BLAS calls the host makes from another thread
 *     run with the solve's count; the host's value is restored when the last
 *     concurrent solve returns.
 *   - Memory: a handle's size does not grow with use.  The text, syntax and
 *     binding of a quantity given to ls_circuit_eval or ls_circuit_influence are
 *     scratch for that call and freed before it returns, and so are the
 *     working arrays of every analysis; a ratio-rule text of
 *     ls_circuit_checks is kept once per port.  Only a call that adds
 *     diagnostics keeps what they point to, until ls_circuit_free.
 *
 * This header holds types and prototypes only; it needs <stdio.h> for FILE. */
#ifndef LOADSTACK_LOADSTACK_H
#define LOADSTACK_LOADSTACK_H

#include <stdio.h>

#ifdef __cplusplus
extern "C" {
#endif

/* LS_API marks the functions the shared library exports: it is built with
 * hidden visibility, so exactly the functions declared here are its ABI
 * (tests/house/exports.py compares the library's dynamic symbols with them). */
#if defined(__GNUC__) || defined(__clang__)
#define LS_API __attribute__((visibility("default")))
#else
#define LS_API
#endif

/* ---- status ----------------------------------------------------------------------------- */

typedef enum ls_status {
    LS_OK = 0,
    LS_WARNINGS = 1,          /* done; the diagnostics list holds warnings */
    LS_E_ARGUMENT = -1,       /* a NULL handle or pointer, an index out of range, a value not allowed */
    LS_E_NOMEM = -2,          /* out of memory; the handle stays valid but unusable for this call */
    LS_E_IO = -3,             /* the circuit file cannot be read (diagnostic says why) */
    LS_E_CIRCUIT = -4,        /* errors in the circuit text or a quantity (see the diagnostics) */
    LS_E_UNSOLVABLE = -5,     /* singular, or a topology error; the reason is a diagnostic */
    LS_E_NOT_FOUND = -6,      /* no node, part or port of that name */
    LS_E_NOT_SOLVED = -7      /* a result was asked for before a successful ls_circuit_solve */
} ls_status;

/* A short English description of a status ("out of memory"); static storage. */
LS_API const char *ls_status_str(ls_status st);

/* The library version, "MAJOR.MINOR.PATCH"; static storage. */
LS_API const char *ls_version(void);

/* ---- circuits and diagnostics ----------------------------------------------------------------- */

/* A parsed, elaborated circuit with its diagnostics and, once solved, its
 * operating point.  Opaque; created by ls_circuit_parse_file/_string. */
typedef struct ls_circuit ls_circuit;

typedef enum ls_diag_level { LS_LEVEL_NOTE, LS_LEVEL_WARNING, LS_LEVEL_ERROR } ls_diag_level;

/* One diagnostic.  The strings belong to the circuit. */
typedef struct ls_diagnostic {
    ls_diag_level level;
    const char *file;         /* the file as named, "<string>"-like names for text; NULL: no place */
    int line, column;         /* 1-based; column in characters; 0 when file is NULL */
    const char *code;         /* a warning code ("ill-conditioned", ...), or NULL */
    const char *message;      /* one sentence, no location prefix */
} ls_diagnostic;

/* Parse and elaborate the circuit file at `path`.
 *   path   in: the .stack file; includes resolve relative to it.
 *   sets   in: nsets strings "NAME=VALUE" overriding top-level lets (as
 *          --set does); may be NULL when nsets is 0.  Copied; the caller keeps them.
 *   out    out: the new circuit, even on LS_E_CIRCUIT or LS_E_IO, so the caller
 *          can walk the diagnostics; NULL on LS_E_NOMEM and LS_E_ARGUMENT.  The
 *          caller frees it with ls_circuit_free.  A malformed setting (no '=')
 *          is a diagnostic and LS_E_CIRCUIT.
 * The program reads circuits through the same code, so the diagnostics are
 * the program's: a circuit with syntax errors is elaborated too, and its name
 * and unit errors follow the syntax errors in the list.  A file that cannot
 * be read, or that is larger than the language's limit (docs/limits.md), is
 * LS_E_IO.
 * Returns LS_OK, LS_WARNINGS, LS_E_IO, LS_E_CIRCUIT, LS_E_ARGUMENT or LS_E_NOMEM. */
LS_API ls_status ls_circuit_parse_file(const char *path, const char *const *sets, int nsets, ls_circuit **out);

/* The same for circuit text held in memory.
 *   name   in: the name used in diagnostics and as the base of relative
 *          includes (the current directory when it has no directory part).
 *   text   in: len bytes of circuit text (need not be NUL-terminated); copied. */
LS_API ls_status ls_circuit_parse_string(const char *name, const char *text, size_t len, const char *const *sets,
                                  int nsets, ls_circuit **out);

/* Free the circuit and everything it handed out except ls_free arrays; sets
 * *c to NULL.  Accepts NULL and a pointer to NULL. */
LS_API void ls_circuit_free(ls_circuit **c);

/* Number of diagnostics collected so far (parsing, solving and analyses add to
 * one list, in the order they were found).  0 for NULL. */
LS_API int ls_circuit_diag_count(const ls_circuit *c);

/* Diagnostic i (0 <= i < ls_circuit_diag_count) into *out.  LS_E_ARGUMENT when out of range. */
LS_API ls_status ls_circuit_diag(const ls_circuit *c, int i, ls_diagnostic *out);

/* Print every diagnostic to f in the program's form: `file:line:col: error: message`,
 * then the source line and a caret. */
LS_API void ls_circuit_print_diags(const ls_circuit *c, FILE *f);

/* The circuit's title, or "" when it has none. */
LS_API const char *ls_circuit_title(const ls_circuit *c);

/* ---- solving ------------------------------------------------------------------------------- */

typedef enum ls_backend_choice {
    LS_BACKEND_AUTO = 0,      /* dense LU for small systems, sparse above */
    LS_BACKEND_DENSE,         /* LAPACK dense LU */
    LS_BACKEND_SPARSE,        /* SuiteSparse: Cholesky when symmetric positive definite, else LU */
    LS_BACKEND_ITERATIVE      /* AMG-preconditioned CG (hypre), only in a library built with
                                 -Dmpi=enabled (elsewhere LS_E_ARGUMENT); a circuit whose
                                 resistances between nodes are not symmetric positive definite
                                 is LS_E_UNSOLVABLE with a diagnostic (docs/iterative.md) */
} ls_backend_choice;

typedef struct ls_solve_options {
    ls_backend_choice backend;
    double min_ratio;         /* minimum zin/zout for a port's verdict; <= 0: the circuit's rule, else 10 */
    double derate;            /* power-rating multiplier; <= 0 means 1 */
} ls_solve_options;

/* Solve the DC operating point.
 *   opt    in: options, or NULL for the defaults (all zero).
 * Returns LS_OK, LS_WARNINGS (e.g. ill-conditioned; see the diagnostics),
 * LS_E_UNSOLVABLE, LS_E_CIRCUIT (the circuit had parse errors) or LS_E_NOMEM.
 * Calling it again re-solves from scratch with the new options. */
LS_API ls_status ls_circuit_solve(ls_circuit *c, const ls_solve_options *opt);

/* Facts about the last solve. */
typedef struct ls_solve_info {
    const char *method;       /* "dense-lu", "dense-cholesky", "sparse-lu", "sparse-cholesky" or "iterative-amg" */
    int unknowns;             /* size of the modified-nodal system */
    double rcond;             /* reciprocal condition estimate */
    double residual;          /* relative residual after refinement */
    int iterations;           /* linear solves of the operating-point iteration: 1 for a
                                 linear circuit, more when diodes, thermistors or op-amp
                                 limits were iterated (the reports' "iterations") */
    int refinement_steps;     /* extra-precise iterative-refinement steps of the last of
                                 them (the reports' "refinement_steps"; docs/accuracy.md) */
} ls_solve_info;

LS_API ls_status ls_circuit_solve_info(const ls_circuit *c, ls_solve_info *out);

/* A bound on the absolute error of a result of the last solve (see
 * docs/accuracy.md): of node `name`'s voltage (V) or of part `name`'s
 * current (A), from the extra-precise residual and the rounding of the
 * parts' own values.  *bound is +INFINITY when the equations are too
 * ill-conditioned for any bound to hold, NaN for a part whose current is not
 * a linear form of the unknowns (a pot, an adc).  A name that is both a node
 * and a part means the node.  Returns LS_OK, LS_E_NOT_FOUND, LS_E_NOT_SOLVED,
 * LS_E_ARGUMENT or LS_E_NOMEM. */
LS_API ls_status ls_circuit_error_bound(ls_circuit *c, const char *name, double *bound);

/* ---- nodes ------------------------------------------------------------------------------------ */

/* Number of nodes, ground included (node 0).  Available after a successful parse. */
LS_API int ls_circuit_node_count(const ls_circuit *c);

/* Name of node i as reported ("vin", "d1.x"), or NULL when out of range. */
LS_API const char *ls_circuit_node_name(const ls_circuit *c, int i);

/* Index of the node called name (a block pin resolves to its outer node), or -1. */
LS_API int ls_circuit_node_index(const ls_circuit *c, const char *name);

/* Voltage of node `name` against ground, volts.  LS_E_NOT_FOUND, LS_E_NOT_SOLVED. */
LS_API ls_status ls_circuit_voltage(const ls_circuit *c, const char *name, double *volts);

/* ---- parts --------------------------------------------------------------------------------- */

/* One part's operating point.  Strings belong to the circuit. */
typedef struct ls_part_info {
    const char *name;         /* hierarchical: "d1.upper" */
    const char *kind;         /* "resistor", "voltage", "opamp", "port", ... */
    double value;             /* main value (ohm, V, A, gain ...); NaN when the kind has none */
    double current;           /* A, FROM -> TO; an op-amp's output current */
    double voltage;           /* V: the drop for passive parts, the rise for sources */
    double power;             /* W absorbed; negative when the part delivers */
    const char *limited;      /* op-amps: "none", "rail-high", "rail-low" or "current" (the
                                 output limit in force); NULL for other kinds */
} ls_part_info;

/* Number of parts (ports included).  Available after a successful parse. */
LS_API int ls_circuit_part_count(const ls_circuit *c);

/* Index of the part called name, or -1. */
LS_API int ls_circuit_part_index(const ls_circuit *c, const char *name);

/* Part i (0 <= i < ls_circuit_part_count) into *out.  Before a solve the name,
 * kind and value are filled and the results are NaN; the return is then
 * LS_E_NOT_SOLVED. */
LS_API ls_status ls_circuit_part(ls_circuit *c, int i, ls_part_info *out);

/* ---- ports: the loading report --------------------------------------------------------------------- */

typedef enum ls_port_verdict {
    LS_VERDICT_OK,            /* |sag| <= budget; without a budget, ratio >= the minimum */
    LS_VERDICT_MARGINAL,      /* |sag| <= twice the budget; ratio >= half the minimum */
    LS_VERDICT_LOADING        /* beyond, or undefined */
} ls_port_verdict;

/* The loading report of one port (see "Ports" in the language).  With
 * current_mode, open/loaded/sag are currents (A) and ratio is zout/zin. */
typedef struct ls_port_info {
    const char *name;
    const char *from, *to;    /* the DRIVER and LOAD node names */
    int current_mode;         /* 1 for mode=current */
    double open;              /* V(DRIVER) with this port opened */
    double loaded;            /* V(DRIVER) with everything connected */
    double sag, sag_rel;      /* open - loaded (V), and as a fraction of open */
    double zout, zin;         /* ohm, seen at DRIVER and at LOAD with the port open */
    double ratio;             /* zin / zout */
    double current;           /* A, DRIVER -> LOAD */
    ls_port_verdict verdict;
    const char *note;         /* why a field is NaN, or NULL */
    double budget;            /* largest |sag| allowed (V, or A in current mode): budget=, rule sag, or half
                                 an LSB of an adc on LOAD; NaN when none */
    int by_budget;            /* 1 when the budget decided the verdict, 0 the ratio rule */
    int load_held;            /* 1 when the load side floats once opened and was held at its loaded voltage */
} ls_port_info;

/* Number of ports. */
LS_API int ls_circuit_port_count(const ls_circuit *c);

/* Port i (0 <= i < ls_circuit_port_count, in the order of the circuit) into
 * *out.  Computed on first request (one low-rank solve), then cached. */
LS_API ls_status ls_circuit_port(ls_circuit *c, int i, ls_port_info *out);

/* The port called name into *out. */
LS_API ls_status ls_circuit_port_by_name(ls_circuit *c, const char *name, ls_port_info *out);

/* ---- quantities and checks ------------------------------------------------------------------ */

/* Value of a quantity written as in an `expect`: "adc_in", "r_top.power",
 * "p_adc.ratio", "u1_out - ref".  Errors in the text become diagnostics
 * (LS_E_CIRCUIT).  *value may be NaN or infinite (see Conventions). */
LS_API ls_status ls_circuit_eval(ls_circuit *c, const char *quantity, double *value);

/* One evaluated expect (or ratio rule row).  Strings belong to the circuit. */
typedef struct ls_check_info {
    const char *text;         /* "expect adc_in < 3.3 V", or "rule ratio >= 10 (port p1)" */
    const char *file;         /* where it was written */
    int line;
    const char *instance;     /* the block instance it was checked in, or NULL */
    double value;             /* the left side */
    double lo, hi;            /* the accepted range (-inf/+inf when open) */
    int pass;                 /* 1 passed, 0 failed */
    const char *reason;       /* why it failed when the value is undefined, or NULL */
} ls_check_info;

/* Evaluate every expect of the circuit and, with with_rule, the ratio rule on
 * every port (as `loadstack check` does when the circuit has a rule).
 *   checks out: array of *n entries, the caller frees it with ls_free.
 *   failed out (may be NULL): how many failed.
 * Returns LS_OK, LS_E_NOT_SOLVED or LS_E_NOMEM. */
LS_API ls_status ls_circuit_checks(ls_circuit *c, int with_rule, ls_check_info **checks, int *n, int *failed);

/* ---- analyses ----------------------------------------------------------------------------- */

/* Sag by connection (`loadstack sag`): with every port opened (each stage
 * alone; the stage after a port still sees its driver's voltage) the node sits
 * at `alone`; each port's share is its part of alone - voltage, I_p times the
 * transfer resistance Z(node, driver) - Z(node, load) in that network, or,
 * where a limit or junction changes state, its Shapley value over exact solves.
 * Parts that set the node (a divider's legs) are never ranked: only ports are. */
typedef struct ls_sag_share {
    const char *port;         /* port name */
    double current;           /* A, driver -> load */
    double transfer;          /* ohm; NaN when undefined */
    double share;             /* V of the sag; NaN when undefined */
    double share_rel;         /* share / sag; NaN when the sag is zero */
} ls_sag_share;

typedef struct ls_sag_info {
    double voltage;           /* V, everything connected */
    double alone;             /* V, every port opened; NaN when undefined */
    double sag;               /* alone - voltage */
    double interaction;       /* sag - sum of the shares (the nonlinear remainder) */
    int shapley;              /* 1: the shares are Shapley values over exact solves; 0: substitution */
    const char *culprit;      /* the port with the largest share in the sag's direction, or NULL */
} ls_sag_info;

/* Sag by connection at node `node`.
 *   info out: the summary.
 *   shares out: *n entries, one per port, largest |share| first; the caller
 *          frees the array with ls_free.
 * Returns LS_OK, LS_E_NOT_FOUND, LS_E_NOT_SOLVED or LS_E_NOMEM. */
LS_API ls_status ls_circuit_sag_ports(ls_circuit *c, const char *node, ls_sag_info *info, ls_sag_share **shares, int *n);

/* The what-if table (`loadstack sag --what-if`): every part and port removed
 * in turn (a port opened, a resistor opened, a source set to zero) and the
 * node's voltage without it recorded; a row whose linear estimate crosses a
 * limit is re-solved exactly with every limit active. */
typedef struct ls_sag_entry {
    const char *name;         /* part or port name */
    int is_port;
    double without;           /* V at the node without it; NaN when the circuit is then unsolvable */
    double delta;             /* without - voltage; NaN likewise */
    int beyond_limit;         /* the linear estimate crossed a limit: without is the exact re-solve, or
                                 (a circuit with no limit to stop it) an estimate beyond every voltage of
                                 the circuit, not a physical value */
} ls_sag_entry;

/* The what-if table at node `node`.
 *   voltage out (may be NULL): the node's loaded voltage, V.
 *   entries out: *n entries sorted by |delta|, largest first (ties in circuit
 *          order), unsolvable ones last; the caller frees the array with ls_free.
 * Returns LS_OK, LS_E_NOT_FOUND, LS_E_NOT_SOLVED or LS_E_NOMEM. */
LS_API ls_status ls_circuit_sag(ls_circuit *c, const char *node, double *voltage, ls_sag_entry **entries, int *n);

/* The Thevenin / Norton equivalent seen at a node against ground. */
typedef struct ls_thevenin_info {
    double vth;               /* V, open-circuit voltage */
    double rth;               /* ohm; +inf when nothing ties the node to ground */
    double norton;            /* A, short-circuit current node -> ground (see ls_circuit_thevenin) */
} ls_thevenin_info;

/* The equivalent at `node` (`loadstack thevenin FILE NODE`): vth and rth from
 * the solved system (rth small-signal at the operating point); norton is
 * vth / rth in a linear circuit, and where a part is nonlinear the current
 * into a near-short solved with every limit active (so an output limit caps
 * it).  Returns LS_OK, LS_E_NOT_FOUND, LS_E_NOT_SOLVED, LS_E_UNSOLVABLE or
 * LS_E_NOMEM. */
LS_API ls_status ls_circuit_thevenin(ls_circuit *c, const char *node, ls_thevenin_info *out);

/* One side of a port opened, seen against ground. */
typedef struct ls_thevenin_side {
    const char *node;         /* the DRIVER or LOAD node */
    double vth;               /* V at the node with the port opened (solved exactly) */
    double rth;               /* ohm: the port's zout (driver side) or zin (load side) */
    double norton;            /* A, short-circuit current (driver side); NaN on the load side */
    const char *why;          /* "unsolved" when a re-solve failed (its field NaN), else NULL; vth is also
                                 NaN, with why NULL, when nothing sets the node once the port is open */
} ls_thevenin_side;

/* The equivalent of each side of `port` opened (`loadstack thevenin FILE
 * PORT`).  Returns LS_OK, LS_E_NOT_FOUND (no port of that name),
 * LS_E_NOT_SOLVED or LS_E_NOMEM. */
LS_API ls_status ls_circuit_thevenin_port(ls_circuit *c, const char *port, ls_thevenin_side *driver, ls_thevenin_side *load);

/* How much one part's main value moves a quantity (adjoint method). */
typedef struct ls_influence_entry {
    const char *part;
    double part_value;            /* the part's main value */
    double per_unit;              /* dQ/dp, in Q's unit per the part's unit */
    double percent_per_percent;   /* (p/Q) dQ/dp: % change of Q per 1 % of p; NaN when Q = 0 */
} ls_influence_entry;

/* The influence of every part with a main value on `quantity` (as in
 * ls_circuit_eval).
 *   value out (may be NULL): the quantity's value.
 *   entries out: *n entries sorted by |percent_per_percent|, largest first; caller
 *          frees with ls_free.
 * Returns LS_OK, LS_E_CIRCUIT (bad quantity, see the diagnostics),
 * LS_E_NOT_SOLVED or LS_E_NOMEM. */
LS_API ls_status ls_circuit_influence(ls_circuit *c, const char *quantity, double *value, ls_influence_entry **entries,
                               int *n);

/* QUANTITY (as in ls_circuit_eval) as an exact formula of the parts' values,
 * as `loadstack formula` prints it (see docs/formula.md).
 *   symbols in (may be NULL): "a,b,...": only these parts' values and top-level
 *          lets stay symbols; NULL: every part's main value and the lets used in values.
 *   ideal  in: nonzero for the limit as every finite op-amp gain goes to infinity.
 *   formula out: the formula in the language's expression syntax; the caller
 *          frees it with ls_free.
 *   value  out (may be NULL): the formula at the circuit's numbers.
 * The formula is checked against the solver's value every time.
 * Returns LS_OK, LS_E_CIRCUIT (a bad quantity or symbol, a quantity with no
 * finite formula, or a circuit past the size limits: see the diagnostics),
 * LS_E_UNSOLVABLE (the self-check failed), LS_E_NOT_SOLVED, LS_E_ARGUMENT or
 * LS_E_NOMEM. */
LS_API ls_status ls_circuit_formula(ls_circuit *c, const char *quantity, const char *symbols, int ideal, char **formula,
                             double *value);

/* Change part `name`'s main value (ohm for a resistor, V for a voltage
 * source, ...) and re-solve with the same structure; port reports are
 * recomputed on the next request.  Returns as ls_circuit_solve, or
 * LS_E_NOT_FOUND, LS_E_ARGUMENT (the part has no main value, or the value is
 * not allowed, e.g. a resistance <= 0). */
LS_API ls_status ls_circuit_set_value(ls_circuit *c, const char *part, double value);

/* ---- tolerance ------------------------------------------------------------------------------ */

typedef enum ls_tol_law {
    LS_TOL_UNIFORM = 0,       /* each part uniform within +-tol */
    LS_TOL_NORMAL             /* each part normal with tol = 3 sigma */
} ls_tol_law;

typedef struct ls_tol_options {
    long trials;              /* Monte Carlo trials, 1 .. 10 000 000; <= 0 means 10 000 (as the program) */
    unsigned long long seed;  /* the same seed gives the same numbers as `loadstack tol --seed` */
    ls_tol_law law;
    int threads;              /* <= 0: LOADSTACK_THREADS, else the online processors (at most 16);
                                 the numbers do not depend on it */
} ls_tol_options;

/* The tolerance study of one quantity (`loadstack tol`).  Every part with a
 * main value and tol > 0 varies. */
typedef struct ls_tol_info {
    double nominal;           /* the quantity at the nominal values */
    double wc_min, wc_max;    /* worst case; NaN when some corner did not solve */
    int corners;              /* 1: every corner was solved; 0: linear from the sensitivities */
    double rss;               /* with corners == 0: root-sum-square half-width; else NaN */
    int varying;              /* how many parts vary */
    long trials;              /* Monte Carlo trials run; 0 when nothing varies (the statistics are then the
                                 nominal value and the yield whether the nominal design meets the expects) */
    long finite;              /* trials that solved with a finite value */
    double mean, std, min, max;   /* of the finite trials (std with n - 1); NaN when none */
    double pct[5];            /* percentiles 0.1, 1, 50, 99, 99.9 (linear between order statistics) */
    double yield;             /* fraction of trials meeting every expect on the quantity; NaN when it has none */
} ls_tol_info;

/* Run the tolerance study of `quantity` (as in ls_circuit_eval).
 *   opt    in: options, or NULL for the defaults (10 000 trials, seed 0, uniform).
 *   out    out: the summary.
 *   values out (may be NULL): the quantity in each trial, out->trials of them
 *          (NaN where a trial did not solve); the caller frees it with ls_free.
 * The parts are back at their values and the circuit solved on return.
 * Returns LS_OK, LS_WARNINGS (nothing varies, unsolved corners or trials: see
 * the diagnostics), LS_E_CIRCUIT (bad quantity), LS_E_ARGUMENT (trials out of
 * range), LS_E_NOT_SOLVED, LS_E_UNSOLVABLE or LS_E_NOMEM. */
LS_API ls_status ls_circuit_tol(ls_circuit *c, const char *quantity, const ls_tol_options *opt, ls_tol_info *out,
                         double **values);
/* (values is NULL when no trial was run.) */

/* ---- standard values for the free parts ------------------------------------------------------ */

typedef enum ls_fit_aim {
    LS_FIT_AIM_MARGIN = 0,    /* the largest smallest margin of an expect, rule or port to its limit */
    LS_FIT_AIM_YIELD,         /* the largest Monte Carlo yield (the parts' tol=, trials as ls_circuit_tol) */
    LS_FIT_AIM_CURRENT        /* the least current from the supplies */
} ls_fit_aim;

typedef struct ls_fit_options {
    const char *series;       /* series of a free part without snap=: "E6" .. "E192"; NULL means "E24" */
    ls_fit_aim aim;
    int top;                  /* candidates wanted, best first; <= 0 means 5 */
    long trials;              /* Monte Carlo trials per finalist for the yield; <= 0 means 2000 */
    unsigned long long seed;  /* as ls_tol_options */
    ls_tol_law law;
} ls_fit_options;

/* One candidate of `loadstack fit` (docs/fit.md). */
typedef struct ls_fit_candidate {
    int meets;                /* 1: every expect, rule, port verdict and limit holds */
    int failed;               /* checks it fails */
    double margin;            /* smallest margin of the expects, rules and ports (+inf with none) */
    double yield;             /* fraction of feasible trials; NaN when not computed */
    double current;           /* A drawn from the supplies; NaN when it did not solve */
} ls_fit_candidate;

/* Choose standard values (IEC 60063) for the parts marked free=LO..HI.
 *   opt        in: options, or NULL for the defaults.
 *   cands      out: *ncands candidates, best first (the first is the chosen
 *              one when its meets is 1, else the closest); the caller frees
 *              the array with ls_free.
 *   values     out: *ncands x *nfree values, candidate by candidate, in the
 *              order of the free parts in the circuit; the caller frees it with ls_free.
 *   names      out (may be NULL): *nfree part names, valid until ls_circuit_free;
 *              the caller frees the array (not the names) with ls_free.
 * The parts are back at their written values and the circuit solved on
 * return.  Returns LS_OK (whether or not a candidate meets everything: see
 * cands[0].meets), LS_E_ARGUMENT (a bad option, no free part, or a free
 * range without a series value), LS_E_NOT_SOLVED, LS_E_UNSOLVABLE or LS_E_NOMEM. */
LS_API ls_status ls_circuit_fit(ls_circuit *c, const ls_fit_options *opt, ls_fit_candidate **cands, int *ncands,
                         double **values, int *nfree, const char ***names);

/* ---- sweeps --------------------------------------------------------------------------------- */

/* Sweep the top-level let `let` (`loadstack sweep`): the circuit is parsed
 * once more from the text it was read from, with the settings it was read
 * with, following `let`; each point sets it and recomputes only the values it
 * reaches (as NAME=VALUE would make them), is solved with the options of its
 * last ls_circuit_solve (in chains of 8 points continuing from the last
 * solution), and every quantity evaluated.  A let that picks a word, or a
 * value refused at a point, reads the text again for that sweep or point.
 *   steps  in: points from `from` to `to`, both included, 2 .. 100 000.
 *   log_scale in: nonzero spaces the points evenly on a log scale (from, to > 0).
 *   quantities in: nq quantity texts (as in ls_circuit_eval), 1 .. 64.
 *   x      out: steps values of the let; caller frees with ls_free.
 *   y      out: steps x nq values, row-major (point i, quantity k at
 *          y[i*nq + k]); NaN where the point did not solve or the quantity is
 *          undefined there; caller frees with ls_free.
 *   solved out (may be NULL): how many points solved.
 * The circuit itself is not changed.  Returns LS_OK, LS_E_ARGUMENT,
 * LS_E_CIRCUIT (a quantity or the let is not valid at the first point: see
 * the diagnostics), LS_E_NOT_SOLVED or LS_E_NOMEM. */
LS_API ls_status ls_circuit_sweep(ls_circuit *c, const char *let, double from, double to, int steps, int log_scale,
                           const char *const *quantities, int nq, double **x, double **y, int *solved);

/* Release an array returned by this library (NULL is fine). */
LS_API void ls_free(void *p);

#ifdef __cplusplus
}
#endif

#endif
