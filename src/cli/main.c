/* main.c — the loadstack program: arguments, help, dispatch, exit codes.
 * Nothing else lives here. */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "base/diag.h"
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

typedef struct optdef {
    const char *name;
    bool arg;
    opt_scope scope;
    const char *cmds;       /* FOR_LISTED: the commands, separated by spaces */
    const char *help;
} optdef;

static const optdef options[] = {
    {"set", true, FOR_CIRCUIT, NULL, "NAME=VALUE  override a top-level let (repeatable)"},
    {"format", true, FOR_ALL, NULL, "text|json|csv|html  report format (default text; html: solve, demo and chain)"},
    {"output", true, FOR_ALL, NULL, "FILE  write the report to FILE (whole or not at all)"},
    {"min-ratio", true, FOR_CIRCUIT, NULL, "X  minimum zin/zout for a port to pass (default: the circuit's rule, else 10)"},
    {"ascii", false, FOR_ALL, NULL, "plain ASCII output (u for micro, ohm for the omega sign)"},
    {"digits", true, FOR_ALL, NULL, "N  significant digits of numbers in text (default 4)"},
    {"quiet", false, FOR_ALL, NULL, "no progress lines on stderr"},
    {"solver", true, FOR_CIRCUIT, NULL, "auto|dense|sparse|iterative  linear solver (default auto)"},
    {"derate", true, FOR_CIRCUIT, NULL, "F  multiply power ratings by F before comparing (default 1)"},
    {"help", false, FOR_ALL, NULL, "show help for the command"},
    {"version", false, FOR_ALL, NULL, "print the version"},
    {"fail-on", true, FOR_LISTED, "check", "CODE,...|warnings  also fail (exit 1) when one of these warnings occurs"},
    {"load", true, FOR_LISTED, "thevenin", "R  voltage and current into a load resistance R"},
    {"meter", true, FOR_LISTED, "thevenin", "R  what a meter of input resistance R would read"},
    {"what-if", false, FOR_LISTED, "sag", "add the table of each port opened and each part removed in turn"},
    {"trials", true, FOR_LISTED, "tol fit", "N  Monte Carlo trials, SI prefixes allowed: 100k (default: tol 10000, fit 2000 per finalist)"},
    {"seed", true, FOR_LISTED, "tol fit", "S  random seed, a whole number (default 1): the same seed gives the same answer"},
    {"dist", true, FOR_LISTED, "tol fit", "uniform|normal  how a part spreads within tol= (normal: tol is 3 sigma)"},
    {"plot", true, FOR_LISTED, "tol sweep chain", "FILE.svg|FILE.png|FILE.pdf  draw a picture (tol: histogram; sweep: the curves; chain: the stages)"},
    {"plot-all", false, FOR_LISTED, "solve chain demo", "with --format html: tolerance histograms even when no part has tol="},
    {"steps", true, FOR_LISTED, "sweep", "N  points from FROM to TO, both included (default 51)"},
    {"log", false, FOR_LISTED, "sweep", "space the points evenly on a log scale (FROM and TO > 0)"},
    {"series", true, FOR_LISTED, "pick fit", "E6|E12|E24|E48|E96|E192  standard value series (default E24; fit: for parts without snap=)"},
    {"total", true, FOR_LISTED, "pick", "LO..HI  range of rtop + rbot (default 1k..1M)"},
    {"zout", true, FOR_LISTED, "pick", "MAX  largest acceptable rtop || rbot"},
    {"goal", true, FOR_LISTED, "fit", "margin|yield|current  what the best candidate has most of (least current) (default margin)"},
    {"top", true, FOR_LISTED, "fit", "K  candidates to report, best first (default 5)"},
    {"max-solves", true, FOR_LISTED, "fit", "N  candidate solves branch and bound may spend, SI prefixes allowed (default 500k)"},
    {"write", true, FOR_LISTED, "fit", "FILE.stack  a copy of the circuit with the chosen values (never the input)"},
    {"symbols", true, FOR_LISTED, "formula", "A,B,...  keep only these parts' values and lets as symbols (the rest as numbers)"},
    {"ideal", false, FOR_LISTED, "formula", "take every finite op-amp gain to infinity (the formula designers write first)"},
};

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

static const char *nearest(const char *word, bool commands_too, const cmd *c)
{
    const char *best = NULL;
    int bd = 4;
    if (commands_too) {
        for (int i = 0; i < ncommands; i++) {
            int d = ls_edit_distance(word, commands[i].name);
            if (d < bd)
                bd = d, best = commands[i].name;
        }
        return best;
    }
    for (int i = 0; i < noptions; i++) {
        if (!opt_for(&options[i], c))
            continue;
        int d = ls_edit_distance(word, options[i].name);
        if (d < bd)
            bd = d, best = options[i].name;
    }
    return best;
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
    const char *best = NULL;
    int bd = 4;
    for (int i = 0; ls_warning_codes[i]; i++) {
        int d = ls_edit_distance(code, ls_warning_codes[i]);
        if (d < bd)
            bd = d, best = ls_warning_codes[i];
    }
    return best;
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

static int set_option(ls_cli *cli, const optdef *o, const char *val)
{
    const char *n = o->name;
    if (strcmp(n, "set") == 0) {
        if (cli->nsets == LS_MAX_SETS)
            return bad_usage("too many --set options (at most %s)%s", "256", "");
        if (!strchr(val, '='))
            return bad_usage("--set takes NAME=VALUE, got '%s'%s", val, "");
        cli->sets[cli->nsets++] = val;
    } else if (strcmp(n, "format") == 0) {
        if (strcmp(val, "text") == 0) cli->fmt = FMT_TEXT;
        else if (strcmp(val, "json") == 0) cli->fmt = FMT_JSON;
        else if (strcmp(val, "csv") == 0) cli->fmt = FMT_CSV;
        else if (strcmp(val, "html") == 0) cli->fmt = FMT_HTML;
        else return bad_usage("--format takes text, json, csv or html, not '%s'%s", val, "");
    } else if (strcmp(n, "output") == 0) {
        cli->output = val;
    } else if (strcmp(n, "min-ratio") == 0) {
        if (!ls_cli_number(val, &cli->min_ratio) || !(cli->min_ratio > 0))
            return bad_usage("--min-ratio takes a positive number, not '%s'%s", val, "");
    } else if (strcmp(n, "solver") == 0) {
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
    } else if (strcmp(n, "derate") == 0) {
        if (!ls_cli_number(val, &cli->derate) || !(cli->derate > 0))
            return bad_usage("--derate takes a positive factor, not '%s'%s", val, "");
    } else if (strcmp(n, "ascii") == 0) {
        cli->ascii = true;
    } else if (strcmp(n, "help") == 0) {
        cli->help = true;
    } else if (strcmp(n, "load") == 0) {
        cli->load = val;
    } else if (strcmp(n, "meter") == 0) {
        cli->meter = val;
    } else if (strcmp(n, "what-if") == 0) {
        cli->what_if = true;
    } else if (strcmp(n, "trials") == 0) {
        if (!count_si(val, 1, 10000000, &cli->trials))
            return bad_usage("--trials takes a whole number from 1 to 10M (SI prefixes allowed: 100k), not '%s'%s",
                             val, "");
    } else if (strcmp(n, "digits") == 0) {
        long dg;
        if (!whole_number(val, 1, 17, &dg))
            return bad_usage("--digits takes a whole number from 1 to 17, not '%s'%s", val, "");
        cli->digits = (int)dg;
        cli->digits_given = true;
    } else if (strcmp(n, "quiet") == 0) {
        cli->quiet = true;
    } else if (strcmp(n, "fail-on") == 0) {
        return fail_on(cli, val);
    } else if (strcmp(n, "seed") == 0) {
        char *end;
        errno = 0;
        cli->seed = strtoull(val, &end, 10);
        if (!*val || *end || errno || strchr(val, '-'))
            return bad_usage("--seed takes a whole number 0 or more, not '%s'%s", val, "");
    } else if (strcmp(n, "dist") == 0) {
        if (strcmp(val, "uniform") != 0 && strcmp(val, "normal") != 0)
            return bad_usage("--dist takes uniform or normal, not '%s'%s", val, "");
        cli->dist = val;
    } else if (strcmp(n, "plot") == 0) {
        cli->plot = val;
    } else if (strcmp(n, "steps") == 0) {
        long st;
        if (!whole_number(val, 2, 100000, &st))
            return bad_usage("--steps takes a whole number from 2 to 100000, not '%s'%s", val, "");
        cli->steps = (int)st;
    } else if (strcmp(n, "plot-all") == 0) {
        cli->plot_all = true;
    } else if (strcmp(n, "log") == 0) {
        cli->log = true;
    } else if (strcmp(n, "series") == 0) {
        cli->series = val;
    } else if (strcmp(n, "total") == 0) {
        cli->total = val;
    } else if (strcmp(n, "zout") == 0) {
        cli->zout = val;
    } else if (strcmp(n, "goal") == 0) {
        if (strcmp(val, "margin") != 0 && strcmp(val, "yield") != 0 && strcmp(val, "current") != 0)
            return bad_usage("--goal takes margin, yield or current, not '%s'%s", val, "");
        cli->goal = val;
    } else if (strcmp(n, "top") == 0) {
        long k;
        if (!whole_number(val, 1, 1000, &k))
            return bad_usage("--top takes a whole number from 1 to 1000, not '%s'%s", val, "");
        cli->top = (int)k;
    } else if (strcmp(n, "max-solves") == 0) {
        if (!count_si(val, 1, 1000000000, &cli->max_solves))
            return bad_usage("--max-solves takes a whole number from 1 to 1G (SI prefixes allowed: 50k), not '%s'%s",
                             val, "");
    } else if (strcmp(n, "write") == 0) {
        cli->write = val;
    } else if (strcmp(n, "symbols") == 0) {
        cli->symbols = val;
    } else if (strcmp(n, "ideal") == 0) {
        cli->ideal = true;
    }
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
                if (strlen(options[k].name) == len && strncmp(options[k].name, name, len) == 0 && options[k].arg &&
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

/* The program proper; main only ends the process.  share: the processes of
 * loadstack-mpi, or NULL. */
static int run_main(int argc, char **argv, const ls_share *share)
{
    ls_solver_threads_for_program(); /* measured: small solves run fastest on one thread */
    ls_cli cli;
    memset(&cli, 0, sizeof cli);
    cli.derate = 1;
    cli.seed = 1;
    cli.trials = 0;   /* each command's default (tol 10000, fit 2000) */
    cli.steps = 51;
    cli.digits = 4;
    cli.share = share;
    const cmd *c = NULL, *cw = command_word(argc, argv);
    bool want_version = false, options_done = false;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!options_done && strcmp(a, "--") == 0) {
            options_done = true; /* everything after is an argument, even '-x' */
        } else if (!options_done && strncmp(a, "--", 2) == 0) {
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
                    if (opt_for(&options[k], c ? c : cw))
                        o = &options[k];
                    else
                        elsewhere = &options[k];
                }
            if (!o && elsewhere && (c || cw))
                return bad_usage("'%s' takes no option --%s (see 'loadstack %s --help')", (c ? c : cw)->name, name,
                                 (c ? c : cw)->name);
            if (!o) {
                const char *near = nearest(name, false, c ? c : cw);
                if (near)
                    return bad_usage("unknown option '--%s'; did you mean '--%s'?", name, near);
                return bad_usage("unknown option '--%s'%s", name, "");
            }
            if (strcmp(o->name, "version") == 0) {
                want_version = true;
                continue;
            }
            const char *val = NULL;
            if (o->arg) {
                if (eq)
                    val = eq + 1;
                else if (i + 1 < argc)
                    val = argv[++i];
                else
                    return bad_usage("--%s needs a value%s", o->name, "");
            } else if (eq) {
                return bad_usage("--%s takes no value%s", o->name, "");
            }
            int r = set_option(&cli, o, val);
            if (r)
                return r;
        } else if (!options_done && a[0] == '-' && a[1] && !(a[1] >= '0' && a[1] <= '9') && a[1] != '.') {
            if (strcmp(a, "-h") == 0) {
                cli.help = true;
                continue;
            }
            return bad_usage("unknown option '%s' (options are written --name)%s", a, "");
        } else if (!c) {
            c = find_cmd(a);
            if (!c && strcmp(a, "sens") == 0)
                return bad_usage("'%s' is now spelled '%s' (loadstack influence FILE QUANTITY)", a, "influence");
            if (!c) {
                const char *near = nearest(a, true, NULL);
                if (near)
                    return bad_usage("unknown command '%s'; did you mean '%s'?", a, near);
                return bad_usage("unknown command '%s'%s", a, "");
            }
        } else {
            if (cli.npos == LS_MAX_POS)
                return bad_usage("too many arguments%s%s", "", "");
            cli.pos[cli.npos++] = a;
        }
    }
    if (want_version) {
        printf("loadstack %s\n", LS_VERSION);
        return 0;
    }
    if (!c) {
        usage_all(cli.help ? stdout : stderr);
        return cli.help ? 0 : LS_EXIT_USAGE;
    }
    if (cli.help) {
        usage_cmd(stdout, c);
        return 0;
    }
    if (cli.npos < c->npos) {
        fprintf(stderr, "loadstack: error: '%s' needs %d argument%s: loadstack %s\n", c->name, c->npos,
                c->npos > 1 ? "s" : "", c->usage);
        return LS_EXIT_USAGE;
    }
    if (cli.npos > c->npos && strcmp(c->name, "sweep") != 0) {
        fprintf(stderr, "loadstack: error: unexpected argument '%s': loadstack %s\n", cli.pos[c->npos], c->usage);
        return LS_EXIT_USAGE;
    }
    if (cli.fmt == FMT_HTML && !strstr("solve chain demo", c->name))
        return bad_usage("--format html is for solve and chain, not '%s'%s", c->name, "");
    cli.command = c->name;
    if (c->circuit && c->npos > 0 && strcmp(cli.pos[0], "-") == 0) {
        int r = read_stdin(&cli);
        if (r)
            return r;
    }
    int code = ls_out_prepare(&cli);   /* destinations checked before any work */
    if (code == LS_EXIT_OK)
        code = c->run(&cli);
    ls_out_abandon(&cli);   /* a run that stopped early leaves no temporary file */
    free(cli.stdin_text);
    return code;
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
