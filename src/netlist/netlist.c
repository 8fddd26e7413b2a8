/* netlist.c — the flat circuit's own functions: freeing it and finding a
 * part or node by its full name.  (The elaborator, src/elab/, builds it.) */
#include "netlist/netlist.h"

#include <stdlib.h>
#include <string.h>

/* Frees what the netlist holds outside its arena (which the caller owns)
 * and zeroes it. */
void ls_netlist_free(ls_netlist *nl)
{
    free(nl->nodes);
    free(nl->parts);
    free(nl->checks);
    free(nl->budgets);
    free(nl->frees);
    free(nl->params);
    free(nl->ents);
    free(nl->ent_locs);
    ls_hash_free(&nl->names);
    memset(nl, 0, sizeof *nl);
}

/* The index of the part with this full name, or -1. */
int ls_netlist_find_part(const ls_netlist *nl, const char *name)
{
    int e = ls_hash_get(&nl->names, name);
    return e >= 0 && nl->ents[e].kind == ENT_PART ? nl->ents[e].index : -1;
}

/* The index of the node (or alias of a node) with this full name, or -1. */
int ls_netlist_find_node(const ls_netlist *nl, const char *name)
{
    int e = ls_hash_get(&nl->names, name);
    if (e < 0)
        return -1;
    if (nl->ents[e].kind == ENT_NODE || nl->ents[e].kind == ENT_ALIAS)
        return nl->ents[e].index;
    return -1;
}

ls_loc ls_entity_loc(const ls_netlist *nl, int e)
{
    const ls_entity *o = &nl->ents[e];
    switch (o->kind) {
    case ENT_NODE: return nl->nodes[o->index].loc;
    case ENT_PART: return nl->parts[o->index].loc;
    case ENT_PARAM: return nl->params[o->index].loc;
    default: break;
    }
    int lo = 0, hi = nl->nent_locs - 1; /* the rest: kept in order of ent */
    while (lo <= hi) {
        int mid = lo + (hi - lo) / 2;
        if (nl->ent_locs[mid].ent == e)
            return nl->ent_locs[mid].loc;
        if (nl->ent_locs[mid].ent < e)
            lo = mid + 1;
        else
            hi = mid - 1;
    }
    return LS_NOLOC;
}
