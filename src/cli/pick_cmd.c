/* pick_cmd.c — the pick command: `pick ratio R` lists the best pairs of
 * standard values (IEC 60063, eseries.h) for a divider ratio. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "report/writer.h"
#include "base/eseries.h"
#include "base/fmt.h"

#define PICK_RESULTS 10

/* Parse --total LO..HI (each a number with an optional unit) into ohms.
 * Returns false for anything else. */
static bool parse_total(const char *text, double *lo, double *hi)
{
    const char *dots = strstr(text, "..");
    if (!dots || dots == text || !dots[2])
        return false;
    char left[128];
    size_t n = (size_t)(dots - text);
    if (n >= sizeof left)
        return false;
    memcpy(left, text, n);
    left[n] = 0;
    return ls_cli_number(left, lo) && ls_cli_number(dots + 2, hi) && *lo > 0 && *hi >= *lo && isfinite(*hi);
}

/* Check the arguments of pick.  Returns 0 or LS_EXIT_USAGE after saying why. */
static int pick_args(const ls_cli *cli, double *ratio, const ls_eseries **es, double *lo, double *hi, double *zmax)
{
    if (strcmp(cli->pos[0], "ratio") != 0) {
        fprintf(stderr, "loadstack: error: pick knows 'ratio' (loadstack pick ratio R), not '%s'\n", cli->pos[0]);
        return LS_EXIT_USAGE;
    }
    if (!ls_cli_number(cli->pos[1], ratio) || !(*ratio > 0 && *ratio < 1)) {
        fprintf(stderr, "loadstack: error: the ratio rbot/(rtop+rbot) must be a number between 0 and 1, not '%s'\n",
                cli->pos[1]);
        return LS_EXIT_USAGE;
    }
    *es = ls_eseries_find(cli->series ? cli->series : "E24");
    if (!*es) {
        fprintf(stderr, "loadstack: error: --series takes E6, E12, E24, E48, E96 or E192, not '%s'\n", cli->series);
        return LS_EXIT_USAGE;
    }
    *lo = 1e3;
    *hi = 1e6;
    if (cli->total && !parse_total(cli->total, lo, hi)) {
        fprintf(stderr, "loadstack: error: --total takes LO..HI with 0 < LO <= HI (e.g. 10k..100k), not '%s'\n",
                cli->total);
        return LS_EXIT_USAGE;
    }
    *zmax = 0;
    if (cli->zout && !(ls_cli_number(cli->zout, zmax) && *zmax > 0)) {
        fprintf(stderr, "loadstack: error: --zout takes a positive resistance, not '%s'\n", cli->zout);
        return LS_EXIT_USAGE;
    }
    return 0;
}

/* Does the best pair come within the series' tolerance of the ratio? */
static bool pick_fits(const ls_eseries *es, const ls_pick_item *it, int n)
{
    return n > 0 && fabs(it[0].error) <= ls_eseries_tolerance(es);
}

/* One pair's members: its ratio, its error (ratio - R, as the ratio is a
 * plain number) and error_rel (that over R, a fraction; the text shows it in %). */
static void pick_pair(ls_wr *w, double ratio, const ls_pick_item *p)
{
    ls_wr_num(w, "rtop", p->rtop);
    ls_wr_num(w, "rbot", p->rbot);
    ls_wr_num(w, "ratio", p->ratio);
    ls_wr_num(w, "error", p->ratio - ratio);
    ls_wr_num(w, "error_rel", p->error);
    ls_wr_num(w, "zout", p->zout);
}

/* The limits the search ran under: the text report's heading. */
static void pick_limits(ls_wr *w, const ls_cli *cli, double ratio, const ls_eseries *es, double lo, double hi,
                        double zmax)
{
    const ls_report *rp = w->rp;
    const char *OHM = ls_unit_of(LS_OHM, cli->ascii);
    char b1[64], b2[64], b3[64];
    double plo, phi;
    ls_pick_part_range(lo, hi, &plo, &phi);
    ls_wr_say(w, "Dividers of %s standard values for rbot/(rtop+rbot) = %.12g\n", es->name, ratio);
    ls_wr_say(w, "  (rtop + rbot from %s to %s", ls_eng(rp, b1, sizeof b1, lo, OHM), ls_eng(rp, b2, sizeof b2, hi, OHM));
    if (zmax > 0)
        ls_wr_say(w, ", zout at most %s", ls_eng(rp, b3, sizeof b3, zmax, OHM));
    ls_wr_say(w, "; each value from %s", ls_eng(rp, b1, sizeof b1, plo, OHM));
    ls_wr_say(w, " to %s)\n\n", ls_eng(rp, b2, sizeof b2, phi, OHM));
}

/* No pair within the series' tolerance: "fits" false, the closest pair, and
 * in text what to try instead. */
static void pick_misses(ls_wr *w, const ls_cli *cli, double ratio, const ls_eseries *es, const ls_pick_item *it)
{
    const ls_report *rp = w->rp;
    const char *OHM = ls_unit_of(LS_OHM, cli->ascii);
    char b1[64], b2[64], rt[48], er[48];
    ls_wr_obj(w, "closest");
    pick_pair(w, ratio, &it[0]);
    ls_wr_end(w);
    ls_wr_say(w, "  no pair comes within %g%% (the tolerance of %s parts) of that ratio.\n",
              100 * ls_eseries_tolerance(es), es->name);
    ls_wr_say(w, "  The closest is rtop %s, rbot %s: ratio %s, off by %s%%.\n",
              ls_eng(rp, b1, sizeof b1, it[0].rtop, OHM), ls_eng(rp, b2, sizeof b2, it[0].rbot, OHM),
              ls_fixed(rp, rt, sizeof rt, "%.6g", it[0].ratio), ls_fixed(rp, er, sizeof er, "%+.3g", 100 * it[0].error));
    ls_wr_say(w, "  Widen --total, or make the ratio with more than two resistors or a trimmer.\n");
}

/* The pairs' table: in text a rank, the values, the ratio, its error in %
 * and the divider's zout, in fixed columns. */
static const ls_wr_col pick_cols[] = {
    {NULL, "rank", "rank", false, 4},        {"rtop", "rtop", "rtop", true, 12},
    {"rbot", "rbot", "rbot", true, 12},      {"ratio", "ratio", "ratio", true, 12},
    {"error", "error", NULL, true, 0},       {"error_rel", "error_rel", "error", true, 11},
    {"zout", "zout", "zout", true, 12},
};

/* One row of pick_cols. */
static void pick_row(ls_wr *w, const ls_cli *cli, double ratio, int rank, const ls_pick_item *p)
{
    const ls_report *rp = w->rp;
    const char *OHM = ls_unit_of(LS_OHM, cli->ascii);
    char b[64], e[48], en[40], rt[48];
    /* errors below the third decimal and ratios within 1e-6 of 0 or 1
     * keep their digits instead of printing as -0.000% and 1.000000 */
    double pct = 100 * p->error, r = p->ratio;
    snprintf(e, sizeof e, "%s%%", ls_fixed(rp, en, sizeof en, fabs(pct) >= 0.0005 || pct == 0 ? "%+.3f" : "%+.2e", pct));
    ls_wr_cell_int(w, rank);
    ls_wr_cell_num(w, p->rtop, ls_eng(rp, b, sizeof b, p->rtop, OHM));
    ls_wr_cell_num(w, p->rbot, ls_eng(rp, b, sizeof b, p->rbot, OHM));
    ls_wr_cell_num(w, r, ls_fixed(rp, rt, sizeof rt, r >= 1e-6 && r <= 1 - 1e-6 ? "%12.6f" : "%12.10g", r));
    ls_wr_cell_num(w, p->ratio - ratio, NULL);
    ls_wr_cell_num(w, p->error, e);
    ls_wr_cell_num(w, p->zout, ls_eng(rp, b, sizeof b, p->zout, OHM));
    ls_wr_row(w);
}

/* The pick report, described once for every format (writer.h). */
static void pick_report(ls_report *rp, const ls_cli *cli, double ratio, const ls_eseries *es, double lo, double hi,
                        double zmax, const ls_pick_item *it, int n)
{
    ls_wr w;
    ls_wr_begin(&w, rp);
    pick_limits(&w, cli, ratio, es, lo, hi, zmax);
    ls_wr_num(&w, "ratio", ratio);
    ls_wr_str(&w, "series", es->name);
    bool fits = pick_fits(es, it, n);
    ls_wr_bool(&w, "fits", fits);
    if (n == 0)
        ls_wr_say(&w, "  no pair of values meets those limits\n");
    else if (!fits)
        pick_misses(&w, cli, ratio, es, it);
    static const ls_wr_style fixed = {.lead = "  ", .gap = " ", .fixed = true, .skip_empty = true};
    ls_wr_table(&w, "items", pick_cols, (int)(sizeof pick_cols / sizeof *pick_cols), &fixed);
    for (int i = 0; fits && i < n; i++)
        pick_row(&w, cli, ratio, i + 1, &it[i]);
    ls_wr_table_end(&w);
    ls_wr_finish(&w);
}

/* `loadstack pick ratio R`: search, then report.  Returns the exit code. */
int ls_cmd_pick(ls_cli *cli)
{
    double ratio, lo, hi, zmax;
    const ls_eseries *es;
    if (pick_args(cli, &ratio, &es, &lo, &hi, &zmax))
        return LS_EXIT_USAGE;
    ls_pick_item items[PICK_RESULTS];
    int n = ls_pick_ratio(es, ratio, lo, hi, zmax, items, PICK_RESULTS);
    if (n < 0) {
        fprintf(stderr, "loadstack: error: the standard-value search failed (out of memory)\n");
        return LS_EXIT_UNSOLVABLE;
    }
    ls_session s;   /* only for the report's meta: pick reads no circuit */
    memset(&s, 0, sizeof s);
    s.cli = cli;
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    pick_report(&rp, cli, ratio, es, lo, hi, zmax, items, n);
    /* no pair that fits is a failed search, as for fit (docs/cli.md) */
    return ls_out_close(cli, ls_report_done(&rp, pick_fits(es, items, n) ? LS_EXIT_OK : LS_EXIT_CHECK));
}
