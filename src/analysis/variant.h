/* variant.h — exact solves of a variant of a solved circuit: some parts
 * opened (ports disconnected, parts removed), some nodes tied to a fixed
 * voltage through a conductance (a load resistor, a node held where it was).
 * Every limit and junction of the circuit stays active, so a variant answers
 * "what would really happen" where a linear estimate cannot.  Used by sag
 * (the voltage with ports opened, the what-if table's re-solves) and thevenin
 * (--load, --meter and the short-circuit current re-solved). */
#ifndef LS_VARIANT_H
#define LS_VARIANT_H

#include "analysis/analysis.h"

/* A solved operating point's run (its parts' states and values, run.h)
 * saved, so a study can go back to it and compare a variant's states with it. */
typedef struct ls_runs {
    ls_run run;
} ls_runs;

/* Save op's run into r (allocated; ls_runs_free frees).  0 ok, -1 out of
 * memory. */
int ls_runs_save(const ls_op *op, ls_runs *r);
/* Put the saved run back into op. */
void ls_runs_restore(ls_op *op, const ls_runs *r);
void ls_runs_free(ls_runs *r);

typedef struct ls_variant {
    ls_netlist nl;           /* the base netlist's record, diagnostics diverted to diags */
    ls_arena arena;
    ls_diags diags;          /* the variant's own diagnostics: never shown */
    ls_op op;                /* the variant's solution, valid after ls_variant_solve returned 0 */
    bool have_op;
    unsigned char *opened;   /* per part: LS_OPENED (a port opened, any other part removed),
                                LS_BUFFERED (a port feeding its load the driver's voltage
                                without drawing on the driver), or LS_KEPT */
    ls_tie *ties;            /* per node */
    unsigned char *floating; /* per node: no DC path to ground once the opened parts are gone */
} ls_variant;

/* Set up v for the circuit of base (nothing opened, nothing tied).
 * 0 ok, -1 out of memory (v is then freed). */
int ls_variant_init(ls_variant *v, const ls_op *base);
/* Find the nodes that the opened parts leave without a DC path to ground
 * (into v->floating) and hold each one at its voltage in base through a tie
 * of base's pin conductance, unless it is tied already: an opened port's load
 * side that nothing else sets (an op-amp input) stays where it was.  Returns
 * the number of floating nodes, or -1 out of memory. */
int ls_variant_hold_floating(ls_variant *v, const ls_op *base);
/* Solve the variant with base's part values: from the circuit's first
 * linearization points with every limit free (cold), or, with linear_only,
 * one linear solve at base's states (the system linearized at base's
 * solution).  The states of the solve are the variant's own (v->op.run);
 * base's are not touched.  Returns ls_op_solve's outcome (LS_DONE, or
 * LS_UNSOLVABLE / LS_NO_MEMORY with the reason in v->diags). */
ls_outcome ls_variant_solve(ls_variant *v, const ls_op *base, bool linear_only);
void ls_variant_free(ls_variant *v);

/* The limits in force in run now (a variant's), and the junctions whose
 * state differs from the saved one (conductance changed more than tenfold),
 * as "u1 current, d1 on" into buf; "none" when there is none.  Returns the
 * number of limits and changes found. */
int ls_limits_in_force(const ls_run *now, const ls_runs *saved, char *buf, size_t n);
/* Does any op-amp limit or junction state of run now differ from the saved
 * ones?  *what (may be NULL) gets the first such part's index. */
bool ls_states_differ(const ls_run *now, const ls_runs *saved, int *what);

#endif
