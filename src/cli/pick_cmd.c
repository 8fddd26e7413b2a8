/* pick_cmd.c — the pick command: `pick ratio R` lists the best pairs of
 * standard values (IEC 60063, eseries.h) for a divider ratio. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
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
static void pick_pair_json(ls_jw *w, double ratio, const ls_pick_item *p)
{
    ls_jw_num(w, "rtop", p->rtop);
    ls_jw_num(w, "rbot", p->rbot);
    ls_jw_num(w, "ratio", p->ratio);
    ls_jw_num(w, "error", p->ratio - ratio);
    ls_jw_num(w, "error_rel", p->error);
    ls_jw_num(w, "zout", p->zout);
}

/* The pick report as one JSON object (cli.md keys; "fits" and "closest" say
 * when no pair comes within the series' tolerance, and which came nearest). */
static void pick_json(const ls_report *rp, double ratio, const ls_eseries *es, const ls_pick_item *it, int n)
{
    ls_jw jw, *w = &jw;
    ls_report_json_begin(rp, w);
    ls_jw_num(w, "ratio", ratio);
    ls_jw_str(w, "series", es->name);
    bool fits = pick_fits(es, it, n);
    ls_jw_bool(w, "fits", fits);
    if (!fits) {
        if (n > 0) {
            ls_jw_obj(w, "closest");
            pick_pair_json(w, ratio, &it[0]);
            ls_jw_end(w);
        }
        n = 0;
    }
    ls_jw_arr(w, "items");
    for (int i = 0; i < n; i++) {
        ls_jw_obj(w, NULL);
        pick_pair_json(w, ratio, &it[i]);
        ls_jw_end(w);
    }
    ls_jw_end(w);
    ls_jw_finish(w);
}

/* Print s right-aligned in w columns, counting UTF-8 code points (Ω is two bytes). */
static void rpad(FILE *o, const char *s, int w)
{
    int n = 0;
    for (const char *c = s; *c; c++)
        n += ((unsigned char)*c & 0xC0) != 0x80;
    fprintf(o, " %*s%s", w > n ? w - n : 0, "", s);
}

/* The pick report as an aligned table with the limits it was searched under. */
static void pick_text(FILE *o, const ls_report *rp, const ls_cli *cli, double ratio, const ls_eseries *es,
                      double lo, double hi, double zmax, const ls_pick_item *it, int n)
{
    const char *OHM = ls_unit_of(LS_OHM, cli->ascii);
    char b1[64], b2[64], b3[64];
    double plo, phi;
    ls_pick_part_range(lo, hi, &plo, &phi);
    fprintf(o, "Dividers of %s standard values for rbot/(rtop+rbot) = %.12g\n", es->name, ratio);
    fprintf(o, "  (rtop + rbot from %s to %s", ls_eng(rp, b1, sizeof b1, lo, OHM), ls_eng(rp, b2, sizeof b2, hi, OHM));
    if (zmax > 0)
        fprintf(o, ", zout at most %s", ls_eng(rp, b3, sizeof b3, zmax, OHM));
    fprintf(o, "; each value from %s", ls_eng(rp, b1, sizeof b1, plo, OHM));
    fprintf(o, " to %s)\n\n", ls_eng(rp, b2, sizeof b2, phi, OHM));
    if (n == 0) {
        fputs("  no pair of values meets those limits\n", o);
        return;
    }
    if (!pick_fits(es, it, n)) {
        fprintf(o, "  no pair comes within %g%% (the tolerance of %s parts) of that ratio.\n", 100 * ls_eseries_tolerance(es),
                es->name);
        fprintf(o, "  The closest is rtop %s, rbot %s: ratio %.6g, off by %+.3g%%.\n",
                ls_eng(rp, b1, sizeof b1, it[0].rtop, OHM), ls_eng(rp, b2, sizeof b2, it[0].rbot, OHM), it[0].ratio,
                100 * it[0].error);
        fputs("  Widen --total, or make the ratio with more than two resistors or a trimmer.\n", o);
        return;
    }
    fprintf(o, "  %-4s %12s %12s %12s %11s %12s\n", "rank", "rtop", "rbot", "ratio", "error", "zout");
    for (int i = 0; i < n; i++) {
        char e[32];
        /* errors below the third decimal and ratios within 1e-6 of 0 or 1
         * keep their digits instead of printing as -0.000% and 1.000000 */
        double pct = 100 * it[i].error;
        snprintf(e, sizeof e, fabs(pct) >= 0.0005 || pct == 0 ? "%+.3f%%" : "%+.2e%%", pct);
        fprintf(o, "  %-4d", i + 1);
        rpad(o, ls_eng(rp, b1, sizeof b1, it[i].rtop, OHM), 12);
        rpad(o, ls_eng(rp, b2, sizeof b2, it[i].rbot, OHM), 12);
        double r = it[i].ratio;
        fprintf(o, r >= 1e-6 && r <= 1 - 1e-6 ? " %12.6f %11s" : " %12.10g %11s", r, e);
        rpad(o, ls_eng(rp, b3, sizeof b3, it[i].zout, OHM), 12);
        fputc('\n', o);
    }
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
    if (cli->fmt == FMT_JSON) {
        pick_json(&rp, ratio, es, items, n);
    } else if (cli->fmt == FMT_CSV) {
        fputs("rank,rtop,rbot,ratio,error,error_rel,zout\n", o);
        for (int i = 0; i < n && pick_fits(es, items, n); i++)
            fprintf(o, "%d,%s,%s,%s,%s,%s,%s\n", i + 1, LS_CSV(items[i].rtop), LS_CSV(items[i].rbot),
                    LS_CSV(items[i].ratio), LS_CSV(items[i].ratio - ratio), LS_CSV(items[i].error),
                    LS_CSV(items[i].zout));
    } else {
        pick_text(o, &rp, cli, ratio, es, lo, hi, zmax, items, n);
    }
    /* no pair that fits is a failed search, as for fit (docs/cli.md) */
    return ls_out_close(cli, pick_fits(es, items, n) ? LS_EXIT_OK : LS_EXIT_CHECK);
}
