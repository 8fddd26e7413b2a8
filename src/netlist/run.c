/* run.c — per-solve states and values beside a netlist (see run.h). */
#include "netlist/run.h"

#include <stdlib.h>
#include <string.h>

int ls_run_init(ls_run *r, const ls_netlist *nl)
{
    memset(r, 0, sizeof *r);
    r->nl = nl;
    r->state = calloc((size_t)(nl->nstates ? nl->nstates : 1), sizeof *r->state);
    return r->state ? 0 : -1;
}

/* The run's own value table, filled from the netlist on first use.  NULL
 * when out of memory. */
static double *own_values(ls_run *r)
{
    if (!r->value) {
        const ls_netlist *nl = r->nl;
        r->value = malloc((size_t)(nl->nparts ? nl->nparts : 1) * sizeof *r->value);
        if (r->value)
            for (int i = 0; i < nl->nparts; i++)
                r->value[i] = nl->parts[i].value;
    }
    return r->value;
}

int ls_run_copy(ls_run *dst, const ls_run *src)
{
    const ls_netlist *nl = src->nl;
    assert(dst->nl->parts == src->nl->parts && dst->nl->nstates == nl->nstates); /* one netlist (a variant's record shares its parts) */
    if (nl->nstates > 0)
        memcpy(dst->state, src->state, (size_t)nl->nstates * sizeof *dst->state);
    if (!src->value) {
        ls_run_reset_values(dst);
        return 0;
    }
    if (!own_values(dst))
        return -1;
    if (nl->nparts > 0)
        memcpy(dst->value, src->value, (size_t)nl->nparts * sizeof *dst->value);
    return 0;
}

void ls_run_free(ls_run *r)
{
    free(r->state);
    free(r->value);
    r->state = NULL;
    r->value = NULL;
}

int ls_run_set_value(ls_run *r, int part, double value)
{
    assert(part >= 0 && part < r->nl->nparts);
    if (!own_values(r))
        return -1;
    r->value[part] = value;
    return 0;
}

void ls_run_reset_values(ls_run *r)
{
    free(r->value);
    r->value = NULL;
}
