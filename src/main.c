/* main.c — the loadstack program: arguments, help, dispatch, exit codes.
 * Nothing else lives here. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "parts.h"

#ifndef LS_VERSION
#define LS_VERSION "0.0.0"
#endif

typedef struct optdef {
    const char *name;
    bool arg;
    const char *cmds;       /* commands it belongs to ("*" every one) */
    const char *help;
} optdef;

static const optdef options[] = {
    {"set", true, "*", "NAME=VALUE  override a top-level let (repeatable)"},
    {"format", true, "*", "text|json|csv  report format (default text)"},
    {"output", true, "*", "FILE  write the report to FILE (whole or not at all)"},
    {"min-ratio", true, "*", "X  minimum zin/zout for a port to pass (default: the circuit's rule, else 10)"},
    {"ascii", false, "*", "plain ASCII output (u for micro, ohm for the omega sign)"},
    {"solver", true, "*", "auto|dense|sparse  linear solver (default auto)"},
    {"derate", true, "*", "F  multiply power ratings by F before comparing (default 1)"},
    {"help", false, "*", "show help for the command"},
    {"version", false, "*", "print the version"},
    {"load", true, "thevenin", "R  voltage and current into a load resistance R"},
    {"meter", true, "thevenin", "R  what a meter of input resistance R would read"},
    {"what-if", false, "sag", "add the table of each port opened and each part removed in turn"},
    {"trials", true, "tol", "N  Monte Carlo trials (default 10000)"},
    {"seed", true, "tol", "S  random seed, a whole number (default 1): the same seed gives the same answer"},
    {"dist", true, "tol", "uniform|normal  how a part spreads within tol= (normal: tol is 3 sigma)"},
    {"plot", true, "tol sweep", "FILE.svg|FILE.png  draw a picture (tol: histogram; sweep: the curves)"},
    {"steps", true, "sweep", "N  points from FROM to TO, both included (default 51)"},
    {"log", false, "sweep", "space the points evenly on a log scale (FROM and TO > 0)"},
    {"series", true, "pick", "E6|E12|E24|E48|E96|E192  standard value series (default E24)"},
    {"total", true, "pick", "LO..HI  range of rtop + rbot (default 1k..1M)"},
    {"zout", true, "pick", "MAX  largest acceptable rtop || rbot"},
    {"symbols", true, "formula", "A,B,...  keep only these parts' values and lets as symbols (the rest as numbers)"},
    {"ideal", false, "formula", "take every finite op-amp gain to infinity (the formula designers write first)"},
};

typedef struct cmd {
    const char *name;
    const char *usage;
    const char *summary;
    const char *example;
    int (*run)(ls_cli *);
    int npos;
} cmd;

static const cmd commands[] = {
    {"solve", "solve FILE", "operating point: nodes, parts, ports (loading report), op-amps, checks and warnings",
     "loadstack solve circuits/demo.stack --format json", ls_cmd_solve, 1},
    {"check", "check FILE", "evaluate every expect and rule; exit 1 if any fails (for a design's CI)",
     "loadstack check circuits/demo.stack && echo design ok", ls_cmd_check, 1},
    {"sag", "sag FILE NODE", "which connections (ports) make NODE sag, and by how much each",
     "loadstack sag circuits/demo.stack adc_in", ls_cmd_sag, 2},
    {"thevenin", "thevenin FILE NODE|PORT", "Thevenin and Norton equivalent at NODE, or of each side of PORT",
     "loadstack thevenin circuits/demo.stack probe --meter 10M", ls_cmd_thevenin, 2},
    {"influence", "influence FILE QUANTITY", "how much each part's main value moves QUANTITY (adjoint method)",
     "loadstack influence circuits/demo.stack adc_in", ls_cmd_influence, 2},
    {"tol", "tol FILE QUANTITY", "tolerance analysis from the parts' tol=: worst case, Monte Carlo spread and yield",
     "loadstack tol circuits/demo.stack adc_in --plot adc_in.svg", ls_cmd_tol, 2},
    {"sweep", "sweep FILE LET FROM TO QUANTITY...", "sweep a top-level let and tabulate (or plot) quantities",
     "loadstack sweep circuits/demo.stack moisture_r 1k 100k adc_in --log --plot sweep.svg", ls_cmd_sweep, 5},
    {"formula", "formula FILE QUANTITY", "QUANTITY as an exact formula of the parts' values (small circuits)",
     "loadstack formula circuits/strain_bridge.stack out --symbols vex,strain", ls_cmd_formula, 2},
    {"pick", "pick ratio R", "best pairs of standard (IEC 60063) values for a divider ratio R = rbot/(rtop+rbot)",
     "loadstack pick ratio 0.66 --series E24 --total 10k..100k", ls_cmd_pick, 2},
    {"demo", "demo", "the built-in demo circuit, solved (needs no file)", "loadstack demo", ls_cmd_demo, 0},
};

static const int ncommands = (int)(sizeof commands / sizeof commands[0]);
static const int noptions = (int)(sizeof options / sizeof options[0]);

static bool opt_for(const optdef *o, const char *cmd)
{
    if (strcmp(o->cmds, "*") == 0)
        return true;
    return cmd && strstr(o->cmds, cmd) != NULL;
}

static void usage_all(FILE *f)
{
    fprintf(f, "loadstack %s — DC loading analysis of analog signal chains\n\n", LS_VERSION);
    fputs("usage: loadstack COMMAND [ARGS] [OPTIONS]\n\ncommands:\n", f);
    for (int i = 0; i < ncommands; i++)
        fprintf(f, "  %-22s %s\n", commands[i].usage, commands[i].summary);
    fputs("\noptions for every command:\n", f);
    for (int i = 0; i < noptions; i++)
        if (strcmp(options[i].cmds, "*") == 0)
            fprintf(f, "  --%-11s %s\n", options[i].name, options[i].help);
    fputs("\nexit codes: 0 done (checks pass), 1 a check failed (check), 2 bad usage or circuit file,\n"
          "            3 the circuit cannot be solved\n"
          "\nexamples:\n  loadstack demo\n  loadstack solve circuits/demo.stack --set vsupply=3.3V\n"
          "  loadstack check circuits/demo.stack --format json\n"
          "\n'loadstack COMMAND --help' shows the options of one command.\n",
          f);
}

static void usage_cmd(FILE *f, const cmd *c)
{
    fprintf(f, "usage: loadstack %s [OPTIONS]\n\n%s\n\noptions:\n", c->usage, c->summary);
    for (int i = 0; i < noptions; i++)
        if (opt_for(&options[i], c->name))
            fprintf(f, "  --%-11s %s\n", options[i].name, options[i].help);
    fprintf(f, "\nexample:\n  %s\n", c->example);
}

static const cmd *find_cmd(const char *name)
{
    for (int i = 0; i < ncommands; i++)
        if (strcmp(commands[i].name, name) == 0)
            return &commands[i];
    return NULL;
}

static const char *nearest(const char *word, bool commands_too, const char *cmdname)
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
        if (!opt_for(&options[i], cmdname))
            continue;
        int d = ls_edit_distance(word, options[i].name);
        if (d < bd)
            bd = d, best = options[i].name;
    }
    return best;
}

static int bad_usage(const char *fmt, const char *a, const char *b)
{
    fputs("loadstack: error: ", stderr);
    fprintf(stderr, fmt, a, b);
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
        else return bad_usage("--format takes text, json or csv, not '%s'%s", val, "");
    } else if (strcmp(n, "output") == 0) {
        cli->output = val;
    } else if (strcmp(n, "min-ratio") == 0) {
        if (!ls_cli_number(val, &cli->min_ratio) || !(cli->min_ratio > 0))
            return bad_usage("--min-ratio takes a positive number, not '%s'%s", val, "");
    } else if (strcmp(n, "solver") == 0) {
        if (strcmp(val, "auto") == 0) cli->solver = LS_CHOOSE_AUTO;
        else if (strcmp(val, "dense") == 0) cli->solver = LS_CHOOSE_DENSE;
        else if (strcmp(val, "sparse") == 0) cli->solver = LS_CHOOSE_SPARSE;
        else return bad_usage("--solver takes auto, dense or sparse, not '%s'%s", val, "");
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
        if (!whole_number(val, 1, 10000000, &cli->trials))
            return bad_usage("--trials takes a whole number from 1 to 10000000, not '%s'%s", val, "");
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
    } else if (strcmp(n, "log") == 0) {
        cli->log = true;
    } else if (strcmp(n, "series") == 0) {
        cli->series = val;
    } else if (strcmp(n, "total") == 0) {
        cli->total = val;
    } else if (strcmp(n, "zout") == 0) {
        cli->zout = val;
    } else if (strcmp(n, "symbols") == 0) {
        cli->symbols = val;
    } else if (strcmp(n, "ideal") == 0) {
        cli->ideal = true;
    }
    return 0;
}

int main(int argc, char **argv)
{
    ls_cli cli;
    memset(&cli, 0, sizeof cli);
    cli.derate = 1;
    cli.seed = 1;
    cli.trials = 10000;
    cli.steps = 51;
    const cmd *c = NULL;
    bool want_version = false;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (strncmp(a, "--", 2) == 0 && a[2]) {
            char name[64];
            const char *eq = strchr(a + 2, '=');
            size_t len = eq ? (size_t)(eq - a - 2) : strlen(a + 2);
            if (len >= sizeof name)
                len = sizeof name - 1;
            memcpy(name, a + 2, len);
            name[len] = 0;
            const optdef *o = NULL;
            for (int k = 0; k < noptions; k++)
                if (strcmp(options[k].name, name) == 0 && opt_for(&options[k], c ? c->name : NULL))
                    o = &options[k];
            if (!o) {
                const char *near = nearest(name, false, c ? c->name : NULL);
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
        } else if (a[0] == '-' && a[1] && !(a[1] >= '0' && a[1] <= '9')) {
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
    cli.command = c->name;
    return c->run(&cli);
}
