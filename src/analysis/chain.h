/* chain.h — the stage chain: the circuit cut at its ports into stages, put in
 * signal order, with the connections (ports) between them.
 *
 * A stage is a piece of the circuit that stays connected when every port is
 * opened.  Ground and the supply rails do not join pieces: a rail feeds every
 * stage, it is not a signal path.  A rail is a node held against ground (or
 * against another rail) by a voltage source whose internal resistance is at
 * most LS_RAIL_RINT_MAX, unless that node drives a port (then the source is a
 * signal source, e.g. a sensor, and its node belongs to a stage).
 *
 * The chain is a reading of the netlist's structure only; the numbers of each
 * connection come from the operating point's port report (ls_op_port). */
#ifndef LS_CHAIN_H
#define LS_CHAIN_H

#include <stdbool.h>
#include <stddef.h>

#include "analysis/analysis.h"

#define LS_RAIL_RINT_MAX 1.0 /* ohm: a source this stiff against ground is a supply */

/* What a stage holds that a reader looks for first (bit set in ls_stage.has). */
enum {
    LS_STAGE_OPAMP = 1,   /* an op-amp */
    LS_STAGE_ADC = 2,     /* an adc input */
    LS_STAGE_SENSOR = 4,  /* a current source, thermistor or pot: something that senses */
    LS_STAGE_SOURCE = 8,  /* a voltage source that is not a supply (a signal source) */
};
#define LS_STAGE_NFLAGS 4

typedef struct ls_stage {
    const char *name;     /* borrowed from the netlist: an instance, a node or a part name */
    const char *named_by; /* "instance", "driver node" or "first part" (why this name) */
    int *parts;           /* part indices in declaration order (ports excluded) */
    int nparts;
    unsigned has;         /* LS_STAGE_* bits */
    int first;            /* first mention: the smallest node index in the stage */
} ls_stage;

/* One port between two stages.  from/to are stage indices in signal order,
 * -1 when that end is ground or a rail (then `rail_end` names it). */
typedef struct ls_conn {
    int port;             /* the port's part index */
    int from, to;
} ls_conn;

typedef struct ls_chain {
    ls_stage *stages;     /* in signal order */
    int nstages;
    ls_conn *conns;       /* by driver stage in signal order, then declaration order */
    int nconns;
    int *node_stage;      /* per node: its stage, -1 for ground and rails */
    bool *rail;           /* per node: ground or a supply rail */
    int *supply_parts;    /* parts with every pin on ground or a rail (supplies, loads across them) */
    int nsupply;
    bool cyclic;          /* some connection runs against the signal order (a loop through ports) */
    int *pool;            /* storage behind the parts lists */
} ls_chain;

/* Cut nl into stages and order them.  Returns 0, or -1 when out of memory
 * (then *c holds nothing to free).  Free with ls_chain_free. */
int ls_chain_build(const ls_netlist *nl, ls_chain *c);
void ls_chain_free(ls_chain *c);

/* The word of each LS_STAGE_* flag for people ("op-amp", "ADC", ...) and
 * for JSON ("opamp", "adc", ...), by bit number 0..LS_STAGE_NFLAGS-1. */
const char *ls_stage_flag_word(int bit, bool json);

/* The voltage source holding rail node `node` (a part index), or -1. */
int ls_chain_rail_source(const ls_netlist *nl, const ls_chain *c, int node);

/* The verdict as the reports write it: "ok", "marginal" or "loading". */
const char *ls_verdict_word(ls_verdict v);

/* Compute the report of every connection of c, in connection order: the
 * ports a chain report and its picture read (ls_port_read). */
void ls_chain_ports(ls_op *op, const ls_chain *c);

/* A few words saying what would make port `port` pass (empty when it passes):
 * "fix: zout <= 1.2 kOhm; or zin >= 47 kOhm; or a buffer" (the drawing puts each
 * alternative on a line of its own), the values with `sig` significant digits
 * (3 unless --digits says otherwise).  Writes into buf and returns it. */
char *ls_chain_fix(const ls_op *op, int port, char *buf, size_t n, bool ascii, int sig);

#endif
