/* main.c — the loadstack program: arguments, help, dispatch, exit codes.
 * Nothing else lives here. */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "base/diag.h"
#include "base/suggest.h"
#include "lang/parser.h"
#include "parts/parts.h"
#include "solve/solver.h"
#ifdef LS_MPI_PROGRAM
#include "cli/mpi_share.h"
#include "solve/amg.h"
#endif

#ifndef LS_VERSION
#define LS_VERSION "0.0.0"
#endif

/* Which commands take an option: every command, every command that reads a
 * circuit (all but pick), or the commands named in `cmds`. */
typedef enum opt_scope { FOR_ALL, FOR_CIRCUIT, FOR_LISTED } opt_scope;

/* What an option's value is, and where it goes in ls_cli. */
typedef enum val_type {
    VAL_FLAG,       /* no value: the bool at `field` becomes true */
    VAL_TEXT,       /* any text: the const char * at `field` */
    VAL_WORD,       /* one of `words`: the const char * at `field` */
    VAL_ENUM,       /* one of `words`: the matching `values` entry into the enum (int-sized) at `field` */
    VAL_POSITIVE,   /* a number > 0, units and SI prefixes allowed: the double at `field` */
    VAL_INT,        /* a decimal whole number in lo..hi: the int at `field` */
    VAL_COUNT,      /* a whole number in lo..hi, SI prefixes allowed (100k): the long at `field` */
    VAL_CALL,       /* read by `call` (the value's checks are its own) */
} val_type;

typedef struct optdef {
    const char *name;
    val_type type;
    size_t field;           /* offsetof(ls_cli, ...); unused for VAL_CALL */
    opt_scope scope;
    const char *cmds;       /* FOR_LISTED: the commands, separated by spaces */
    const char *help;
    const char *bad;        /* the error for a value of the wrong kind, with one %s for the value */
    const char *const *words;   /* VAL_WORD, VAL_ENUM: the words allowed, NULL-terminated */
    const int *values;      /* VAL_ENUM: the value of each word */
    long lo, hi;            /* VAL_INT, VAL_COUNT: the range */
    size_t given;           /* when not 0, offsetof a bool that becomes true when the option is given */
    int (*call)(ls_cli *cli, const char *val);   /* VAL_CALL */
} optdef;

static int opt_set(ls_cli *cli, const char *val);
static int opt_solver(ls_cli *cli, const char *val);
static int opt_seed(ls_cli *cli, const char *val);
static int fail_on(ls_cli *cli, const char *val);

static const char *const format_words[] = {"text", "json", "csv", "html", NULL};
static const int format_values[] = {FMT_TEXT, FMT_JSON, FMT_CSV, FMT_HTML};
static const char *const dist_words[] = {"uniform", "normal", NULL};
static const char *const goal_words[] = {"margin", "yield", "current", NULL};

/* The commands compiled only into the test program loadstack_toy
 * (tests/house/tally_cmd.c) name themselves in the options they take here. */
#ifdef LS_TEST_COMMANDS
#define TEST_TOP " tally"
#else
#define TEST_TOP ""
#endif

#define F(member) offsetof(ls_cli, member)

/* Every option, in the order of the help texts. */
static const optdef options[] = {
    {.name = "set", .type = VAL_CALL, .scope = FOR_CIRCUIT,
     .help = "NAME=VALUE  override a top-level let (repeatable)", .call = opt_set},
    {.name = "format", .type = VAL_ENUM, .field = F(fmt), .scope = FOR_ALL,
     .help = "text|json|csv|html  report format (default text; html: solve, demo and chain)",
     .bad = "--format takes text, json, csv or html, not '%s'", .words = format_words, .values = format_values},
    {.name = "output", .type = VAL_TEXT, .field = F(output), .scope = FOR_ALL,
     .help = "FILE  write the report to FILE (whole or not at all)"},
    {.name = "min-ratio", .type = VAL_POSITIVE, .field = F(min_ratio), .scope = FOR_CIRCUIT,
     .help = "X  minimum zin/zout for a port to pass (default: the circuit's rule, else 10)",
     .bad = "--min-ratio takes a positive number, not '%s'"},
    {.name = "ascii", .type = VAL_FLAG, .field = F(ascii), .scope = FOR_ALL,
     .help = "plain ASCII output (u for micro, ohm for the omega sign)"},
    {.name = "digits", .type = VAL_INT, .field = F(digits), .scope = FOR_ALL,
     .help = "N  significant digits of numbers in text (default 4)",
     .bad = "--digits takes a whole number from 1 to 17, not '%s'", .lo = 1, .hi = 17, .given = F(digits_given)},
    {.name = "quiet", .type = VAL_FLAG, .field = F(quiet), .scope = FOR_ALL, .help = "no progress lines on stderr"},
    {.name = "solver", .type = VAL_CALL, .scope = FOR_CIRCUIT,
     .help = "auto|dense|sparse|iterative  linear solver (default auto)", .call = opt_solver},
    {.name = "derate", .type = VAL_POSITIVE, .field = F(derate), .scope = FOR_CIRCUIT,
     .help = "F  multiply power ratings by F before comparing (default 1)",
     .bad = "--derate takes a positive factor, not '%s'"},
    {.name = "help", .type = VAL_FLAG, .field = F(help), .scope = FOR_ALL, .help = "show help for the command"},
    {.name = "version", .type = VAL_FLAG, .field = F(version), .scope = FOR_ALL, .help = "print the version"},
    {.name = "fail-on", .type = VAL_CALL, .scope = FOR_LISTED, .cmds = "check",
     .help = "CODE,...|warnings  also fail (exit 1) when one of these warnings occurs", .call = fail_on},
    {.name = "load", .type = VAL_TEXT, .field = F(load), .scope = FOR_LISTED, .cmds = "thevenin",
     .help = "R  voltage and current into a load resistance R"},
    {.name = "meter", .type = VAL_TEXT, .field = F(meter), .scope = FOR_LISTED, .cmds = "thevenin",
     .help = "R  what a meter of input resistance R would read"},
    {.name = "what-if", .type = VAL_FLAG, .field = F(what_if), .scope = FOR_LISTED, .cmds = "sag",
     .help = "add the table of each port opened and each part removed in turn"},
    {.name = "trials", .type = VAL_COUNT, .field = F(trials), .scope = FOR_LISTED, .cmds = "tol fit",
     .help = "N  Monte Carlo trials, SI prefixes allowed: 100k (default: tol 10000, fit 2000 per finalist)",
     .bad = "--trials takes a whole number from 1 to 10M (SI prefixes allowed: 100k), not '%s'", .lo = 1,
     .hi = 10000000},
    {.name = "seed", .type = VAL_CALL, .scope = FOR_LISTED, .cmds = "tol fit",
     .help = "S  random seed, a whole number (default 1): the same seed gives the same answer", .call = opt_seed},
    {.name = "dist", .type = VAL_WORD, .field = F(dist), .scope = FOR_LISTED, .cmds = "tol fit",
     .help = "uniform|normal  how a part spreads within tol= (normal: tol is 3 sigma)",
     .bad = "--dist takes uniform or normal, not '%s'", .words = dist_words},
    {.name = "plot", .type = VAL_TEXT, .field = F(plot), .scope = FOR_LISTED, .cmds = "tol sweep chain",
     .help = "FILE.svg|FILE.png|FILE.pdf  draw a picture (tol: histogram; sweep: the curves; chain: the stages)"},
    {.name = "plot-all", .type = VAL_FLAG, .field = F(plot_all), .scope = FOR_LISTED, .cmds = "solve chain demo",
     .help = "with --format html: tolerance histograms even when no part has tol="},
    {.name = "steps", .type = VAL_INT, .field = F(steps), .scope = FOR_LISTED, .cmds = "sweep",
     .help = "N  points from FROM to TO, both included (default 51)",
     .bad = "--steps takes a whole number from 2 to 100000, not '%s'", .lo = 2, .hi = 100000},
    {.name = "log", .type = VAL_FLAG, .field = F(log), .scope = FOR_LISTED, .cmds = "sweep",
     .help = "space the points evenly on a log scale (FROM and TO > 0)"},
    {.name = "series", .type = VAL_TEXT, .field = F(series), .scope = FOR_LISTED, .cmds = "pick fit",
     .help = "E6|E12|E24|E48|E96|E192  standard value series (default E24; fit: for parts without snap=)"},
    {.name = "total", .type = VAL_TEXT, .field = F(total), .scope = FOR_LISTED, .cmds = "pick",
     .help = "LO..HI  range of rtop + rbot (default 1k..1M)"},
    {.name = "zout", .type = VAL_TEXT, .field = F(zout), .scope = FOR_LISTED, .cmds = "pick",
     .help = "MAX  largest acceptable rtop || rbot"},
    {.name = "goal", .type = VAL_WORD, .field = F(goal), .scope = FOR_LISTED, .cmds = "fit",
     .help = "margin|yield|current  what the best candidate has most of (least current) (default margin)",
     .bad = "--goal takes margin, yield or current, not '%s'", .words = goal_words},
    {.name = "top", .type = VAL_INT, .field = F(top), .scope = FOR_LISTED, .cmds = "fit" TEST_TOP,
     .help = "K  candidates to report, best first (default 5)",
     .bad = "--top takes a whole number from 1 to 1000, not '%s'", .lo = 1, .hi = 1000},
    {.name = "max-solves", .type = VAL_COUNT, .field = F(max_solves), .scope = FOR_LISTED, .cmds = "fit",
     .help = "N  candidate solves branch and bound may spend, SI prefixes allowed (default 200k)",
     .bad = "--max-solves takes a whole number from 1 to 1G (SI prefixes allowed: 50k), not '%s'", .lo = 1,
     .hi = 1000000000},
    {.name = "write", .type = VAL_TEXT, .field = F(write), .scope = FOR_LISTED, .cmds = "fit",
     .help = "FILE.stack  a copy of the circuit with the chosen values (never the input)"},
    {.name = "symbols", .type = VAL_TEXT, .field = F(symbols), .scope = FOR_LISTED, .cmds = "formula",
     .help = "A,B,...  keep only these parts' values and lets as symbols (the rest as numbers)"},
    {.name = "ideal", .type = VAL_FLAG, .field = F(ideal), .scope = FOR_LISTED, .cmds = "formula",
     .help = "take every finite op-amp gain to infinity (the formula designers write first)"},
};

#undef F

/* VAL_ENUM writes through an int: the enums it fills must be int-sized. */
_Static_assert(sizeof(ls_format) == sizeof(int), "ls_format is written as an int");

typedef struct cmd {
    const char *name;
    const char *usage;
    const char *summary;
    const char *example;
    int (*run)(ls_cli *);
    int npos;
    bool circuit;           /* reads a circuit (its first argument is FILE, or the demo's) */
} cmd;

static const cmd commands[] = {
    {"solve", "solve FILE", "operating point: nodes, parts, ports (loading report), op-amps, checks and warnings",
     "loadstack solve circuits/demo.stack --format json", ls_cmd_solve, 1, true},
    {"check", "check FILE", "evaluate every expect and rule; exit 1 if any fails (for a design's CI)",
     "loadstack check circuits/demo.stack --fail-on over-rating && echo design ok", ls_cmd_check, 1, true},
    {"sag", "sag FILE NODE", "which connections (ports) make NODE sag, and by how much each",
     "loadstack sag circuits/demo.stack adc_in", ls_cmd_sag, 2, true},
    {"thevenin", "thevenin FILE NODE|PORT", "Thevenin and Norton equivalent at NODE, or of each side of PORT",
     "loadstack thevenin circuits/demo.stack probe --meter 10M", ls_cmd_thevenin, 2, true},
    {"influence", "influence FILE QUANTITY", "how much each part's main value moves QUANTITY (adjoint method)",
     "loadstack influence circuits/demo.stack adc_in", ls_cmd_influence, 2, true},
    {"tol", "tol FILE QUANTITY", "tolerance analysis from the parts' tol=: worst case, Monte Carlo spread and yield",
     "loadstack tol circuits/demo.stack adc_in --trials 100k --plot adc_in.svg", ls_cmd_tol, 2, true},
    {"sweep", "sweep FILE LET FROM TO QUANTITY...", "sweep a top-level let and tabulate (or plot) quantities",
     "loadstack sweep circuits/demo.stack moisture_r 1k 100k adc_in --log --plot sweep.svg", ls_cmd_sweep, 5, true},
    {"formula", "formula FILE QUANTITY", "QUANTITY as an exact formula of the parts' values (small circuits)",
     "loadstack formula circuits/strain_bridge.stack out --symbols vex,strain", ls_cmd_formula, 2, true},
    {"pick", "pick ratio R", "best pairs of standard (IEC 60063) values for a divider ratio R = rbot/(rtop+rbot)",
     "loadstack pick ratio 0.66 --series E24 --total 10k..100k", ls_cmd_pick, 2, false},
    {"fit", "fit FILE", "standard values for the parts marked free= that meet every expect, rule and port verdict",
     "loadstack fit circuits/level_shifter.stack --series E24 --write chosen.stack", ls_cmd_fit, 1, true},
    {"chain", "chain FILE", "the stages in signal order and every connection between them, with its verdict",
     "loadstack chain circuits/demo.stack --plot chain.png", ls_cmd_chain, 1, true},
    {"demo", "demo", "the built-in demo circuit, solved (needs no file)", "loadstack demo", ls_cmd_demo, 0, true},
#ifdef LS_TEST_COMMANDS
    {"tally", "tally FILE", "the power every part absorbs, the largest first, and their sum",
     "loadstack_toy tally circuits/demo.stack --top 5", ls_cmd_tally, 1, true},
#endif
};

static const int ncommands = (int)(sizeof commands / sizeof commands[0]);
static const int noptions = (int)(sizeof options / sizeof options[0]);

/* Does command c (NULL: before the command word) take option o?  Before the
 * command word only the options every command takes are known. */
static bool opt_for(const optdef *o, const cmd *c)
{
    if (o->scope == FOR_ALL)
        return true;
    if (!c)
        return false;
    if (o->scope == FOR_CIRCUIT)
        return c->circuit;
    size_t n = strlen(c->name);
    for (const char *w = o->cmds; (w = strstr(w, c->name)) != NULL; w += n)
        if ((w == o->cmds || w[-1] == ' ') && (w[n] == ' ' || w[n] == 0))
            return true;
    return false;
}

static void usage_all(FILE *f)
{
    fprintf(f, "loadstack %s — DC loading analysis of analog signal chains\n\n", LS_VERSION);
    fputs("usage: loadstack COMMAND [ARGS] [OPTIONS]\n\ncommands:\n", f);
    for (int i = 0; i < ncommands; i++) {
        if (strlen(commands[i].usage) > 23) /* a long usage gets a line of its own */
            fprintf(f, "  %s\n  %-23s %s\n", commands[i].usage, "", commands[i].summary);
        else
            fprintf(f, "  %-23s %s\n", commands[i].usage, commands[i].summary);
    }
    fputs("\noptions for every command:\n", f);
    for (int i = 0; i < noptions; i++)
        if (options[i].scope == FOR_ALL)
            fprintf(f, "  --%-11s %s\n", options[i].name, options[i].help);
    fputs("\noptions for every command that reads a circuit (all but pick):\n", f);
    for (int i = 0; i < noptions; i++)
        if (options[i].scope == FOR_CIRCUIT)
            fprintf(f, "  --%-11s %s\n", options[i].name, options[i].help);
    fputs("\nFILE '-' reads the circuit from standard input; '--' ends the options.\n"
          "\nexit codes: 0 done (checks pass), 1 a check failed (check) or nothing fits (fit),\n"
          "            2 bad usage or circuit file,\n"
          "            3 the circuit cannot be solved\n"
          "\nexamples:\n  loadstack demo\n  loadstack solve circuits/demo.stack --set vsupply=3.3V\n"
          "  loadstack check circuits/demo.stack --format json\n"
          "\n'loadstack COMMAND --help' shows the options of one command.\n",
          f);
}

/* Index of --fail-on in the option table. */
static int k_fail_on(void)
{
    int k = 0;
    while (strcmp(options[k].name, "fail-on") != 0)
        k++;
    return k;
}

/* A command's help: its usage, what it does, and only the options it takes. */
static void usage_cmd(FILE *f, const cmd *c)
{
    fprintf(f, "usage: loadstack %s [OPTIONS]\n\n%s\n\noptions:\n", c->usage, c->summary);
    for (int i = 0; i < noptions; i++)
        if (opt_for(&options[i], c))
            fprintf(f, "  --%-11s %s\n", options[i].name, options[i].help);
    if (opt_for(&options[k_fail_on()], c)) {
        fputs("\nwarning codes for --fail-on (docs/warnings.md explains each):\n  warning codes: ", f);
        for (int i = 0; ls_warning_codes[i]; i++)
            fprintf(f, "%s%s", i ? "," : "", ls_warning_codes[i]);
        fputc('\n', f);
    }
    if (c->circuit && c->npos > 0)
        fputs("\nFILE '-' reads the circuit from standard input (includes then resolve from the\n"
              "current directory); '--' ends the options.\n", f);
    fprintf(f, "\nexample:\n  %s\n", c->example);
}

static const cmd *find_cmd(const char *name)
{
    for (int i = 0; i < ncommands; i++)
        if (strcmp(commands[i].name, name) == 0)
            return &commands[i];
    return NULL;
}

/* The command (commands_too) or the option of command c nearest to word,
 * within three edits, or NULL. */
static const char *nearest(const char *word, bool commands_too, const cmd *c)
{
    ls_suggest near;
    ls_suggest_init(&near, word, 4);
    for (int i = 0; commands_too && i < ncommands; i++)
        ls_suggest_try(&near, commands[i].name);
    for (int i = 0; !commands_too && i < noptions; i++)
        if (opt_for(&options[i], c))
            ls_suggest_try(&near, options[i].name);
    return near.best;
}

/* Say what is wrong with the command line (printf-style) and return the
 * usage exit code. */
__attribute__((format(printf, 1, 2))) static int bad_usage(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("loadstack: error: ", stderr);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fputs("\n(try 'loadstack --help')\n", stderr);
    return LS_EXIT_USAGE;
}

/* Parse a decimal whole number in lo..hi into *v; false if it is not one. */
static bool whole_number(const char *s, long lo, long hi, long *v)
{
    char *end;
    errno = 0;
    long x = strtol(s, &end, 10);
    if (!*s || *end || errno || x < lo || x > hi)
        return false;
    *v = x;
    return true;
}

/* A count written as a number with an optional SI prefix (100k, 1M, 2.5k,
 * 1e4) that is a whole number in lo..hi, into *v. */
static bool count_si(const char *s, long lo, long hi, long *v)
{
    double x;
    if (whole_number(s, lo, hi, v))
        return true;
    if (!ls_cli_number(s, &x) || x != floor(x) || x < (double)lo || x > (double)hi)
        return false;
    *v = (long)x;
    return true;
}

/* Is `code` a warning code the program gives? */
static bool known_code(const char *code)
{
    for (int i = 0; ls_warning_codes[i]; i++)
        if (strcmp(ls_warning_codes[i], code) == 0)
            return true;
    return false;
}

/* The warning code nearest a misspelt one, or NULL. */
static const char *nearest_code(const char *code)
{
    ls_suggest near;
    ls_suggest_init(&near, code, 4);
    for (int i = 0; ls_warning_codes[i]; i++)
        ls_suggest_try(&near, ls_warning_codes[i]);
    return near.best;
}

/* --fail-on CODE,...|warnings: every code must be one the program gives. */
static int fail_on(ls_cli *cli, const char *val)
{
    cli->fail_on = val;
    if (strcmp(val, "warnings") == 0)
        return 0;
    const char *p = val;
    while (true) {
        const char *comma = strchr(p, ',');
        size_t n = comma ? (size_t)(comma - p) : strlen(p);
        char code[64];
        if (n == 0 || n >= sizeof code)
            return bad_usage("--fail-on takes warning codes separated by commas, or 'warnings'; got '%s'%s", val, "");
        memcpy(code, p, n);
        code[n] = 0;
        if (!known_code(code)) {
            const char *near = nearest_code(code);
            if (near)
                return bad_usage("--fail-on: no warning has the code '%s'; did you mean '%s'?", code, near);
            return bad_usage("--fail-on: no warning has the code '%s' (the codes are listed in docs/warnings.md)%s",
                             code, "");
        }
        if (!comma)
            return 0;
        p = comma + 1;
    }
}

/* --set NAME=VALUE, repeatable. */
static int opt_set(ls_cli *cli, const char *val)
{
    if (cli->nsets == LS_MAX_SETS)
        return bad_usage("too many --set options (at most %s)%s", "256", "");
    if (!strchr(val, '='))
        return bad_usage("--set takes NAME=VALUE, got '%s'%s", val, "");
    cli->sets[cli->nsets++] = val;
    return 0;
}

/* --solver: the iterative one only in the build that has it, and saying so. */
static int opt_solver(ls_cli *cli, const char *val)
{
    if (strcmp(val, "auto") == 0) cli->solver = LS_CHOOSE_AUTO;
    else if (strcmp(val, "dense") == 0) cli->solver = LS_CHOOSE_DENSE;
    else if (strcmp(val, "sparse") == 0) cli->solver = LS_CHOOSE_SPARSE;
#ifdef LS_HAVE_AMG
    else if (strcmp(val, "iterative") == 0) cli->solver = LS_CHOOSE_ITERATIVE;
    else return bad_usage("--solver takes auto, dense, sparse or iterative, not '%s'%s", val, "");
#else
    else if (strcmp(val, "iterative") == 0)
        return bad_usage("--solver iterative needs the build with the iterative solver (meson setup -Dmpi=enabled, "
                         "with libhypre-dev and libopenmpi-dev); this one has auto, dense and sparse%s", "");
    else return bad_usage("--solver takes auto, dense or sparse, not '%s'%s", val, "");
#endif
    return 0;
}

/* --seed: a whole number 0 or more, the full 64 bits. */
static int opt_seed(ls_cli *cli, const char *val)
{
    char *end;
    errno = 0;
    cli->seed = strtoull(val, &end, 10);
    if (!*val || *end || errno || strchr(val, '-'))
        return bad_usage("--seed takes a whole number 0 or more, not '%s'%s", val, "");
    return 0;
}

/* The index of val among words (NULL-terminated), or -1. */
static int word_index(const char *const *words, const char *val)
{
    for (int i = 0; words[i]; i++)
        if (strcmp(words[i], val) == 0)
            return i;
    return -1;
}

/* Say that val is no value of option o (its `bad` message); the usage code. */
static int bad_value(const optdef *o, const char *val)
{
    return bad_usage(o->bad, val);
}

/* Store option o's value val (NULL for a flag) into cli, by its type in the
 * table.  Returns 0, or the usage exit code after saying what is wrong. */
static int set_option(ls_cli *cli, const optdef *o, const char *val)
{
    char *at = (char *)cli + o->field;
    long n;
    int k;
    switch (o->type) {
    case VAL_FLAG:
        *(bool *)at = true;
        break;
    case VAL_TEXT:
        *(const char **)at = val;
        break;
    case VAL_WORD:
        if (word_index(o->words, val) < 0)
            return bad_value(o, val);
        *(const char **)at = val;
        break;
    case VAL_ENUM:
        if ((k = word_index(o->words, val)) < 0)
            return bad_value(o, val);
        *(int *)at = o->values[k];
        break;
    case VAL_POSITIVE:
        if (!ls_cli_number(val, (double *)at) || !(*(double *)at > 0))
            return bad_value(o, val);
        break;
    case VAL_INT:
        if (!whole_number(val, o->lo, o->hi, &n))
            return bad_value(o, val);
        *(int *)at = (int)n;
        break;
    case VAL_COUNT:
        if (!count_si(val, o->lo, o->hi, (long *)at))
            return bad_value(o, val);
        break;
    case VAL_CALL:
        return o->call(cli, val);
    }
    if (o->given)
        *(bool *)((char *)cli + o->given) = true;
    return 0;
}

/* The command of the command line, wherever it stands among the options (so
 * that an option of that command may come before it), or NULL.  An option
 * that takes a value and is written without '=' skips the next word. */
static const cmd *command_word(int argc, char **argv)
{
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (strcmp(a, "--") == 0)
            return i + 1 < argc ? find_cmd(argv[i + 1]) : NULL;
        if (strncmp(a, "--", 2) == 0) {
            const char *name = a + 2;
            size_t len = strcspn(name, "=");
            for (int k = 0; k < noptions; k++)
                if (strlen(options[k].name) == len && strncmp(options[k].name, name, len) == 0 &&
                    options[k].type != VAL_FLAG &&
                    !name[len])
                    i++;
            continue;
        }
        if (a[0] == '-' && a[1])
            continue;
        return find_cmd(a);
    }
    return NULL;
}

/* Read the circuit from standard input for FILE '-' (once: sweep loads the
 * circuit again for every point).  Returns 0 or an exit code. */
static int read_stdin(ls_cli *cli)
{
    size_t len = 0;
    char *text = ls_read_stream(stdin, &len);
    if (!text) {
        fprintf(stderr, "loadstack: error: cannot read the circuit from standard input: %s\n", strerror(errno));
        return LS_EXIT_USAGE;
    }
    cli->stdin_text = text;
    cli->stdin_len = len;
    return 0;
}

/* The defaults of every option that has one (docs/cli.md). */
static void cli_defaults(ls_cli *cli, const ls_share *share)
{
    memset(cli, 0, sizeof *cli);
    cli->derate = 1;
    cli->seed = 1;
    cli->trials = 0;   /* each command's default (tol 10000, fit 2000) */
    cli->steps = 51;
    cli->digits = 4;
    cli->share = share;
}

/* One "--name" or "--name=value" argument at argv[*i] (taking the next word as
 * its value when it needs one and has no '='), for command c (NULL: not yet
 * named; cw: the command found anywhere on the line).  Returns 0 or an exit
 * code after saying what is wrong. */
static int long_option(ls_cli *cli, int argc, char **argv, int *i, const cmd *c)
{
    const char *a = argv[*i];
    char name[64];
    const char *eq = strchr(a + 2, '=');
    size_t len = eq ? (size_t)(eq - a - 2) : strlen(a + 2);
    if (len >= sizeof name)
        len = sizeof name - 1;
    memcpy(name, a + 2, len);
    name[len] = 0;
    const optdef *o = NULL, *elsewhere = NULL;
    for (int k = 0; k < noptions; k++)
        if (strcmp(options[k].name, name) == 0) {
            if (opt_for(&options[k], c))
                o = &options[k];
            else
                elsewhere = &options[k];
        }
    if (!o && elsewhere && c)
        return bad_usage("'%s' takes no option --%s (see 'loadstack %s --help')", c->name, name, c->name);
    if (!o) {
        const char *near = nearest(name, false, c);
        if (near)
            return bad_usage("unknown option '--%s'; did you mean '--%s'?", name, near);
        return bad_usage("unknown option '--%s'%s", name, "");
    }
    if (o->field == offsetof(ls_cli, version) && o->type == VAL_FLAG) {
        cli->version = true;   /* whatever follows it: the version is all that is printed */
        return 0;
    }
    const char *val = NULL;
    if (o->type != VAL_FLAG) {
        if (eq)
            val = eq + 1;
        else if (*i + 1 < argc)
            val = argv[++*i];
        else
            return bad_usage("--%s needs a value%s", o->name, "");
    } else if (eq) {
        return bad_usage("--%s takes no value%s", o->name, "");
    }
    return set_option(cli, o, val);
}

/* The command word a, the first word that is no option; *c becomes it.
 * Returns 0 or the usage exit code. */
static int command_named(const char *a, const cmd **c)
{
    *c = find_cmd(a);
    if (*c)
        return 0;
    if (strcmp(a, "sens") == 0)
        return bad_usage("'%s' is now spelled '%s' (loadstack influence FILE QUANTITY)", a, "influence");
    const char *near = nearest(a, true, NULL);
    if (near)
        return bad_usage("unknown command '%s'; did you mean '%s'?", a, near);
    return bad_usage("unknown command '%s'%s", a, "");
}

/* Every argument into cli and the command into *c (NULL when none is
 * named).  Returns 0 or an exit code after saying what is wrong. */
static int parse_args(ls_cli *cli, int argc, char **argv, const cmd **c)
{
    const cmd *cw = command_word(argc, argv);
    bool options_done = false;
    *c = NULL;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        int r = 0;
        if (!options_done && strcmp(a, "--") == 0)
            options_done = true; /* everything after is an argument, even '-x' */
        else if (!options_done && strncmp(a, "--", 2) == 0)
            r = long_option(cli, argc, argv, &i, *c ? *c : cw);
        else if (!options_done && a[0] == '-' && a[1] && !(a[1] >= '0' && a[1] <= '9') && a[1] != '.') {
            if (strcmp(a, "-h") != 0)
                return bad_usage("unknown option '%s' (options are written --name)%s", a, "");
            cli->help = true;
        } else if (!*c)
            r = command_named(a, c);
        else if (cli->npos == LS_MAX_POS)
            return bad_usage("too many arguments%s%s", "", "");
        else
            cli->pos[cli->npos++] = a;
        if (r)
            return r;
    }
    return 0;
}

/* After the arguments: the version, the help, and whether command c has
 * what it needs.  Returns -1 to go on, else the exit code to end with. */
static int before_command(ls_cli *cli, const cmd *c)
{
    if (cli->version) {
        printf("loadstack %s\n", LS_VERSION);
        return 0;
    }
    if (!c) {
        usage_all(cli->help ? stdout : stderr);
        return cli->help ? 0 : LS_EXIT_USAGE;
    }
    if (cli->help) {
        usage_cmd(stdout, c);
        return 0;
    }
    if (cli->npos < c->npos) {
        fprintf(stderr, "loadstack: error: '%s' needs %d argument%s: loadstack %s\n", c->name, c->npos,
                c->npos > 1 ? "s" : "", c->usage);
        return LS_EXIT_USAGE;
    }
    if (cli->npos > c->npos && strcmp(c->name, "sweep") != 0) {
        fprintf(stderr, "loadstack: error: unexpected argument '%s': loadstack %s\n", cli->pos[c->npos], c->usage);
        return LS_EXIT_USAGE;
    }
    if (cli->fmt == FMT_HTML && !strstr("solve chain demo", c->name))
        return bad_usage("--format html is for solve and chain, not '%s'%s", c->name, "");
    return -1;
}

/* Run command c: its circuit from standard input when FILE is '-', its
 * destinations checked before any work, no temporary file left behind.
 * Returns its exit code. */
static int run_command(ls_cli *cli, const cmd *c)
{
    cli->command = c->name;
    if (c->circuit && c->npos > 0 && strcmp(cli->pos[0], "-") == 0) {
        int r = read_stdin(cli);
        if (r)
            return r;
    }
    int code = ls_out_prepare(cli);   /* destinations checked before any work */
    if (code == LS_EXIT_OK)
        code = c->run(cli);
    ls_out_abandon(cli);   /* a run that stopped early leaves no temporary file */
    free(cli->stdin_text);
    cli->stdin_text = NULL;
    return code;
}

/* The program proper; main only ends the process.  share: the processes of
 * loadstack-mpi, or NULL. */
static int run_main(int argc, char **argv, const ls_share *share)
{
    ls_solver_threads_for_program(); /* measured: small solves run fastest on one thread */
    ls_solver_pages_for_program();   /* a large factor's pages faulted in 2 MiB at a time */
    ls_cli cli;
    cli_defaults(&cli, share);
    const cmd *c = NULL;
    int code = parse_args(&cli, argc, argv, &c);
    if (code != 0)
        return code;
    code = before_command(&cli, c);
    return code >= 0 ? code : run_command(&cli, c);
}

#ifdef LS_MPI_PROGRAM
/* A rank other than the first computes its share and writes nothing: its
 * --output and --plot are dropped (argv shortened in place; the new argc is
 * returned) and its standard output and error go elsewhere (ls_mpi_quiet). */
static int quiet_rank(int argc, char **argv, ls_mpi *mpi)
{
    int w = 1;
    bool done = false;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        done |= strcmp(a, "--") == 0;
        if (!done && (strcmp(a, "--output") == 0 || strcmp(a, "--plot") == 0)) {
            i++; /* and its value */
            continue;
        }
        if (!done && (strncmp(a, "--output=", 9) == 0 || strncmp(a, "--plot=", 7) == 0))
            continue;
        argv[w++] = argv[i];
    }
    argv[w] = NULL;
    return ls_mpi_quiet(mpi) == 0 ? w : -1;
}

/* loadstack-mpi: the same program, run as MPI_COMM_WORLD's ranks.  tol's
 * trials and sweep's points are split among them (src/share.h); any other
 * command is run by every rank alike, and the iterative solver splits each
 * system's rows among them (hypre's distributed matrices, amg.c).  The
 * first rank writes the report, identical to one process's. */
int main(int argc, char **argv)
{
    ls_mpi mpi;
    if (ls_mpi_start(&argc, &argv, &mpi) != 0) {
        fputs("loadstack-mpi: error: MPI could not start\n", stderr);
        ls_exit_now(LS_EXIT_USAGE);
    }
    const ls_share *share = &mpi.share;
    int code = LS_EXIT_OK;
    for (int i = 1; i < argc && share->size > 1; i++)
        if (strcmp(argv[i], "-") == 0) {
            if (share->rank == 0)
                fputs("loadstack-mpi: error: with several processes the circuit must be a file (standard input "
                      "reaches only the first)\n", stderr);
            code = LS_EXIT_USAGE;
            break;
        }
    const cmd *c = command_word(argc, argv);
    if (share->size > 1 && c && strcmp(c->name, "tol") != 0 && strcmp(c->name, "sweep") != 0)
        ls_amg_spread_ranks();
    if (code == LS_EXIT_OK && share->rank > 0 && (argc = quiet_rank(argc, argv, &mpi)) < 0)
        code = LS_EXIT_USAGE;
    if (code == LS_EXIT_OK)
        code = run_main(argc, argv, share);
    ls_exit_now(ls_mpi_end(&mpi, code));
}
#else
int main(int argc, char **argv)
{
    ls_exit_now(run_main(argc, argv, NULL));
}
#endif
