/* commands.c — loading a circuit for a command, safe output, and the solve,
 * check and demo commands. */
#include <assert.h>
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "cli/cli.h"
#include "cli/html.h"
#include "elab/elab.h"
#include "lang/parser.h"
#include "cli/progress.h"
#include "report/plot.h"

/* ---- exit codes -------------------------------------------------------------------------- */

int ls_exit_code(ls_outcome o)
{
    switch (o) {
    case LS_DONE: return LS_EXIT_OK;
    case LS_BAD_REQUEST: return LS_EXIT_USAGE;
    case LS_UNSOLVABLE: return LS_EXIT_UNSOLVABLE;
    /* no memory is no fault of the file or the command line: 3, as every run
     * out of memory (docs/limits.md); so is a worker that cannot be set up */
    case LS_NO_MEMORY: return LS_EXIT_UNSOLVABLE;
    case LS_NO_WORKER: return LS_EXIT_UNSOLVABLE;
    /* the sweep command elaborates such a point again and never passes this
     * on; a command that did would have no solution to report */
    case LS_REELABORATE: return LS_EXIT_UNSOLVABLE;
    }
    assert(!"an ls_outcome without an exit code");
    return LS_EXIT_UNSOLVABLE;
}

/* ---- numbers on the command line ------------------------------------------------------ */

bool ls_cli_number_dims(const char *text, double *v, ls_dims *dims)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_expr *e = ls_parse_expr_string(&d, "argument", text, false);
    bool ok = e && ls_eval_const(&d, e, NULL, NULL, v, dims);
    ls_diags_free(&d);
    ls_arena_free(&a);
    return ok;
}

bool ls_cli_number(const char *text, double *v)
{
    ls_dims dims;
    return ls_cli_number_dims(text, v, &dims);
}

/* ---- phase times (LOADSTACK_TIMING=1) ------------------------------------------------------ */

/* Seconds on the monotonic clock. */
static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* With LOADSTACK_TIMING=1 in the environment, print the seconds since *t0 for
 * `phase` and the peak resident memory so far to stderr; then restart *t0.
 * Nothing is kept between calls. */
static void phase_done(const char *phase, double *t0)
{
    const char *e = getenv("LOADSTACK_TIMING");
    double t = now_s();
    if (e && strcmp(e, "1") == 0) {
        struct rusage ru;
        long peak_kb = getrusage(RUSAGE_SELF, &ru) == 0 ? ru.ru_maxrss : -1;
        fprintf(stderr, "loadstack: timing: %-9s %.4f s  (peak so far %ld MB)\n", phase, t - *t0, peak_kb / 1024);
    }
    *t0 = t;
}

/* ---- the end of the process -------------------------------------------------------------------- */

#if defined(__SANITIZE_ADDRESS__)
#define LS_UNDER_ASAN 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define LS_UNDER_ASAN 1
#endif
#endif

/* Every file is committed or removed before this.  The exit handlers are
 * skipped on purpose: OpenBLAS joins its worker threads there, and under a
 * tight address-space limit (below about 256 MB) a worker that could not get
 * its buffer never ends, so exit() would wait forever after the work is done.
 * Under the sanitizers the handlers run (they hold the leak check). */
_Noreturn void ls_exit_now(int code)
{
    fflush(stdout);
    fflush(stderr);
#ifdef LS_UNDER_ASAN
    exit(code);
#else
    _exit(code);
#endif
}

/* ---- sessions ------------------------------------------------------------------------ */

/* The loader's after_read hook: the program's output files must not be an
 * included circuit file. */
static int protect_hook(ls_circuit *c, void *ctx)
{
    (void)ctx;
    return ls_out_protect(c);
}

/* The loader's phase hook: LOADSTACK_TIMING's lines (ctx: the phase's start). */
static void load_phase(void *ctx, const char *done)
{
    phase_done(done, ctx);
}

int ls_session_load(ls_session *s, ls_cli *cli, const char *path, const char *text)
{
    ls_circuit_init(s);
    s->cli = cli;
    double t0 = now_s();
    ls_load how = {.name = path, .text = text, .len = text ? strlen(text) : 0, .input_path = path,
                   .sets = cli->sets, .nsets = cli->nsets, .keep_syntax = cli->keep_syntax, .follow = cli->follow,
                   .after_read = protect_hook, .phase = load_phase, .ctx = &t0};
    if (!text && strcmp(path, "-") == 0 && cli->stdin_text) {
        /* FILE '-': the text main() read from standard input; includes
         * resolve from the current directory */
        how.name = "<stdin>";
        how.text = cli->stdin_text;
        how.len = cli->stdin_len;
        how.input_path = NULL;
    }
    /* a failure to load is a usage error (exit 2), unless it was memory:
     * that is no fault of the file, exit 3 as every run out of memory
     * (docs/limits.md; ls_session_nomem tells a caller which it was) */
    if (ls_circuit_load(s, &how) == LS_LOADED)
        return LS_EXIT_OK;
    return ls_session_nomem(s) ? LS_EXIT_UNSOLVABLE : LS_EXIT_USAGE;
}

/* Circuits this large take about a second or more to solve: the progress
 * line says what is happening meanwhile. */
#define LARGE_SOLVE_NODES 100000

/* The progress line of one large solve: each phase as it starts, with the
 * time so far. */
typedef struct solve_progress {
    ls_progress pg;
    const ls_netlist *nl;
} solve_progress;

/* ls_options.phase: show the phase when the circuit is large (its phases
 * take seconds) or the solve has already taken a second. */
static void solve_phase(void *ctx, const char *what)
{
    solve_progress *sp = ctx;
    double t = ls_progress_now() - sp->pg.t0;
    if (sp->nl->nnodes < LARGE_SOLVE_NODES && t < LS_PROGRESS_AFTER_S)
        return;
    char note[160];
    snprintf(note, sizeof note, "%d nodes, %d parts: %s ... (%.1f s)", sp->nl->nnodes, sp->nl->nparts, what, t);
    ls_progress_note(&sp->pg, note);
}

int ls_session_solve(ls_session *s)
{
    solve_progress sp = {.nl = &s->nl};
    ls_options o = {.solver = s->cli->solver, .min_ratio = s->cli->min_ratio, .derate = s->cli->derate,
                    .phase = solve_phase, .phase_ctx = &sp};
    double t0 = now_s();
    ls_progress_start(&sp.pg, s->cli->command ? s->cli->command : "solve", "", s->cli->quiet);
    int code = ls_exit_code(ls_circuit_solve_op(s, &o));
    /* the hook's context lives on this stack: the op's options are copied
     * into later solves (variants, tol's trials on other threads) */
    s->op.opt.phase = NULL;
    s->op.opt.phase_ctx = NULL;
    ls_progress_end(&sp.pg);
    phase_done("solve", &t0);
    return code;
}

ls_q *ls_session_quantity(ls_session *s, const char *text)
{
    return ls_circuit_quantity(s, text, s->cli ? s->cli->follow : NULL);
}

int ls_session_verdict(const ls_session *s, int code)
{
    return code <= LS_EXIT_CHECK && s->diags.errors > 0 ? LS_EXIT_UNSOLVABLE : code;
}

bool ls_session_nomem(const ls_session *s)
{
    return ls_circuit_nomem(s);
}

void ls_session_free(ls_session *s)
{
    ls_circuit_release(s);
}

/* ---- output, written whole or not at all (docs/output.md) ------------------------------------ */

/* SIGINT/SIGTERM: remove the temporary files, then die of the same signal
 * (SA_RESETHAND restored the default action), so the shell sees 130 or 143
 * and a calling script stops as it would for any interrupted program. */
static void on_stop_signal(int sig)
{
    ls_dest_signal_cleanup();
    raise(sig);
}

/* Install on_stop_signal for SIGINT and SIGTERM (not where they are ignored:
 * a program started in the background with them ignored keeps that). */
static void catch_stop_signals(void)
{
    static const int sigs[] = {SIGINT, SIGTERM};
    for (size_t i = 0; i < sizeof sigs / sizeof sigs[0]; i++) {
        struct sigaction old, sa;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_stop_signal;
        sa.sa_flags = SA_RESETHAND;
        sigemptyset(&sa.sa_mask);
        if (sigaction(sigs[i], NULL, &old) == 0 && old.sa_handler != SIG_IGN)
            sigaction(sigs[i], &sa, NULL);
    }
}

/* The circuit file a command reads (its first argument), or NULL. */
static const char *input_of(const ls_cli *cli)
{
    if (!cli->command || cli->npos < 1 || strcmp(cli->command, "pick") == 0 || strcmp(cli->command, "demo") == 0)
        return NULL;
    return cli->pos[0];
}

/* Say why a destination is refused; returns LS_EXIT_USAGE. */
static int refuse(ls_cli *cli, const char *fmt, const char *a, const char *b)
{
    fputs("loadstack: error: ", stderr);
    fprintf(stderr, fmt, a, b);
    fputc('\n', stderr);
    ls_out_abandon(cli);
    return LS_EXIT_USAGE;
}

/* --write names a circuit file: FILE.stack, not standard output. */
static bool write_ok(const char *path)
{
    size_t n = strlen(path);
    return n > 6 && strcmp(path + n - 6, ".stack") == 0;
}

int ls_out_prepare(ls_cli *cli)
{
    char msg[700];
    const char *input = input_of(cli);
    if (cli->plot && (strcmp(cli->plot, "-") == 0 || !ls_plot_format(cli->plot)))
        return refuse(cli, "--plot '%s': a plot file must end in .svg, .png or .pdf%s", cli->plot, "");
    if (cli->plot && ls_dest_open(&cli->plot_dest, "--plot", cli->plot, msg, sizeof msg) != 0)
        return refuse(cli, "%s%s", msg, "");
    if (ls_dest_open(&cli->out_dest, "--output", cli->output, msg, sizeof msg) != 0)
        return refuse(cli, "%s%s", msg, "");
    if (ls_dest_text(&cli->out_dest) != 0)   /* reports are UTF-8, whatever the names hold */
        return refuse(cli, "out of memory%s%s", "", "");
    if (ls_dest_same(&cli->out_dest, input))
        return refuse(cli, "--output '%s' is the input circuit; refusing to overwrite it%s", cli->output, "");
    if (cli->plot && ls_dest_same(&cli->plot_dest, input))
        return refuse(cli, "--plot '%s' is the input circuit; refusing to overwrite it%s", cli->plot, "");
    if (cli->write && !write_ok(cli->write))
        return refuse(cli, "--write '%s': the chosen circuit is written to a file ending in .stack%s", cli->write, "");
    if (cli->write && ls_dest_open(&cli->write_dest, "--write", cli->write, msg, sizeof msg) != 0)
        return refuse(cli, "%s%s", msg, "");
    if (cli->write && ls_dest_same(&cli->write_dest, input))
        return refuse(cli, "--write '%s' is the input circuit; refusing to overwrite it%s", cli->write, "");
    if (cli->write && (ls_dest_same_dest(&cli->write_dest, &cli->out_dest) ||
                       (cli->plot && ls_dest_same_dest(&cli->write_dest, &cli->plot_dest))))
        return refuse(cli, "--write '%s' is also another output of this run%s; give each its own file", cli->write, "");
    if (cli->plot && ls_dest_same_dest(&cli->plot_dest, &cli->out_dest))
        return refuse(cli, "--plot '%s' and --output '%s' are the same file; give each its own", cli->plot,
                      cli->output);
    if (cli->plot || cli->write || !cli->out_dest.is_stdout)
        catch_stop_signals();
    return LS_EXIT_OK;
}

int ls_out_protect(ls_session *s)
{
    ls_cli *cli = s->cli;
    int code = LS_EXIT_OK;
    for (int i = 1; i < s->diags.nfiles; i++) {   /* file 0 is the input, checked before */
        const char *inc = s->diags.files[i].path;
        const char *hit = ls_dest_same(&cli->out_dest, inc) ? "--output"
                          : cli->plot && ls_dest_same(&cli->plot_dest, inc) ? "--plot"
                          : cli->write && ls_dest_same(&cli->write_dest, inc) ? "--write" : NULL;
        if (hit) {
            ls_error(&s->diags, LS_NOLOC, "%s '%s' is an included circuit file; refusing to overwrite it", hit,
                     strcmp(hit, "--plot") == 0 ? cli->plot : strcmp(hit, "--write") == 0 ? cli->write : cli->output);
            code = LS_EXIT_USAGE;
        }
    }
    return code;
}

FILE *ls_out_open(ls_cli *cli)
{
    return cli->out_dest.f ? cli->out_dest.f : stdout;
}

int ls_out_close(ls_cli *cli, int code)
{
    char msg[700];
    if (code != LS_EXIT_OK && code != LS_EXIT_CHECK) {
        ls_out_abandon(cli);
        return code;
    }
    bool plot_open = cli->plot_dest.f != NULL, write_open = cli->write_dest.f != NULL;
    if (!cli->out_dest.f) {   /* not prepared (a caller of the command functions that wants stdout) */
        cli->out_dest.is_stdout = true;
        cli->out_dest.f = stdout;
    }
    if ((plot_open && ls_dest_commit(&cli->plot_dest, msg, sizeof msg) != 0) ||
        (write_open && ls_dest_commit(&cli->write_dest, msg, sizeof msg) != 0) ||
        ls_dest_commit(&cli->out_dest, msg, sizeof msg) != 0) {
        fprintf(stderr, "loadstack: error: %s\n", msg);
        ls_out_abandon(cli);
        return LS_EXIT_USAGE;
    }
    return code;
}

ls_report ls_report_for(const ls_session *s, FILE *out)
{
    const ls_cli *cli = s->cli;
    return (ls_report){.out = out, .fmt = cli->fmt, .ascii = cli->ascii, .sig = cli->digits, .sig_given = cli->digits_given,
                       .diags = s->diags.files || s->diags.n ? &s->diags : NULL, .command = cli->command,
                       .file = s->input_path, .sets = cli->sets, .nsets = cli->nsets};
}

int ls_report_done(const ls_report *rp, int code)
{
    if (!rp->nomem)
        return code;
    if (rp->nomem_bytes)
        fprintf(stderr, "loadstack: error: out of memory writing the report: %s (%zu bytes); no report was made\n",
                rp->nomem, rp->nomem_bytes);
    else
        fprintf(stderr, "loadstack: error: out of memory writing the report: %s; no report was made\n", rp->nomem);
    return LS_EXIT_UNSOLVABLE;
}

void ls_out_abandon(ls_cli *cli)
{
    ls_dest_discard(&cli->plot_dest);
    ls_dest_discard(&cli->write_dest);
    ls_dest_discard(&cli->out_dest);   /* standard output: only flushed */
}

/* ---- solve, check, demo ---------------------------------------------------------------------- */

/* Does warning `code` match --fail-on `spec` ("warnings", or CODE,CODE...)? */
static bool fails_on(const char *spec, const char *code)
{
    if (strcmp(spec, "warnings") == 0)
        return true;
    size_t n = strlen(code);
    for (const char *p = spec; (p = strstr(p, code)) != NULL; p += n)
        if ((p == spec || p[-1] == ',') && (p[n] == ',' || p[n] == 0))
            return true;
    return false;
}

/* The distinct codes of the warnings that --fail-on names, in the order they
 * first occur, into out (at most max); their number. */
static int failed_warnings(const ls_diags *d, const char *spec, const char **out, int max)
{
    int n = 0;
    for (int i = 0; spec && i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (g->sev != LS_SEV_WARNING || !g->code || !fails_on(spec, g->code))
            continue;
        bool seen = false;
        for (int k = 0; k < n && !seen; k++)
            seen = strcmp(out[k], g->code) == 0;
        if (!seen && n < max)
            out[n++] = g->code;
    }
    return n;
}

/* What a report on the same terminal as stderr already shows: every warning
 * (solve's Warnings table), or those --fail-on fails on (check's report). */
typedef struct shown_ctx {
    bool all;
    const ls_report *rp;
} shown_ctx;

static bool already_shown(const ls_diag *g, void *ctx)
{
    const shown_ctx *c = ctx;
    if (g->sev != LS_SEV_WARNING)
        return false;
    for (int k = 0; !c->all && g->code && k < c->rp->nfailed_warnings; k++)
        if (strcmp(c->rp->failed_warnings[k], g->code) == 0)
            return true;
    return c->all;
}

/* Are the report (on stdout) and stderr the same terminal?  Then a warning the
 * report shows is not shown on stderr again. */
static bool report_on_terminal(const ls_cli *cli)
{
    return (!cli->output || strcmp(cli->output, "-") == 0) && isatty(STDOUT_FILENO) && isatty(STDERR_FILENO);
}

static int run_report(ls_cli *cli, const char *path, const char *text, bool check_mode)
{
    ls_session s;
    int code = ls_session_load(&s, cli, path, text);
    if (code == LS_EXIT_OK)
        code = ls_session_solve(&s);
    if (code != LS_EXIT_OK) {
        ls_diags_print(&s.diags, stderr);
        ls_session_free(&s);
        return code;
    }
    ls_checks checks;
    bool with_rule = check_mode ? (s.nl.has_rule || cli->min_ratio > 0) : false;
    double t0 = now_s();
    if (ls_checks_run(&s.op, with_rule, &checks) != 0) {
        fprintf(stderr, "loadstack: error: out of memory\n");
        ls_session_free(&s);
        return LS_EXIT_UNSOLVABLE;
    }
    FILE *out = ls_out_open(cli);
    phase_done("checks", &t0);
    ls_report rp = ls_report_for(&s, out);
    const char *failed_codes[64];
    rp.failed_warnings = failed_codes;
    rp.nfailed_warnings = check_mode ? failed_warnings(&s.diags, cli->fail_on, failed_codes, 64) : 0;
    int page = LS_EXIT_OK;
    ls_results res = {0};
    if (check_mode)
        ls_report_check(&rp, &checks);
    else if (cli->fmt == FMT_HTML)
        page = ls_html_page(out, &s, NULL, NULL);   /* (it says why when it fails) */
    else if (ls_results_compute(&res, &s.op, ls_report_needs(&rp)) != 0)
        rp.nomem = "the port report, the ADC readings or the advice";
    else
        ls_report_solve(&rp, &res, &checks);
    ls_results_free(&res);
    code = check_mode && (checks.failed || rp.nfailed_warnings) ? LS_EXIT_CHECK : LS_EXIT_OK;
    if (page != LS_EXIT_OK)
        code = page;
    code = ls_out_close(cli, ls_session_verdict(&s, ls_report_done(&rp, code)));
    phase_done("report", &t0);
    /* a text report that lists warnings, on the terminal stderr is on: each once */
    shown_ctx sc = {.all = !check_mode, .rp = &rp};
    bool one_terminal = cli->fmt == FMT_TEXT && report_on_terminal(cli);
    ls_diags_print_sel(&s.diags, stderr, one_terminal ? already_shown : NULL, &sc);
    ls_checks_free(&checks);
    ls_session_free(&s);
    phase_done("free", &t0);
    return code;
}

int ls_cmd_solve(ls_cli *cli) { return run_report(cli, cli->pos[0], NULL, false); }
int ls_cmd_check(ls_cli *cli) { return run_report(cli, cli->pos[0], NULL, true); }
int ls_cmd_demo(ls_cli *cli) { return run_report(cli, "demo.stack", ls_demo_text, false); }
