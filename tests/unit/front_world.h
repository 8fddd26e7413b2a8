/* front_world.h — the unit suites' way from circuit text to a netlist: a fresh
 * arena and diagnostics, parse, elaborate (test_core.c, test_chain.c). */
#ifndef LS_FRONT_WORLD_H
#define LS_FRONT_WORLD_H

#include <string.h>

#include "lang/parser.h"
#include "elab/elab.h"

/* Parses and elaborates text as the file "t.stack" into *nl, with *a and *d
 * initialized here; returns the number of errors.  Free with
 * ls_test_front_free whatever it returns. */
static inline int ls_test_front(ls_arena *a, ls_diags *d, ls_program *prog, ls_netlist *nl, const char *text)
{
    ls_arena_init(a);
    ls_diags_init(d, a);
    int errors = ls_parse_string(d, "t.stack", text, strlen(text), prog);
    if (!errors)
        errors = ls_elaborate(prog, d, NULL, 0, nl);
    return errors;
}

/* Frees what ls_test_front made (the netlist, the diagnostics, the arena). */
static inline void ls_test_front_free(ls_arena *a, ls_diags *d, ls_netlist *nl)
{
    ls_netlist_free(nl);
    ls_diags_free(d);
    ls_arena_free(a);
}

#endif
