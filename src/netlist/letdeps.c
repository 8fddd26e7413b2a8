/* letdeps.c — the record of what one let reaches, and its replay (see
 * letdeps.h). */
#include "netlist/letdeps.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>



void ls_letdeps_init(ls_letdeps *d, const char *let)
{
    memset(d, 0, sizeof *d);
    d->let = let;
    d->root = -1;
}

void ls_letdeps_free(ls_letdeps *d)
{
    free(d->dep);
    free(d->e);
    free(d->code);
    free(d->parts);
    const char *let = d->let;
    ls_letdeps_init(d, let);
}

/* Grow *v (of elements elem bytes, capacity *cap) to hold need.  false (and
 * d->nomem) when memory runs out. */
static bool grow(ls_letdeps *d, void **v, int *cap, int need, size_t elem)
{
    if (need <= *cap)
        return true;
    int nc = *cap ? *cap : 16;
    while (nc < need)
        nc *= 2;
    void *p = realloc(*v, (size_t)nc * elem);
    if (!p) {
        d->nomem = true;
        return false;
    }
    *v = p;
    *cap = nc;
    return true;
}

bool ls_letdeps_reaches(const ls_letdeps *d, int param)
{
    return d && param >= 0 && param < d->ndep && d->dep[param];
}

void ls_letdeps_mark(ls_letdeps *d, int param)
{
    if (param < 0)
        return;
    if (param >= d->ndep) {
        int cap = d->ndep;
        if (!grow(d, (void **)&d->dep, &cap, param + 1, 1))
            return;
        memset(d->dep + d->ndep, 0, (size_t)(cap - d->ndep));
        d->ndep = cap;
    }
    d->dep[param] = 1;
}

void ls_letdeps_structural(ls_letdeps *d, const char *why)
{
    if (!d->structural)
        snprintf(d->why, sizeof d->why, "%s", why);
    d->structural = true;
}

int ls_letdeps_begin(ls_letdeps *d, ls_ld_kind kind, int target)
{
    if (!grow(d, (void **)&d->e, &d->cap, d->n + 1, sizeof *d->e))
        return -1;
    d->e[d->n] = (ls_ld_entry){.kind = kind, .target = target, .sign = 1, .code = d->ncode};
    if (kind != LD_PARAM && kind != LD_QCONST && kind != LD_BUDGET &&
        (d->nparts == 0 || d->parts[d->nparts - 1] != target)) {
        /* a part's entries are recorded together, so "not the last one"
         * is "not yet listed" */
        if (!grow(d, (void **)&d->parts, &d->cap_parts, d->nparts + 1, sizeof *d->parts))
            return -1;
        d->parts[d->nparts++] = target;
    }
    return d->n++;
}

void ls_letdeps_emit(ls_letdeps *d, int op, int arg, int nargs, double num)
{
    if (!grow(d, (void **)&d->code, &d->cap_code, d->ncode + 1, sizeof *d->code))
        return;
    d->code[d->ncode++] = (ls_ld_code){(unsigned char)op, (unsigned char)nargs, arg, num};
}

void ls_letdeps_end(ls_letdeps *d, int entry)
{
    if (entry < 0 || d->nomem)
        return;
    ls_ld_entry *e = &d->e[entry];
    e->ncode = d->ncode - e->code;
    /* the depth the program needs on the stack */
    int depth = 0, most = 0;
    for (int i = e->code; i < d->ncode; i++) {
        const ls_ld_code *c = &d->code[i];
        depth += c->op == LDC_NUM || c->op == LDC_PARAM ? 1 : c->op == LDC_BIN ? -1 : c->op == LDC_CALL ? 1 - c->nargs : 0;
        most = depth > most ? depth : most;
    }
    if (most > LS_LD_STACK)
        ls_letdeps_structural(d, "an expression nested too deep to recompute");
}

ls_ld_entry *ls_letdeps_entry(ls_letdeps *d, int i)
{
    return &d->e[i];
}
