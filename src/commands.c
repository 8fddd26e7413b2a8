/* commands.c — loading a circuit for a command, safe output, and the solve,
 * check and demo commands. */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"
#include "elab.h"
#include "parser.h"

/* ---- numbers on the command line ------------------------------------------------------ */

static bool const_eval(const ls_expr *e, double *v)
{
    double a, b;
    switch (e->kind) {
    case E_NUM: *v = e->num; return true;
    case E_NEG: if (!const_eval(e->a, &a)) return false; *v = -a; return true;
    case E_BIN:
        if (!const_eval(e->a, &a) || !const_eval(e->b, &b))
            return false;
        *v = ls_apply_op(e->op, a, b);
        return isfinite(*v);
    default: return false;
    }
}

bool ls_cli_number(const char *text, double *v)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_expr *e = ls_parse_expr_string(&d, "argument", text, false);
    bool ok = e && const_eval(e, v);
    ls_diags_free(&d);
    ls_arena_free(&a);
    return ok;
}

/* ---- sessions ------------------------------------------------------------------------ */

static int parse_sets(ls_session *s, ls_setting *sets)
{
    ls_cli *cli = s->cli;
    for (int i = 0; i < cli->nsets; i++) {
        const char *eq = strchr(cli->sets[i], '=');
        char *name = ls_arena_strndup(&s->arena, cli->sets[i], (size_t)(eq - cli->sets[i]));
        sets[i].name = name;
        sets[i].value = ls_parse_expr_string(&s->diags, "--set", eq + 1, false);
        sets[i].loc = (ls_loc){s->diags.nfiles - 1, 0, (unsigned)strlen(eq + 1)};
        sets[i].used = false;
        if (!sets[i].value)
            return -1;
    }
    return 0;
}

int ls_session_load(ls_session *s, ls_cli *cli, const char *path, const char *text)
{
    memset(s, 0, sizeof *s);
    s->cli = cli;
    s->input_path = path;
    ls_arena_init(&s->arena);
    ls_diags_init(&s->diags, &s->arena);
    int errs;
    if (text)
        errs = ls_parse_string(&s->diags, path, text, strlen(text), &s->prog);
    else
        errs = ls_parse_file(&s->diags, path, &s->prog);
    if (errs)
        return LS_EXIT_USAGE;
    ls_setting sets[LS_MAX_SETS];
    if (parse_sets(s, sets) != 0)
        return LS_EXIT_USAGE;
    if (ls_elaborate(&s->prog, &s->diags, sets, cli->nsets, &s->nl))
        return LS_EXIT_USAGE;
    return LS_EXIT_OK;
}

int ls_session_solve(ls_session *s)
{
    ls_options o = {.solver = s->cli->solver, .min_ratio = s->cli->min_ratio, .derate = s->cli->derate};
    s->have_op = true;
    return ls_op_solve(&s->op, &s->nl, &o);
}

void ls_session_free(ls_session *s)
{
    if (s->have_op)
        ls_op_free(&s->op);
    ls_netlist_free(&s->nl);
    ls_diags_free(&s->diags);
    ls_arena_free(&s->arena);
}

/* ---- output, written whole or not at all ------------------------------------------------- */

static bool same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    return a && b && stat(a, &sa) == 0 && stat(b, &sb) == 0 && sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
}

FILE *ls_out_open(ls_session *s, char **tmp_path)
{
    const char *out = s->cli->output;
    *tmp_path = NULL;
    if (!out || strcmp(out, "-") == 0)
        return stdout;
    if (same_file(out, s->input_path)) {
        fprintf(stderr, "loadstack: error: --output '%s' is the input circuit; refusing to overwrite it\n", out);
        return NULL;
    }
    for (int i = 0; i < s->diags.nfiles; i++)
        if (same_file(out, s->diags.files[i].path)) {
            fprintf(stderr, "loadstack: error: --output '%s' is an included circuit file; refusing to overwrite it\n",
                    out);
            return NULL;
        }
    size_t n = strlen(out) + 16;
    char *tmp = malloc(n);
    if (!tmp)
        return NULL;
    snprintf(tmp, n, "%s.tmpXXXXXX", out);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        fprintf(stderr, "loadstack: error: cannot write '%s': %s\n", out, strerror(errno));
        free(tmp);
        return NULL;
    }
    fchmod(fd, 0644);
    FILE *f = fdopen(fd, "w");
    if (!f) {
        close(fd);
        unlink(tmp);
        free(tmp);
        return NULL;
    }
    *tmp_path = tmp;
    return f;
}

int ls_out_close(ls_session *s, FILE *f, char *tmp, int code)
{
    const char *out = s->cli->output;
    if (f == stdout) {
        if (fflush(stdout) != 0 || ferror(stdout)) {
            fprintf(stderr, "loadstack: error: writing the report failed: %s\n", strerror(errno));
            return LS_EXIT_USAGE;
        }
        return code;
    }
    bool bad = fflush(f) != 0 || ferror(f) || fsync(fileno(f)) != 0;
    int err = errno;
    bad |= fclose(f) != 0;
    if (!bad && rename(tmp, out) != 0) {
        err = errno;
        bad = true;
    }
    if (bad) {
        unlink(tmp);
        fprintf(stderr, "loadstack: error: cannot write '%s': %s\n", out, strerror(err));
        code = LS_EXIT_USAGE;
    }
    free(tmp);
    return code;
}

/* ---- solve, check, demo ---------------------------------------------------------------------- */

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
    if (ls_checks_run(&s.op, with_rule, &checks) != 0) {
        fprintf(stderr, "loadstack: error: out of memory\n");
        ls_session_free(&s);
        return LS_EXIT_UNSOLVABLE;
    }
    char *tmp;
    FILE *out = ls_out_open(&s, &tmp);
    if (!out) {
        ls_checks_free(&checks);
        ls_session_free(&s);
        return LS_EXIT_USAGE;
    }
    ls_report rp = {.out = out, .fmt = cli->fmt, .ascii = cli->ascii, .sig = 4, .diags = &s.diags};
    if (check_mode)
        ls_report_check(&rp, &s.op, &checks);
    else
        ls_report_solve(&rp, &s.op, &checks);
    code = check_mode && checks.failed ? LS_EXIT_CHECK : LS_EXIT_OK;
    code = ls_out_close(&s, out, tmp, code);
    ls_diags_print(&s.diags, stderr);
    ls_checks_free(&checks);
    ls_session_free(&s);
    return code;
}

int ls_cmd_solve(ls_cli *cli) { return run_report(cli, cli->pos[0], NULL, false); }
int ls_cmd_check(ls_cli *cli) { return run_report(cli, cli->pos[0], NULL, true); }
int ls_cmd_demo(ls_cli *cli) { return run_report(cli, "demo.stack", ls_demo_text, false); }
