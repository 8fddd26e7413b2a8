/* resid_dump.c — the assembled system and the part-by-part residual, for a
 * reference to hold against each other (resid_agree.py).
 *
 * Usage: resid_dump FILE.stack [XFILE]
 * Solves the circuit (so nonlinear parts sit at their operating point),
 * restamps it (so the matrix is the one the parts' present stamps give), and
 * builds two variants of the same netlist: every port opened with a tie on
 * the first node, and every port buffered.  Prints, with every double in C's
 * exact hexadecimal form:
 *     kinds NAME...            every kind of the part table
 *     present NAME...          the kinds this circuit uses
 *     variant V n N            then "a I J VALUE" and "b I VALUE" lines
 * With XFILE (lines "x V I VALUE", VALUE in any form strtod reads), also
 *     r V I RESIDUAL ABSR      ls_acc_residual at that x (tail zero)
 * for every unknown of every variant XFILE gives an x for.
 *
 * Usage: resid_dump --bounds FILE.stack
 * Solves the circuit and prints its system as variant 0, then the solution
 * x + tail ("x I VALUE TAIL"), the refinement's residual there ("r 0 I R ABSR"),
 * the kind of bounds ("bounds per-result|per-node|estimate|none") and every
 * node's error bound ("nb NODE-UNKNOWN BOUND").
 * Exit 0, or 2 when the circuit does not load or solve. */
#include "analysis/accuracy.h"
#include "analysis/analysis.h"
#include "elab/elab.h"
#include "mna/mna.h"
#include "lang/parser.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define VARIANTS 3

/* Print the system of m as variant v. */
static void dump_system(const ls_mna *m, int v)
{
    printf("variant %d n %d\n", v, m->n);
    for (int j = 0; j < m->n; j++)
        for (int p = m->a.colptr[j]; p < m->a.colptr[j + 1]; p++)
            printf("a %d %d %a\n", m->a.rowind[p], j, m->a.val[p]);
    for (int i = 0; i < m->n; i++)
        printf("b %d %a\n", i, m->b[i]);
}

/* Read the x of variant v from path into x (n doubles, zero where absent).
 * 1 when the file has one for v, else 0. */
static int read_x(const char *path, int v, double *x, int n)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return 0;
    memset(x, 0, (size_t)n * sizeof *x);
    int found = 0, fv, fi;
    char num[128];
    while (fscanf(f, " x %d %d %127s", &fv, &fi, num) == 3)
        if (fv == v && fi >= 0 && fi < n) {
            x[fi] = strtod(num, NULL);
            found = 1;
        }
    fclose(f);
    return found;
}

/* The residual of m at the x that xpath gives for variant v, printed. */
static int dump_residual(const ls_mna *m, int v, const char *xpath)
{
    size_t n = (size_t)(m->n ? m->n : 1);
    double *buf = calloc(6 * n, sizeof *buf);
    if (!buf)
        return -1;
    double *x = buf, *tail = buf + n, *r = buf + 2 * n, *absr = buf + 3 * n, *work = buf + 4 * n;
    if (read_x(xpath, v, x, m->n)) {
        ls_acc_residual(m, x, tail, r, absr, work);
        for (int i = 0; i < m->n; i++)
            printf("r %d %d %a %a\n", v, i, r[i], absr[i]);
    }
    free(buf);
    return 0;
}

/* --bounds: the solved system, its residual and the node bounds. */
static int dump_bounds(ls_op *op)
{
    const ls_mna *m = &op->mna;
    size_t n = (size_t)(m->n ? m->n : 1);
    double *buf = calloc(4 * n, sizeof *buf);
    if (!buf || ls_acc_bounds(op) != 0) {
        free(buf);
        return 2;
    }
    dump_system(m, 0);
    ls_acc_residual(m, op->x, op->acc.tail, buf, buf + n, buf + 2 * n);
    for (int i = 0; i < m->n; i++) {
        printf("x %d %a %a\n", i, op->x[i], op->acc.tail[i]);
        printf("r 0 %d %a %a\n", i, buf[i], buf[n + (size_t)i]);
    }
    const ls_accuracy *a = &op->acc;
    printf("bounds %s\n", !a->reliable ? "none" : a->estimated ? "estimate" : a->per_node ? "per-node" : "per-result");
    for (int i = 1; i < op->nl->nnodes; i++)
        printf("nb %d %a\n", i - 1, a->node_bound[i]);
    free(buf);
    return 0;
}

int main(int argc, char **argv)
{
    bool bounds = argc == 3 && strcmp(argv[1], "--bounds") == 0;
    if (bounds) {
        argv++;
        argc--;
    }
    if (argc < 2 || argc > 3) {
        fprintf(stderr, "usage: resid_dump FILE.stack [XFILE] | resid_dump --bounds FILE.stack\n");
        return 2;
    }
    ls_arena arena;
    ls_diags diags;
    ls_program prog;
    ls_netlist nl;
    ls_op op;
    memset(&prog, 0, sizeof prog);
    memset(&nl, 0, sizeof nl);
    memset(&op, 0, sizeof op);
    ls_arena_init(&arena);
    ls_diags_init(&diags, &arena);
    int rc = 2;
    ls_mna var[VARIANTS - 1];
    memset(var, 0, sizeof var);
    unsigned char *opened = NULL, *buffered = NULL;
    ls_tie *ties = NULL;
    ls_options o = {.solver = LS_CHOOSE_AUTO};
    if (ls_parse_file(&diags, argv[1], &prog) || ls_elaborate(&prog, &diags, NULL, 0, &nl) ||
        ls_op_solve(&op, &nl, &o) != LS_DONE || ls_mna_restamp(&op.mna) != 0) {
        fprintf(stderr, "resid_dump: %s does not load or solve\n", argv[1]);
        goto out;
    }
    if (bounds) {
        rc = dump_bounds(&op);
        goto out;
    }
    opened = calloc((size_t)nl.nparts + 1, 1);
    buffered = calloc((size_t)nl.nparts + 1, 1);
    ties = calloc((size_t)nl.nnodes + 1, sizeof *ties);
    if (!opened || !buffered || !ties)
        goto out;
    for (int i = 0; i < nl.nparts; i++) {
        opened[i] = nl.parts[i].kind->is_port ? LS_OPENED : LS_KEPT;
        buffered[i] = nl.parts[i].kind->is_port ? LS_BUFFERED : LS_KEPT;
    }
    if (nl.nnodes > 1)
        ties[1] = (ls_tie){.g = 1e-3, .v = 0.75};
    if (ls_mna_build_variant(&var[0], &nl, NULL, opened, ties) != 0 ||
        ls_mna_build_variant(&var[1], &nl, NULL, buffered, NULL) != 0)
        goto out;
    printf("kinds");
    for (int k = 0; k < ls_kind_count(); k++)
        printf(" %s", ls_kind_at(k)->name);
    printf("\npresent");
    for (int k = 0; k < ls_kind_count(); k++)
        for (int i = 0; i < nl.nparts; i++)
            if (nl.parts[i].kind == ls_kind_at(k)) {
                printf(" %s", ls_kind_at(k)->name);
                break;
            }
    printf("\n");
    const ls_mna *sys[VARIANTS] = {&op.mna, &var[0], &var[1]};
    rc = 0;
    for (int v = 0; v < VARIANTS; v++) {
        dump_system(sys[v], v);
        if (argc == 3 && dump_residual(sys[v], v, argv[2]) != 0)
            rc = 2;
    }
out:
    free(opened);
    free(buffered);
    free(ties);
    for (int v = 0; v < VARIANTS - 1; v++)
        ls_mna_free(&var[v]);
    ls_op_free(&op);
    ls_netlist_free(&nl);
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    return rc;
}
