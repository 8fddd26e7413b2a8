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

/* Every part's analysis state (op-amp limits, junction linearization points),
 * saved so that a variant's solve can be undone: a variant shares the parts
 * of the circuit it comes from. */
typedef struct ls_runs {
    ls_part_run *saved;      /* per part; meaningful where the part has a run */
    int n;
} ls_runs;

/* Save every part's state of nl into r (allocated; ls_runs_free frees).
 * 0 ok, -1 out of memory. */
int ls_runs_save(const ls_netlist *nl, ls_runs *r);
/* Put the saved states back. */
void ls_runs_restore(const ls_netlist *nl, const ls_runs *r);
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
/* Solve the variant: from the circuit's first linearization points with
 * every limit free (cold), or, with linear_only, one linear solve at the
 * parts' present states (the system linearized at base's solution).  The
 * parts' states are left as the variant's solve leaves them: restore them
 * with ls_runs_restore before base is used again.  Returns an exit code
 * (LS_EXIT_OK, or LS_EXIT_UNSOLVABLE with the reason in v->diags). */
int ls_variant_solve(ls_variant *v, const ls_op *base, bool linear_only);
void ls_variant_free(ls_variant *v);

/* The limits in force in the parts' present states, and the junctions whose
 * state differs from the saved one (conductance changed more than tenfold),
 * as "u1 current, d1 on" into buf; "none" when there is none.  Returns the
 * number of limits and changes found. */
int ls_limits_in_force(const ls_netlist *nl, const ls_runs *saved, char *buf, size_t n);
/* Does any op-amp limit or junction state of the present states differ from
 * the saved ones?  *what (may be NULL) gets the first such part's index. */
bool ls_states_differ(const ls_netlist *nl, const ls_runs *saved, int *what);

#endif
