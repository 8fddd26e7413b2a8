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
