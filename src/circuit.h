/* circuit.h — the one loaded circuit, shared by the public library (api.c)
 * and the program (src/cli/, whose ls_session is this struct): the one place
 * that reads, parses, elaborates and solves a circuit.  Internal: nothing
 * here is exported from the shared library (tests/house/exports.py). */
#ifndef LS_CIRCUIT_H
#define LS_CIRCUIT_H

#include <stdbool.h>
#include <stddef.h>

#include "loadstack/loadstack.h"
#include "analysis/analysis.h"
#include "netlist/letdeps.h"

struct ls_cli;

/* A circuit read once and elaborated once, with its last operating point.
 * The library hands it out as the opaque ls_circuit; the program calls it
 * ls_session (cli.h) and reads its netlist, operating point and diagnostics
 * directly. */
struct ls_circuit {
    ls_arena arena;            /* names, the text of every file, diagnostics */
    ls_diags diags;
    ls_arena syntax;           /* the syntax tree's structures (freed after elaboration unless kept) */
    ls_program prog;           /* empty once the tree is freed */
    ls_netlist nl;
    bool elaborated;           /* nl holds a circuit without errors */
    ls_op op;
    bool have_op;              /* op holds allocations (freed on re-solve) */
    bool solved;               /* op holds a valid operating point */
    const char *input_path;    /* the file the reports name; NULL for standard input */
    /* what it was read from, kept for the library's sweeps (which read it
     * again per point): the text is the diagnostics' copy of file 0 */
    const char *source_name;
    const char *source;        /* source_len bytes; NULL when unread */
    size_t source_len;
    const char **sets;         /* the settings it was read with, nsets of them, in the arena */
    int nsets;
    /* the library's */
    int *ports;                /* part index of each port, nports of them */
    int nports;
    ls_solve_options solve_opt;   /* of the last ls_circuit_solve */
    ls_options solve_options;     /* the same, as the analyses take them */
    const char **rule_text;    /* per port (nports): the last ratio-rule text handed out, in the arena */
    /* the program's options when the program loaded it (cli.h); NULL in the
     * library, and never read here */
    struct ls_cli *cli;
};

/* How ls_circuit_load reads a circuit. */
typedef struct ls_load {
    const char *name;          /* the file to read; with text, its name in diagnostics (includes resolve
                                  from its directory, or the current one) */
    const char *text;          /* the circuit held in memory (len bytes), or NULL: read the file `name` */
    size_t len;
    const char *input_path;    /* kept as c->input_path (NULL: standard input) */
    const char *const *sets;   /* NAME=VALUE settings of top-level lets, nsets of them (copied) */
    int nsets;
    bool keep_syntax;          /* keep the syntax tree after elaboration (formula reads values from it) */
    ls_letdeps *follow;        /* record what follow->let reaches (letdeps.h), or NULL */
    /* Once the files are read, before the settings and the elaboration:
     * nonzero stops the load (the program refuses to write over an included
     * file).  May be NULL. */
    int (*after_read)(ls_circuit *c, void *ctx);
    /* After each phase ("parse", "elaborate"): the program's timings.  May be NULL. */
    void (*phase)(void *ctx, const char *done);
    void *ctx;
} ls_load;

/* What became of a load; the library and the program each map it to their
 * own status or exit code. */
typedef enum ls_loaded {
    LS_LOADED,            /* elaborated without errors (warnings may be in the diagnostics) */
    LS_LOAD_UNREADABLE,   /* the text never became a file of the diagnostics (unreadable, too large) */
    LS_LOAD_STOPPED,      /* after_read refused */
    LS_LOAD_ERRORS,       /* errors in the text, a setting or the elaboration (diagnostics) */
    LS_LOAD_NOMEM,        /* memory ran out: no property of the circuit */
} ls_loaded;

/* An empty circuit in storage c (the program's is on its stack, the
 * library's from calloc); free its contents with ls_circuit_release. */
void ls_circuit_init(ls_circuit *c);
/* Read (or take) the text, parse it, apply the settings and elaborate into
 * c, an ls_circuit_init'ed circuit; every diagnostic stays in c->diags.  A
 * circuit with syntax errors is elaborated too (the broken statements left
 * out), so one run reports its name and unit errors as well. */
ls_loaded ls_circuit_load(ls_circuit *c, const ls_load *how);
/* Solve the operating point of a loaded circuit with options o (any earlier
 * operating point freed first).  Returns ls_op_solve's outcome (LS_DONE:
 * c->solved is set). */
ls_outcome ls_circuit_solve_op(ls_circuit *c, const ls_options *o);
/* Parse and bind a quantity written as in an `expect` (following deps when
 * not NULL); NULL after an error in the diagnostics (out of memory included). */
ls_q *ls_circuit_quantity(ls_circuit *c, const char *text, ls_letdeps *deps);
/* Did anything of the circuit run out of memory (its arenas, a diagnostic
 * that could not be kept, the last solve)?  Then a failure is no property of
 * the circuit. */
bool ls_circuit_nomem(const ls_circuit *c);
/* Free what c holds (not c itself). */
void ls_circuit_release(ls_circuit *c);

#endif
