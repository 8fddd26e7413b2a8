/* cmd_oom.c — every command, in every format, when memory runs out: each case
 * is run again and again, failing the first, second, third ... allocation the
 * library and the commands make, until a run makes no failing allocation.
 *
 * The reference is the same case run with no failure.  A run that fails an
 * allocation must either end with exit 2 or 3 and an "error:" on stderr and
 * leave no report, or end with 0 or 1 and a report identical, byte for byte,
 * to the reference: a number that is wrong because memory ran out is the one
 * outcome not allowed.  The commands and the static library are linked with
 * malloc, calloc and realloc wrapped (ld --wrap), so only their own
 * allocations are counted and failed (not those of LAPACK or SuiteSparse).
 *
 * Every command is run (solve, check, sag with and without --what-if,
 * thevenin at a node and at a port with --load, influence, tol and sweep with
 * their plots, pick, chain, formula) in text, JSON and CSV on a linear
 * divider, and the ones with solves of their own also in JSON on a circuit
 * with an LED, whose every solve iterates and allocates.  The HTML page is
 * left out: cairo numbers the glyphs and surfaces of its SVG pictures per
 * process, so two pages made in one process differ even with enough memory.
 *
 * Usage: cmd_oom DIR [sparse|large]  (DIR: a scratch directory; "sparse":
 * every command in JSON with --solver sparse; "large": solve, thevenin and
 * influence on a ladder of 1601 unknowns, sparse by the automatic choice, so
 * the automatic choice takes the sparse path with its larger tables).
 * For debugging: CMD_OOM_ONLY=COMMAND, CMD_OOM_FORMAT=0..2 (text, JSON, CSV),
 * CMD_OOM_SHOW=1 (print the report, stderr and the reference of a wrong
 * outcome), CMD_OOM_TRACE=1 (a backtrace of every failed allocation). */
#include <execinfo.h>
#include <fcntl.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli/cli.h"

void *__real_malloc(size_t n);
void *__real_calloc(size_t n, size_t size);
void *__real_realloc(void *p, size_t n);

/* Allocations left before the one that fails; -1: none fails.  Atomic: tol's
 * worker threads allocate too. */
static atomic_long countdown = -1;

static bool trace; /* CMD_OOM_TRACE set: where each failed allocation was made (for debugging) */

static int fail_now(void)
{
    long c = atomic_load(&countdown);
    while (c >= 0 && !atomic_compare_exchange_weak(&countdown, &c, c - 1))
        ;
    if (c == 0 && trace) {
        void *at[16];
        backtrace_symbols_fd(at, backtrace(at, 16), 1);
    }
    return c == 0;
}

void *__wrap_malloc(size_t n) { return fail_now() ? NULL : __real_malloc(n); }
void *__wrap_calloc(size_t n, size_t size) { return fail_now() ? NULL : __real_calloc(n, size); }
void *__wrap_realloc(void *p, size_t n) { return fail_now() ? NULL : __real_realloc(p, n); }

typedef struct cmdcase {
    const char *name;
    int (*run)(ls_cli *);
    const char *pos[6];
    int npos;
    bool plot;
    bool html;    /* also --format html (solve and chain: the one-page report) */
    bool what_if; /* sag --what-if */
    const char *load;   /* thevenin --load */
    bool json_only;     /* one format is enough (the nonlinear circuit's cases) */
} cmdcase;

static bool sparse;   /* --solver sparse */
static char dir[512], circuit[600], lamp[600], report[600], plotfile[600], errfile[600];

/* The whole of a file (malloc'd through the real allocator), or NULL. */
static char *slurp(const char *path, size_t *n)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    char *b = __real_malloc(1 << 22);
    *n = b ? fread(b, 1, (1 << 22) - 1, f) : 0;
    fclose(f);
    if (b)
        b[*n] = 0;
    return b;
}

/* One run of case c in format fmt with allocation k failing (k < 0: none).
 * Returns the exit code; *clean is true when no allocation failed. */
static int run_case(const cmdcase *c, ls_format fmt, long k, bool *clean)
{
    ls_cli cli;
    memset(&cli, 0, sizeof cli);
    cli.command = c->name;
    for (int i = 0; i < c->npos; i++)
        cli.pos[i] = c->pos[i];
    cli.npos = c->npos;
    cli.fmt = fmt;
    cli.output = report;
    cli.derate = 1;
    cli.solver = sparse ? LS_CHOOSE_SPARSE : LS_CHOOSE_AUTO;
    cli.seed = 1;
    cli.trials = 16;
    cli.steps = 3;
    cli.plot = c->plot ? plotfile : NULL;
    cli.what_if = c->what_if;
    cli.load = c->load;
    unlink(report);
    unlink(plotfile);
    atomic_store(&countdown, k);
    int code = ls_out_prepare(&cli);
    if (code == LS_EXIT_OK)
        code = c->run(&cli);
    ls_out_abandon(&cli);
    *clean = atomic_load(&countdown) >= 0 || k < 0;
    atomic_store(&countdown, -1);
    fflush(stderr);
    return code;
}

static int wrong;

static void check_case(const cmdcase *c, ls_format fmt)
{
    static const char *const fname[] = {"text", "json", "csv", "html"};
    bool clean;
    if (ftruncate(2, 0) != 0 || lseek(2, 0, SEEK_SET) != 0)
        return;
    int ref = run_case(c, fmt, -1, &clean);
    size_t nref = 0, n = 0;
    char *want = slurp(report, &nref);
    if (ref != 0 && ref != 1) {
        fprintf(stdout, "%s --format %s: the reference run failed (exit %d)\n", c->name, fname[fmt], ref);
        wrong++;
        free(want);
        return;
    }
    long k = 0;
    for (;; k++) {
        if (ftruncate(2, 0) != 0 || lseek(2, 0, SEEK_SET) != 0)
            break;
        int code = run_case(c, fmt, k, &clean);
        if (clean)
            break;
        char *got = slurp(report, &n), *err = slurp(errfile, &(size_t){0});
        const char *bad = NULL;
        if (code < 0 || code > 3)
            bad = "an exit code outside 0..3";
        else if (code >= 2 && (!err || !strstr(err, "error:")))
            bad = "a failure without an error message";
        else if (code >= 2 && got)
            bad = "a failed run left a report";
        else if (code <= 1 && (code != ref || !got || n != nref || memcmp(got, want, n) != 0))
            bad = "a report that differs from the one with enough memory";
        /* No quiet degradation is allowed any more: a corner, trial or sweep
         * point lost to memory, a text table or a JSON "why" that could not
         * grow, an error bound or a port report that could not be computed
         * all end in an error now (they were once counted as "not solved" or
         * left out with exit 0). */
        if (bad) {
            fprintf(stdout, "%s --format %s, allocation %ld failing: %s\n", c->name, fname[fmt], k, bad);
            if (getenv("CMD_OOM_SHOW")) /* for debugging: what came out */
                fprintf(stdout, "--- exit %d, report:\n%s\n--- stderr:\n%s\n--- reference:\n%s\n---\n", code,
                        got ? got : "(none)", err ? err : "", want ? want : "(none)");
            wrong++;
        }
        free(got);
        free(err);
        if (k > 200000)
            break;
    }
    fprintf(stdout, "%-9s --format %-4s: %ld allocations failed in turn\n", c->name, fname[fmt], k);
    free(want);
}

int main(int argc, char **argv)
{
    if (argc < 2)
        return 2;
    bool large = argc > 2 && strcmp(argv[2], "large") == 0;
    sparse = argc > 2 && strcmp(argv[2], "sparse") == 0;
    snprintf(dir, sizeof dir, "%s", argv[1]);
    snprintf(circuit, sizeof circuit, "%s/oom.stack", dir);
    snprintf(report, sizeof report, "%s/report.out", dir);
    snprintf(plotfile, sizeof plotfile, "%s/plot.svg", dir);
    snprintf(errfile, sizeof errfile, "%s/stderr.txt", dir);
    FILE *f = fopen(circuit, "w");
    if (!f)
        return 2;
    if (large) { /* a ladder: 1599 nodes and a source's current, 1601 unknowns */
        fputs("ground gnd\nvoltage vs gnd -> n0 5 V tol=1%\n", f);
        for (int i = 1; i < 1600; i++)
            fprintf(f, "resistor rs%d n%d -> n%d 1k tol=1%%\nresistor rp%d n%d -> gnd 100k\n", i, i - 1, i, i, i);
        fputs("port p n1599 -> load\nresistor rl load -> gnd 20k\nexpect load > 0.1 V\n", f);
    } else {
        fputs("title \"Soil probe divider\"\nground gnd\nvoltage vs gnd -> top 5 V tol=2%\n"
              "resistor r1 top -> mid 10k tol=1% free=9k..11k\nresistor r2 mid -> gnd 10k tol=1%\n"
              "let rl_value = 20k\n"
              "port p mid -> in\nresistor rl in -> gnd rl_value\nexpect in > 1 V\nrule ratio >= 10\n", f);
    }
    fclose(f);
    /* A nonlinear circuit: every solve iterates and allocates, so the trials,
     * corners, sweep points and variants themselves run out of memory (in the
     * linear one only their setup does). */
    snprintf(lamp, sizeof lamp, "%s/oom_lamp.stack", dir);
    if (!(f = fopen(lamp, "w")))
        return 2;
    fputs("title \"Dosing pump status lamp\"\nground gnd\nlet vs_value = 5 V\n"
          "voltage vs gnd -> top vs_value tol=2%\nresistor r1 top -> a 1k tol=1%\nresistor r3 a -> gnd 47k tol=1%\n"
          "port p a -> lamp\nresistor r2 lamp -> k 220 tol=5%\nled d1 k -> gnd vf=2.0V at=10mA\nexpect a > 2 V\n", f);
    fclose(f);
    /* stderr into a file, read after each run */
    int fd = open(errfile, O_RDWR | O_CREAT | O_TRUNC, 0644);
    if (fd < 0 || dup2(fd, 2) < 0)
        return 2;
    close(fd);
    const char *node = large ? "n800" : "mid";
    cmdcase cases[] = {
        {"solve", ls_cmd_solve, {circuit}, 1},
        {"check", ls_cmd_check, {circuit}, 1},
        {"sag", ls_cmd_sag, {circuit, node}, 2},
        {"sag", ls_cmd_sag, {circuit, node}, 2, .what_if = true},
        {"thevenin", ls_cmd_thevenin, {circuit, node}, 2},
        {"thevenin", ls_cmd_thevenin, {circuit, "p"}, 2, .load = "10k"},   /* each side of a port, loaded */
        {"influence", ls_cmd_influence, {circuit, node}, 2},
        {"tol", ls_cmd_tol, {circuit, node}, 2, .plot = true},
        {"sweep", ls_cmd_sweep, {circuit, "rl_value", "10k", "30k", node}, 5, .plot = true},
        {"pick", ls_cmd_pick, {"ratio", "0.33"}, 2},
        {"chain", ls_cmd_chain, {circuit}, 1},
        {"formula", ls_cmd_formula, {circuit, node}, 2},
        {"fit", ls_cmd_fit, {circuit}, 1, .json_only = true},   /* every candidate solved in each run: JSON only */
        {"solve", ls_cmd_solve, {lamp}, 1, .json_only = true},
        {"sag", ls_cmd_sag, {lamp, "a"}, 2, .what_if = true, .json_only = true},
        {"thevenin", ls_cmd_thevenin, {lamp, "p"}, 2, .load = "10k", .json_only = true},
        {"tol", ls_cmd_tol, {lamp, "a"}, 2, .json_only = true},
        {"sweep", ls_cmd_sweep, {lamp, "vs_value", "4", "6", "a"}, 5, .json_only = true},
    };
    int ncases = (int)(sizeof cases / sizeof cases[0]);
    const char *only = getenv("CMD_OOM_ONLY"); /* for debugging: one command */
    trace = getenv("CMD_OOM_TRACE") != NULL;
    if (trace) /* the traces go straight to fd 1: keep the lines in order */
        setvbuf(stdout, NULL, _IONBF, 0);
    for (int i = 0; i < ncases; i++) {
        if (only && strcmp(only, cases[i].name) != 0)
            continue;
        if (large && (cases[i].run != ls_cmd_solve && cases[i].run != ls_cmd_thevenin &&
                      cases[i].run != ls_cmd_influence))
            continue; /* sag (a solve per part) and the rest run on the sparse path in "sparse" */
        if (large && (cases[i].load || cases[i].json_only))
            continue; /* the ladder has no port "p"; the lamp is small */
        for (int fmt = FMT_TEXT; fmt <= (cases[i].html ? FMT_HTML : FMT_CSV); fmt++) {
            if ((large || sparse || cases[i].json_only) && fmt != FMT_JSON)
                continue;
            if (getenv("CMD_OOM_FORMAT") && atoi(getenv("CMD_OOM_FORMAT")) != fmt) /* debugging: one format */
                continue;
            check_case(&cases[i], (ls_format)fmt);
        }
    }
    printf("%d wrong outcomes\n", wrong);
    return wrong ? 1 : 0;
}
