/* fast_same.c — the parser's fast path for the commonest part statement
 * (ls_lex_simple_part) gives the same syntax tree and the same messages as
 * reading every statement token by token (ls_parse_string_general).
 *
 * Checked on every file of the directories given on the command line (the
 * example circuits, the bad-input corpus, the fuzz corpus and its
 * regressions) and on lines built here around the fast path's edges: every
 * way a line can look like `KIND NAME FROM -> TO NUMBER` and not be one.
 * The comparison is of the whole tree (kinds, every location, every string,
 * every number bit for bit) and of the printed diagnostics.
 *
 * usage: fast_same DIR...   (exit 0 when every text agrees, 1 otherwise) */
#define _GNU_SOURCE
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "lang/lexer.h"
#include "lang/parser.h"

static int failures, texts;

static bool same_loc(ls_loc a, ls_loc b)
{
    return a.file == b.file && a.start == b.start && a.end == b.end;
}

static bool same_str(const char *a, const char *b)
{
    return (!a && !b) || (a && b && strcmp(a, b) == 0);
}

/* Whether two expressions are the same tree (numbers bit for bit). */
static bool same_expr(const ls_expr *a, const ls_expr *b)
{
    if (!a || !b)
        return a == b;
    if (a->kind != b->kind || !same_loc(a->loc, b->loc))
        return false;
    switch (a->kind) {
    case E_NUM:
        return memcmp(&a->num, &b->num, sizeof a->num) == 0 && memcmp(&a->dims, &b->dims, sizeof a->dims) == 0;
    case E_NAME: return same_str(a->name, b->name);
    case E_NEG: return same_expr(a->a, b->a);
    case E_BIN: return a->op == b->op && same_loc(a->op_loc, b->op_loc) && same_expr(a->a, b->a) && same_expr(a->b, b->b);
    case E_CALL:
        if (a->op != b->op || a->nargs != b->nargs)
            return false;
        for (int i = 0; i < a->nargs; i++)
            if (!same_expr(a->args[i], b->args[i]))
                return false;
        return true;
    default: return false;
    }
}

static bool same_stmts(ls_stmt *const *a, ls_stmt *const *b, int n);

/* Whether two statements are the same, field by field of their kind. */
static bool same_stmt(const ls_stmt *a, const ls_stmt *b)
{
    if (a->kind != b->kind || a->cmp != b->cmp || a->arrow != b->arrow || !same_loc(a->loc, b->loc) ||
        !same_loc(a->text_loc, b->text_loc) || !same_loc(a->name_loc, b->name_loc) || a->nopts != b->nopts ||
        !same_str(a->name, b->name) || !same_str(a->kw, b->kw) || !same_expr(a->value, b->value))
        return false;
    for (int i = 0; i < a->nopts; i++) {
        const ls_opt *o = &a->opts[i], *q = &b->opts[i];
        if (!same_str(o->name, q->name) || !same_loc(o->name_loc, q->name_loc) || !same_expr(o->value, q->value) ||
            !same_expr(o->hi, q->hi))
            return false;
    }
    switch (a->kind) {
    case S_PART:
        return !a->arrow || (same_str(a->from, b->from) && same_str(a->to, b->to) &&
                             same_loc(a->from_loc, b->from_loc) && same_loc(a->to_loc, b->to_loc));
    case S_USE: return same_loc(a->kw_loc, b->kw_loc);
    case S_BLOCK:
        if (a->npins != b->npins || a->nbody != b->nbody)
            return false;
        for (int i = 0; i < a->npins; i++)
            if (!same_str(a->pins[i], b->pins[i]) || !same_loc(a->pin_locs[i], b->pin_locs[i]))
                return false;
        return same_stmts(a->body, b->body, a->nbody);
    case S_EXPECT: case S_RULE:
        return same_expr(a->lhs, b->lhs) && same_expr(a->rhs, b->rhs) && same_expr(a->rhs2, b->rhs2) &&
               same_expr(a->within, b->within);
    default: return true;
    }
}

static bool same_stmts(ls_stmt *const *a, ls_stmt *const *b, int n)
{
    for (int i = 0; i < n; i++)
        if (!same_stmt(a[i], b[i]))
            return false;
    return true;
}

/* One parse of text: its tree in *prog, its printed messages returned
 * (malloc'd; the caller frees). */
static char *parse(ls_arena *a, ls_diags *d, const char *name, const char *text, size_t len, bool general,
                   ls_program *prog)
{
    ls_arena_init(a);
    ls_diags_init(d, a);
    if (general)
        ls_parse_string_general(d, name, text, len, prog);
    else
        ls_parse_string(d, name, text, len, prog);
    char *out = NULL;
    size_t n = 0;
    FILE *f = open_memstream(&out, &n);
    if (f) {
        ls_diags_print(d, f);
        fprintf(f, "errors %d warnings %d failed %d\n", d->errors, d->warnings, a->failed);
        fclose(f);
    }
    return out;
}

/* Parse text both ways and count a failure when they differ. */
static void check_text(const char *name, const char *text, size_t len)
{
    ls_arena a1, a2;
    ls_diags d1, d2;
    ls_program p1, p2;
    char *m1 = parse(&a1, &d1, name, text, len, false, &p1);
    char *m2 = parse(&a2, &d2, name, text, len, true, &p2);
    texts++;
    bool ok = m1 && m2 && strcmp(m1, m2) == 0 && p1.n == p2.n && same_stmts(p1.stmts, p2.stmts, p1.n);
    if (!ok) {
        failures++;
        fprintf(stderr, "fast_same: %s: the fast path differs (statements %d / %d)\n--- fast:\n%s--- general:\n%s",
                name, p1.n, p2.n, m1 ? m1 : "", m2 ? m2 : "");
    }
    free(m1);
    free(m2);
    ls_diags_free(&d1);
    ls_diags_free(&d2);
    ls_arena_free(&a1);
    ls_arena_free(&a2);
}

/* Every regular file under dir (recursively). */
static void check_dir(const char *dir)
{
    DIR *dp = opendir(dir);
    if (!dp) {
        fprintf(stderr, "fast_same: cannot open %s\n", dir);
        failures++;
        return;
    }
    struct dirent *de;
    while ((de = readdir(dp)) != NULL) {
        if (de->d_name[0] == '.')
            continue;
        char path[4096];
        snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
        struct stat st;
        if (stat(path, &st) != 0)
            continue;
        if (S_ISDIR(st.st_mode)) {
            check_dir(path);
            continue;
        }
        if (!S_ISREG(st.st_mode) || st.st_size > (1 << 24))
            continue;
        size_t len;
        char *text = ls_read_file(path, &len);
        if (text)
            check_text(path, text, len);
        free(text);
    }
    closedir(dp);
}

/* Lines at the fast path's edges, each in a small circuit of its own, with
 * and without a newline at the end, and with a second copy of the line (a
 * clash of names). */
static void check_edges(void)
{
    static const char *const lines[] = {
        "resistor r1 a -> b 1", "resistor r1 a -> b 1.5", "resistor r1 a -> b 0.001", "resistor r1 a -> b 007",
        "resistor r1 a -> b 123456789012345", "resistor r1 a -> b 1234567890123456", "resistor r1 a -> b 0.1234567890123456",
        "resistor r1 a -> b 1e3", "resistor r1 a -> b 1E-3", "resistor r1 a -> b 1k", "resistor r1 a -> b 4k7",
        "resistor r1 a -> b 47R", "resistor r1 a -> b 0R47", "resistor r1 a -> b 1 ohm", "resistor r1 a -> b 1 k",
        "resistor r1 a -> b 1 V", "resistor r1 a -> b 1.", "resistor r1 a -> b 1..2", "resistor r1 a -> b 1 # note",
        "resistor r1 a -> b 1#note", "resistor r1 a -> b 1 \\\n tol=1%", "resistor r1 a -> b -1", "resistor r1 a -> b +1",
        "resistor r1 a -> b (1)", "resistor r1 a -> b 1 tol=1%", "resistor r1 a -> b 1\r", "resistor r1 a -> b 1\t ",
        "resistor r1 a -> b .5", "resistor r1 a -> b 1.5.3", "resistor r1 a -> b 1 2", "resistor r1 a -> b 1+1",
        "resistor r1 a -> b 1 + 1", "resistor r1 a -> b 1*2", "resistor r1 a -> b 1x", "resistor r1 a -> b 1_000",
        "resistor r1 a -> b 1e400", "resistor r1 a -> b 99999999999999999999999", "resistor r1 a -> b",
        "resistor r1 a -> b ", "resistor r1 a b 1", "resistor r1 a->b 1", "resistor r1 a ->b 1", "resistor r1 a-> b 1",
        "resistor r1 a - > b 1", "resistor r1 a -> -> b 1", "resistor r1 a -> b = 1", "resistor r1 a -> b=1",
        "resistor r1=1 a -> b 1", "resistor  r1\ta\t->\tb\t1", "resistor r1.x a -> b 1", "resistor r1 a.b -> c.d 1",
        "resistor r1 a._b -> c 1", "resistor _r a -> _b 1", "resistor r1 a. -> b 1", "resistor r1 a -> b. 1",
        "resistor r1 ground -> b 1", "resistor r1 g -> g 1", "resistor r1 r1 -> b 1", "resistor r1 a -> b 0",
        "resistr r1 a -> b 1", "resister r1 a -> b 1", "let r1 a -> b 1", "ground r1 a -> b 1", "title r1 a -> b 1",
        "use r1 a -> b 1", "end r1 a -> b 1", "block r1 a -> b 1", "include r1 a -> b 1", "expect r1 a -> b 1",
        "capacitor c1 a -> b 1", "voltage v1 a -> b 1", "current i1 a -> b 1", "diode d1 a -> b 1",
        "resistor r\xCE\xA9 a -> b 1", "resistor r1 a -> b 1\xC2\xB5", "resistor r1 a -> b 1 \xCE\xA9",
        "resistor r1 a -> b \xFF", "resistor r1 a\xFF -> b 1", "resistor r1 a -> b 1\x01", "\xEF\xBB\xBFresistor r1 a -> b 1",
        "resistor r1 a -> b 1 1", "resistor r1 a -> b 1\n  \n", "resistor", "resistor r1", "resistor r1 a",
        "resistor r1 a ->", "resistor r1 a -> 1 1", "resistor 1 a -> b 1", "resistor r1 1 -> b 1",
    };
    const char *head = "ground g\nvoltage vs g -> a 1\n";
    char buf[512];
    for (size_t i = 0; i < sizeof lines / sizeof *lines; i++) {
        for (int v = 0; v < 4; v++) {
            int n;
            switch (v) {
            case 0: n = snprintf(buf, sizeof buf, "%s%s\n", head, lines[i]); break;
            case 1: n = snprintf(buf, sizeof buf, "%s%s", head, lines[i]); break;
            case 2: n = snprintf(buf, sizeof buf, "%s%s\n%s\n", head, lines[i], lines[i]); break;
            default: n = snprintf(buf, sizeof buf, "block cell x y\n%s\nend\n%s\n", lines[i], lines[i]); break;
            }
            char name[64];
            snprintf(name, sizeof name, "edge%zu-%d.stack", i, v);
            check_text(name, buf, (size_t)n);
        }
    }
    /* a NUL byte inside the line and at its end */
    static const char nul1[] = "ground g\nresistor r1 a -> b 1\0 2\n", nul2[] = "ground g\nresistor r1 a\0 -> b 1\n";
    check_text("nul1.stack", nul1, sizeof nul1 - 1);
    check_text("nul2.stack", nul2, sizeof nul2 - 1);
    /* lines just under and over the lexer's limit (LS_MAX_LINE_BYTES) */
    for (int over = -2; over <= 2; over++) {
        size_t nl = LS_MAX_LINE_BYTES + (size_t)over - 20;
        char *t = malloc(nl + 64);
        if (!t)
            continue;
        size_t k = (size_t)sprintf(t, "resistor r");
        memset(t + k, 'x', nl);
        k += nl;
        k += (size_t)sprintf(t + k, " a -> b 1\nresistor r2 a -> b 2\n");
        check_text("long.stack", t, k);
        free(t);
    }
}

int main(int argc, char **argv)
{
    check_edges();
    for (int i = 1; i < argc; i++)
        check_dir(argv[i]);
    printf("fast_same: %d texts, %d differ\n", texts, failures);
    return failures || texts < 400 ? 1 : 0;
}
