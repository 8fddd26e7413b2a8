/* elab.h — syntax tree to flat netlist: blocks expanded, names resolved,
 * units checked, values evaluated. */
#ifndef LS_ELAB_H
#define LS_ELAB_H

#include "lang/parser.h"
#include "netlist/netlist.h"

#define LS_MAX_BLOCK_DEPTH 32
#define LS_MAX_INSTANCES 1000000
#define LS_MAX_NAME_BYTES 1024
/* Nodes and parts after expansion: the ceiling of the index width.  The
 * matrix is held with 32-bit (int) indices and entry counts, as CHOLMOD's,
 * KLU's and hypre's int interfaces take it; a resistor stamps 4 entries and
 * the largest parts some tens, so 5e7 parts stay under 2^31 entries (and
 * ls_triplets_to_csc refuses more rather than wrap around).  Below the ceiling the memory the process may
 * hold is the limit: see LS_PART_MIN_BYTES. */
#define LS_MAX_NODES 50000000
#define LS_MAX_PARTS 50000000
/* Bytes one part takes at the least once elaborated: its row of the part
 * table (sizeof(ls_part), about 150) and its name and hash slot.  A floor,
 * so that no circuit that could be held is refused: the front end of the
 * 10^7-node mat peaked at 490 bytes a part (docs/performance.md).  A circuit whose parts
 * alone would take more than the process may hold (ls_memory_limit_bytes) is
 * refused before anything is expanded. */
#define LS_PART_MIN_BYTES 200
#define LS_MAX_VIA_CHAIN 32       /* via= links followed from one source */

/* Elaborate prog into nl (which must be zeroed; its arena and diags are taken
 * from d).  Returns the number of errors. */
int ls_elaborate(const ls_program *prog, ls_diags *d, ls_setting *sets, int nsets, ls_netlist *nl);

struct ls_letdeps;

/* ls_elaborate, also recording in deps (when not NULL; see letdeps.h) what
 * the let deps->let reaches, so that a sweep of it need not elaborate again. */
int ls_elaborate_following(const ls_program *prog, ls_diags *d, ls_setting *sets, int nsets, ls_netlist *nl,
                           struct ls_letdeps *deps);

/* Bind an expression of node voltages and properties at the top level (for a
 * QUANTITY on the command line).  NULL after reporting an error. */
ls_q *ls_bind_quantity(ls_netlist *nl, const ls_expr *e);
/* ls_bind_quantity, recording in deps (when not NULL) the constants that
 * come from lets the followed let reaches. */
ls_q *ls_bind_quantity_following(ls_netlist *nl, const ls_expr *e, struct ls_letdeps *deps);

/* Would the elaborator accept v for a value with the checks flags (OPTF_*)? */
bool ls_elab_value_ok(unsigned flags, double v);

/* Dimensions of a property of a part. */
ls_dims ls_prop_dims(const ls_part *p, ls_prop prop);
const char *ls_prop_name(ls_prop p);
/* Does part p have property prop (an adc its code, a port its budget, ...)? */
bool ls_prop_applies(const ls_part *p, ls_prop prop);
/* The adc whose input is port's load node (the one with the smallest LSB), or -1. */
int ls_port_adc(const ls_netlist *nl, int port);

/* How ls_eval_const gives a name its value: true with *v (and its unit in
 * *d, LS_FREE when it has none), or false after reporting why at e->loc. */
typedef bool (*ls_name_value)(void *ctx, const ls_expr *e, double *v, ls_dims *d);
/* The one evaluator of a constant expression (numbers with units, names,
 * operators, functions) outside a circuit: the elaborator's own, with its
 * unit rules and errors (into d), names valued by `names` (NULL: a name is an
 * error).  True with the value in *v and its unit in *dims; false after an
 * error (a unit mismatch, a division by zero, a non-finite result). */
bool ls_eval_const(ls_diags *d, const ls_expr *e, ls_name_value names, void *ctx, double *v, ls_dims *dims);

/* Arithmetic shared by every evaluator: a binary operator (an ls_binop) and the
 * built-in functions (an ls_func). */
double ls_apply_op(int op, double a, double b);
double ls_apply_func(int f, const double *v, int n);

#endif
