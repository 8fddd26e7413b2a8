/* tally_cmd.c — a command compiled only into the test program loadstack_toy
 * (-DLS_TEST_COMMANDS), added exactly by the steps of DEVELOPERS.md "Adding a
 * command" and kept honest by the test house-toy-command: `tally FILE`, the
 * power every part absorbs, the largest first (--top K: only the first K),
 * what the sources supply, and the sum over every part, which conservation
 * of energy makes zero. */
#include <math.h>
#include <stdlib.h>

#include "cli/cli.h"
#include "report/writer.h"

/* One part's absorbed power, W (negative: it supplies). */
typedef struct tally_item {
    int part;
    double w;
} tally_item;

/* qsort: the largest absorbed power first, then circuit order. */
static int by_power(const void *pa, const void *pb)
{
    const tally_item *a = pa, *b = pb;
    if (a->w != b->w)
        return a->w > b->w ? -1 : 1;
    return a->part - b->part;
}

/* Every part with a finite power, sorted by by_power, into a malloc'd array
 * the caller frees (*n of them); *sum of them all and *supplied (the powers
 * below zero, as a positive number).  NULL when out of memory. */
static tally_item *tally(const ls_session *s, int *n, double *sum, double *supplied)
{
    const ls_netlist *nl = &s->nl;
    tally_item *it = malloc((size_t)(nl->nparts > 0 ? nl->nparts : 1) * sizeof *it);
    if (!it)
        return NULL;
    *n = 0;
    *sum = *supplied = 0;
    for (int i = 0; i < nl->nparts; i++) {
        double w = s->op.ppart[i];
        if (!isfinite(w))
            continue;
        it[(*n)++] = (tally_item){i, w};
        *sum += w;
        if (w < 0)
            *supplied -= w;
    }
    qsort(it, (size_t)*n, sizeof *it, by_power);
    return it;
}

static const ls_wr_col tally_cols[] = {
    {"part", "part", "part", false, 8},
    {"kind", "kind", "kind", false, 8},
    {"power", "power", "power", true, 12},
};

/* The report, described once for every format (writer.h). */
static void tally_report(ls_report *rp, const ls_session *s, const tally_item *it, int n, double sum,
                         double supplied)
{
    const char *W = ls_unit_of(LS_WATT, rp->ascii);
    char b1[64], b2[64];
    int rows = s->cli->top > 0 && s->cli->top < n ? s->cli->top : n;
    ls_wr w;
    ls_wr_begin(&w, rp);
    ls_wr_num(&w, "supplied", supplied);
    ls_wr_num(&w, "sum", sum);
    ls_wr_say(&w, "Power of %d parts: the sources supply %s; all parts together absorb %s\n\n", n,
              ls_eng(rp, b1, sizeof b1, supplied, W), ls_eng(rp, b2, sizeof b2, sum, W));
    ls_wr_table(&w, "parts", tally_cols, (int)(sizeof tally_cols / sizeof *tally_cols), NULL);
    for (int i = 0; i < rows; i++) {
        const ls_part *p = &s->nl.parts[it[i].part];
        ls_wr_cell_str(&w, p->name);
        ls_wr_cell_str(&w, p->kind->name);
        ls_wr_cell_num(&w, it[i].w, ls_eng(rp, b1, sizeof b1, it[i].w, W));
        ls_wr_row(&w);
    }
    ls_wr_table_end(&w);
    ls_wr_finish(&w);
}

/* `loadstack_toy tally FILE`.  Returns an exit code of docs/cli.md. */
int ls_cmd_tally(ls_cli *cli)
{
    ls_session s;
    int code = ls_session_load(&s, cli, cli->pos[0], NULL);
    if (code == LS_EXIT_OK)
        code = ls_session_solve(&s);
    int n = 0;
    double sum = 0, supplied = 0;
    tally_item *it = code == LS_EXIT_OK ? tally(&s, &n, &sum, &supplied) : NULL;
    if (code == LS_EXIT_OK && !it) {
        ls_error(&s.diags, LS_NOLOC, "out of memory sorting the parts' powers");
        code = LS_EXIT_UNSOLVABLE;
    }
    if (code == LS_EXIT_OK) {
        ls_report rp = ls_report_for(&s, ls_out_open(cli));
        tally_report(&rp, &s, it, n, sum, supplied);
        code = ls_out_close(cli, ls_session_verdict(&s, ls_report_done(&rp, code)));
    }
    ls_diags_print(&s.diags, stderr);
    free(it);
    ls_session_free(&s);
    return code;
}
