/* sag.h — the sag of a node explained by the connections (ports) that cause it.
 *
 * With every port opened each stage stands alone and NODE sits at `alone`;
 * with everything connected at `voltage`.  By the substitution theorem each
 * port p can be replaced by a current source of its current I_p, so in the
 * network with every port open
 *     sag = alone - voltage = sum_p I_p (Z(NODE, driver_p) - Z(NODE, load_p)),
 * Z the transfer resistance (V at NODE per A injected at a node).  Each term is
 * the port's share.  Where a limit or a junction changes state between alone
 * and connected, the shares are instead each port's Shapley value over exact
 * solves of the port combinations. */
#ifndef LS_SAG_H
#define LS_SAG_H

#include "analysis/analysis.h"

typedef enum ls_sag_method { LS_SAG_SUBSTITUTION, LS_SAG_SHAPLEY } ls_sag_method;

/* Up to this many ports the Shapley value is exact (all 2^P combinations);
 * beyond, it is averaged over sampled orders (deterministic seed). */
#define LS_SAG_EXACT_PORTS 12
/* Beyond this many ports no Shapley value is attempted (substitution only). */
#define LS_SAG_MAX_SHAPLEY_PORTS 62

/* One part's share of a port's current at the port's load node (KCL). */
typedef struct ls_sag_draw {
    int part;
    double current;          /* A drawn from the load node into the part */
} ls_sag_draw;

typedef struct ls_sag_port {
    int part;                /* the port's part index */
    double current;          /* A, driver -> load, everything connected */
    double transfer;         /* ohm: Z(NODE, driver) - Z(NODE, load), every port open; NaN undefined */
    double share;            /* V of the sag this port causes; NaN undefined */
    double share_rel;        /* share / sag; NaN when the sag is zero */
    ls_sag_draw *draws;      /* ndraws, largest |current| first */
    int ndraws;
} ls_sag_port;

typedef struct ls_sag_report {
    int node;
    double voltage;          /* V, everything connected */
    double alone;            /* V, every port opened; NaN undefined (see why) */
    double sag;              /* alone - voltage */
    double interaction;      /* sag - sum of shares */
    ls_sag_method method;
    int orders;              /* Shapley: sampled orders, 0 when every combination was solved */
    int changed;             /* Shapley: a part whose state changed, or -1 */
    const char *note;        /* why substitution was kept where Shapley was called for, or NULL */
    const char *why;         /* why alone and the shares are undefined, or NULL */
    ls_sag_port *ports;      /* every port, sorted by |share| largest first */
    int nports;
    int culprit;             /* index into ports: the largest share in the direction of the sag, or -1 */
    int *suggest;            /* with no port in the way: parts at NODE whose removal raises it */
    int nsuggest;
} ls_sag_report;

/* The sag of node explained by connections, into r (owned arrays; free with
 * ls_sag_report_free).  0 ok, -1 out of memory. */
int ls_sag_connections(ls_op *op, int node, ls_sag_report *r);
void ls_sag_report_free(ls_sag_report *r);

#endif
