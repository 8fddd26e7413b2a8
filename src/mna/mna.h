/* mna.h — the modified-nodal system of a netlist, and its topology checks. */
#ifndef LS_MNA_H
#define LS_MNA_H

#include "parts/parts.h"
#include "base/csc.h"

/* A conductance (S) from a node to a fixed voltage (V): a load resistor to
 * ground (v = 0), or a node held at a voltage.  g = 0: none. */
/* How a variant changes a part (ls_mna.opened). */
enum { LS_KEPT = 0, LS_OPENED = 1, LS_BUFFERED = 2 };

typedef struct ls_tie {
    double g, v;
} ls_tie;

typedef struct ls_mna {
    const ls_netlist *nl;
    const ls_run *run;     /* the parts' states and values stamped (the operating point's), or NULL: own */
    ls_run own;            /* without a run: cleared states and the netlist's values */
    int nn;                /* node unknowns: nnodes - 1 */
    int n;                 /* all unknowns: nodes, then branch currents */
    int *branch_part;      /* for each branch unknown (index - nn): its part */
    ls_triplets t;         /* entries being stamped (duplicates not yet summed); empty between stamps */
    size_t nnz_hint;       /* triplet count of the last stamp */
    double *b;             /* right-hand side, n */
    ls_csc a;              /* compressed, duplicates summed */
    double amax;           /* largest |a_ij| */
    unsigned char *seen;   /* restamp scratch: per entry of a, set once a triplet reached it */
    size_t seen_n;
    bool direct;           /* the first assembly went straight into columns (mna.c; for tests) */
    unsigned in_place;     /* restamps summed straight into a's pattern (for tests) */
    unsigned patched;      /* restamps that restamped only the changed parts (patch.c; for tests) */
    /* Restamping only what changed (patch.c): the parts announced for the
     * next restamp, and which entries each part reaches (built on first use). */
    const int *pending;
    int npending;
    struct ls_mna_index *index;
    int patch_failures;    /* patches in a row that had to restamp in full */
    bool want_index;       /* make the index after the next full restamp */
    /* A variant of the circuit (sag, thevenin --load): both NULL normally. */
    const unsigned char *opened;   /* per part, or NULL: LS_OPENED, LS_BUFFERED (ports) or 0 */
    const ls_tie *ties;            /* per node, or NULL: a conductance to a fixed voltage */
} ls_mna;

/* Stamp every part of nl with cleared states and the netlist's values (the
 * branch unknowns are the elaborator's).  0 ok, -1 out of memory. */
int ls_mna_build(ls_mna *m, const ls_netlist *nl);
/* The same in run (its states and values; NULL: as ls_mna_build), which
 * must outlive m, and for a variant: the parts marked in opened (per part, or NULL) are
 * stamped as removed (LS_OPENED) or, for a port, as delivering its driver's
 * voltage without drawing on the driver (LS_BUFFERED), and every node with ties[node].g > 0 (per node, or NULL)
 * gets its tie; both arrays must outlive m. */
int ls_mna_build_variant(ls_mna *m, const ls_netlist *nl, const ls_run *run, const unsigned char *opened,
                         const ls_tie *ties);
/* The run m stamps: its caller's, or its own. */
static inline const ls_run *ls_mna_run(const ls_mna *m) { return m->run ? m->run : &m->own; }
/* Re-stamp the values after part values changed.  When every entry lands in
 * the pattern of the last assembly and fills all of it, the values are summed
 * straight into m->a (same arrays, same pattern, the same numbers compression
 * would give) through a small triplet buffer; otherwise the system is
 * assembled afresh.  0 ok, -1 out of memory. */
int ls_mna_restamp(ls_mna *m);
void ls_mna_free(ls_mna *m);

/* Announce that before the next ls_mna_restamp only the values of these k
 * parts changed (main values or options; nothing else: no state, no
 * linearization point, no tie).  That restamp then recomputes only the
 * entries of A and b those parts reach, each as the same sum in the same
 * order as a full restamp, so the system is the same bit for bit; where the
 * changes do not fit (an entry added or dropped by a value from or to zero,
 * more than a quarter of the parts) it restamps in full.  parts must stay
 * valid until that restamp; the announcement is used once. */
void ls_mna_expect_changes(ls_mna *m, const int *parts, int k);
/* patch.c's side of ls_mna_restamp: 1 patched, 0 restamp in full, -1 no memory. */
int ls_mna_try_patch(ls_mna *m);
/* ... and after a full restamp: the index, when an announcement asked. */
int ls_mna_index_after_restamp(ls_mna *m);
/* m->seen sized for m->a's entries (contents undefined).  0, or -1 no memory. */
int ls_mna_reserve_seen(ls_mna *m);
/* Largest |a_ij| of a (0 for an empty matrix). */
double ls_csc_amax(const ls_csc *a);
void ls_mna_index_free(ls_mna *m);

/* Stamp part i into sink as the assembly does (removed or buffered where the
 * variant says so), and the variant's ties: for sinks of other kinds, such
 * as the extra-precise residual of accuracy.c. */
void ls_mna_stamp_part(const ls_mna *m, int i, ls_sink *sink);
void ls_mna_stamp_ties(const ls_mna *m, ls_sink *sink);

/* Stamp every part into triplets and compress them into m->a (any matrix
 * there freed), b afresh: the assembly when the direct one into columns
 * does not fit (a part that stamps outside its pins and branches more than
 * the columns' slots allow), and the reference the tests hold the direct one
 * to.  0 ok, -1 out of memory. */
int ls_mna_stamp_triplets(ls_mna *m);

/* Compress triplets (summing duplicates) into a CSC matrix; 0 ok, -1 no memory.
 * Explicit zeros that result from cancellation are kept so the pattern is stable. */
int ls_triplets_to_csc(const ls_triplets *t, int n, ls_csc *out);
void ls_triplets_free(ls_triplets *t);

/* What an unknown stands for, in the user's words ("node 'mid'",
 * "the current of voltage source 'vbat'"). */
const char *ls_unknown_desc(const ls_mna *m, int idx, char *buf, size_t n);

/* Topology checks before any numbers: nodes with no DC path to ground (and
 * cut-sets of current sources), loops of voltage-defined branches.  Errors go
 * to the netlist's diagnostics; returns their number. */
int ls_topology_check(const ls_netlist *nl);

#endif
