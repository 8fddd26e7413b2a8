/* cli.h — command-line options shared by the commands. */
#ifndef LS_CLI_H
#define LS_CLI_H

#include <stdbool.h>
#include <stdio.h>

#include "analysis/analysis.h"
#include "analysis/share.h"
#include "circuit.h"
#include "report/output.h"
#include "report/report.h"

/* The program's exit codes (cli.md, "Exit codes").  They live here and
 * nowhere else in src/ (tests/house/deps.py keeps it so): the analyses answer
 * an ls_outcome (analysis/outcome.h), the library an ls_status. */
enum { LS_EXIT_OK = 0, LS_EXIT_CHECK = 1, LS_EXIT_USAGE = 2, LS_EXIT_UNSOLVABLE = 3 };

/* The exit code of an analysis's outcome: the one place where the program
 * maps ls_outcome to cli.md's table (commands.c). */
int ls_exit_code(ls_outcome o);

#define LS_MAX_SETS 256
#define LS_MAX_POS 16

typedef struct ls_cli {
    const char *command;
    const char *pos[LS_MAX_POS];   /* positional arguments after the command */
    int npos;
    const char *sets[LS_MAX_SETS];
    int nsets;
    ls_format fmt;
    const char *output;
    double min_ratio;
    bool ascii, help;
    bool version;                      /* --version: print it and nothing else */
    ls_solver_choice solver;
    double derate;
    /* command options */
    const char *load, *meter;          /* thevenin */
    bool what_if;                      /* sag */
    const char *series, *total, *zout; /* pick */
    long trials;                       /* tol (default 10000) */
    unsigned long long seed;           /* default 1 */
    const char *dist;
    const char *plot;                  /* tol, sweep */
    int steps;                         /* sweep (default 51) */
    bool log;
    bool plot_all;                     /* solve, chain with --format html: histograms even without tol= */
    int threads;
    int digits;                        /* significant digits in text (default 4) */
    bool digits_given;                 /* --digits was given: every number in text follows it */
    bool quiet;                        /* no progress lines */
    const char *fail_on;               /* check: "warnings" or CODE,CODE... (NULL: none) */
    char *stdin_text;                  /* FILE '-': the circuit read from standard input */
    size_t stdin_len;
    /* where the report and the plot go: opened by ls_out_prepare before any
     * work, committed by ls_out_close, removed by ls_out_abandon */
    ls_dest out_dest, plot_dest;
    const char *symbols;               /* formula: --symbols A,B,... */
    bool ideal;                        /* formula: --ideal */
    const char *goal;                  /* fit: --goal margin|yield|current */
    int top;                           /* fit: --top K (default 5) */
    long max_solves;                   /* fit: --max-solves N, branch and bound's cap (0: LS_FIT_MAX_SOLVES) */
    const char *write;                 /* fit: --write FILE.stack */
    ls_dest write_dest;                /* its destination, prepared with the others */
    bool keep_syntax;                  /* keep the syntax tree after loading (formula reads values from it) */
    struct ls_letdeps *follow;         /* sweep: record what this let reaches while loading (letdeps.h) */
    const ls_share *share;             /* loadstack-mpi: tol's trials and sweep's points split among processes */
} ls_cli;

/* Everything a command needs from a loaded circuit: the library's circuit
 * itself (circuit.h), read, elaborated and solved by the same code as the
 * public API's.  A command reads its netlist (nl), operating point (op),
 * diagnostics and arena directly; cli is the command line it was loaded for,
 * input_path the file the reports name (NULL for standard input). */
typedef struct ls_circuit ls_session;

/* Load FILE ('-': the standard input main() read; or the demo text) for cli
 * through the one loader (ls_circuit_load): parse, apply --set, elaborate,
 * keeping the syntax tree when cli->keep_syntax and following cli->follow.
 * Returns an exit code (2 for any failure; ls_session_nomem says when it was
 * memory).  Free s with ls_session_free whatever it returns. */
int ls_session_load(ls_session *s, ls_cli *cli, const char *path, const char *text);
/* Solve the operating point (ls_circuit_solve_op, with cli's solver, ratio
 * and derating, and the progress line).  Returns the outcome's exit code. */
int ls_session_solve(ls_session *s);
/* Free what the session holds (not s itself). */
void ls_session_free(ls_session *s);
/* Parse and bind a quantity written as in an `expect`; NULL after an error
 * in the diagnostics (out of memory included). */
ls_q *ls_session_quantity(ls_session *s, const char *text);
/* An analysis that reported an error after the solve (out of memory) has no
 * report: code, or 3 when the diagnostics hold an error. */
int ls_session_verdict(const ls_session *s, int code);
/* Did anything of the session run out of memory (its arenas, a diagnostic
 * that could not be kept, the last solve)?  Then a failure is no property of
 * the circuit and must not be reported as one. */
bool ls_session_nomem(const ls_session *s);

/* Before any work: check --output and --plot (regular files only, not the
 * input, not each other; docs/output.md), create their temporary files and
 * arrange for SIGINT and SIGTERM to remove them.  Returns an exit code (2
 * after saying why). */
int ls_out_prepare(ls_cli *cli);
/* The included files of a loaded circuit are not targets either: after
 * loading, an error for each destination that is one.  Returns an exit code. */
int ls_out_protect(ls_session *s);
/* The report stream: stdout, or the temporary file of --output. */
FILE *ls_out_open(ls_cli *cli);
/* Finish the run's files: with code 0 or 1 (a report was made) put the plot
 * and the report into place, otherwise remove them.  Returns code, or 2 when a
 * file cannot be written. */
int ls_out_close(ls_cli *cli, int code);
/* Remove whatever temporary file is still open (a run that stopped early). */
void ls_out_abandon(ls_cli *cli);

/* End the process with `code` once standard output and error are flushed,
 * without running the exit handlers of the libraries (see commands.c). */
_Noreturn void ls_exit_now(int code);

/* A report to out for the session's command: format, character set, digits,
 * diagnostics and the JSON meta (command, circuit file, --set texts). */
ls_report ls_report_for(const ls_session *s, FILE *out);
/* After a reporter ran: when memory ran out while it wrote (rp->nomem), say
 * what was lost and return LS_EXIT_UNSOLVABLE (ls_out_close then removes the
 * incomplete report); otherwise code. */
int ls_report_done(const ls_report *rp, int code);

/* Parse a number with units from text (for --load 10k, --min-ratio 10 ...)
 * through the one constant evaluator (ls_eval_const): false when it is no
 * constant or its units do not go together. */
bool ls_cli_number(const char *text, double *v);
/* The same, with the number's unit in *dims (LS_FREE for a plain number). */
bool ls_cli_number_dims(const char *text, double *v, ls_dims *dims);

int ls_cmd_solve(ls_cli *cli);
int ls_cmd_check(ls_cli *cli);
int ls_cmd_demo(ls_cli *cli);
int ls_cmd_sag(ls_cli *cli);
int ls_cmd_thevenin(ls_cli *cli);
int ls_cmd_influence(ls_cli *cli);
/* ls_q_same (whether an expect is "on" a quantity) is in tolerance.h. */

int ls_cmd_tol(ls_cli *cli);     /* tol_cmd.c */
int ls_cmd_sweep(ls_cli *cli);   /* sweep_cmd.c */
int ls_cmd_pick(ls_cli *cli);    /* pick_cmd.c */
int ls_cmd_chain(ls_cli *cli);   /* chain_cmd.c */
int ls_cmd_formula(ls_cli *cli); /* formula_cmd.c */
int ls_cmd_fit(ls_cli *cli);     /* fit_cmd.c */
#ifdef LS_TEST_COMMANDS
int ls_cmd_tally(ls_cli *cli);   /* tests/house/tally_cmd.c: in the test program only */
#endif

extern const char ls_demo_text[];
/* Every warning code the program gives, NULL-terminated (generated from
 * docs/warnings.md). */
extern const char *const ls_warning_codes[];

#endif
