/* fuzz_commands.c — fuzz target over every command and every report format.
 *
 * The input is one circuit file, preceded by one selector byte: its low three
 * bits pick the command (solve, check, sag, thevenin, influence, tol with 8
 * trials, sweep with 3 steps, pick), the next two the format (text, JSON, CSV;
 * 3 is JSON again), and bit 5 asks for the sparse solver.  The circuit is
 * written to a scratch file and the command runs as the program runs it
 * (ls_out_prepare, the command, ls_out_abandon) with --output into the
 * scratch directory, so the report writers, the output module and its UTF-8
 * filter are fuzzed too; tol and sweep also draw their plot.  NODE arguments
 * are the circuit's last node, QUANTITY the same, and sweep's parameter its
 * first top-level value statement.  Then the public C interface is run on the
 * same circuit: solve, every port, the checks, sag, Thevenin, the
 * sensitivities, an expression and a value change.
 *
 * Built as a libFuzzer target with -Dfuzz=true (clang); without libFuzzer,
 * FUZZ_REPLAY_MAIN gives it a main() that runs each file named on the command
 * line once (the suite replays the corpus this way).  Every solve checks
 * itself (LOADSTACK_SELFCHECK=abort is set at start unless set already). */
#include <loadstack/loadstack.h>

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "elab/elab.h"
#include "lang/parser.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static char scratch[256], circuit_path[300], report_path[300], svg_path[300];

/* A scratch directory for this process (made once). */
static void init_scratch(void)
{
    if (scratch[0])
        return;
    snprintf(scratch, sizeof scratch, "/tmp/ls_fuzz_cmd_%ld", (long)getpid());
    mkdtemp(strcat(scratch, "_XXXXXX"));
    snprintf(circuit_path, sizeof circuit_path, "%s/fuzz.stack", scratch);
    snprintf(report_path, sizeof report_path, "%s/report.out", scratch);
    snprintf(svg_path, sizeof svg_path, "%s/plot.svg", scratch);
    setenv("LOADSTACK_SELFCHECK", "abort", 0);
}

/* The last node's and the first top-level value's names of the circuit (into
 * node, param; "" when none), from a parse of the text. */
static void pick_names(const char *text, size_t len, char *node, char *param, size_t n)
{
    node[0] = param[0] = 0;
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_program prog;
    ls_netlist nl;
    memset(&nl, 0, sizeof nl);
    if (ls_parse_string(&d, "fuzz.stack", text, len, &prog) == 0 && ls_elaborate(&prog, &d, NULL, 0, &nl) == 0) {
        if (nl.nnodes > 0)
            snprintf(node, n, "%s", nl.nodes[nl.nnodes - 1].name);
        for (size_t i = 0; i < nl.names.cap && !param[0]; i++) {
            const ls_hash_slot *s = &nl.names.slots[i];
            if (s->key && nl.ents[s->val].kind == ENT_PARAM && !strchr(s->key, '.'))
                snprintf(param, n, "%s", s->key);
        }
    }
    ls_netlist_free(&nl);
    ls_diags_free(&d);
    ls_arena_free(&a);
}

/* Run one command as the program does; its exit code. */
static int run_command(int which, ls_format fmt, bool sparse, const char *node, const char *param)
{
    static int (*const run[])(ls_cli *) = {ls_cmd_solve, ls_cmd_check, ls_cmd_sag, ls_cmd_thevenin,
                                           ls_cmd_influence, ls_cmd_tol, ls_cmd_sweep, ls_cmd_pick};
    static const char *const names[] = {"solve", "check", "sag", "thevenin", "influence", "tol", "sweep", "pick"};
    ls_cli cli;
    memset(&cli, 0, sizeof cli);
    cli.command = names[which];
    cli.fmt = fmt;
    cli.output = report_path;
    cli.derate = 1;
    cli.seed = 1;
    cli.trials = 8;
    cli.steps = 3;
    cli.solver = sparse ? LS_CHOOSE_SPARSE : LS_CHOOSE_AUTO;
    cli.pos[0] = circuit_path;
    cli.pos[1] = node;
    cli.npos = 2;
    if (which <= 1)
        cli.npos = 1;
    if (which == 5 || which == 6)
        cli.plot = svg_path;
    if (which == 6) {
        const char *args[] = {circuit_path, param, "1", "2", node};
        for (int i = 0; i < 5; i++)
            cli.pos[i] = args[i];
        cli.npos = 5;
    }
    if (which == 7) {
        cli.pos[0] = "ratio";
        cli.pos[1] = node[0] ? "0.25" : "0.8";
    }
    int code = ls_out_prepare(&cli);
    if (code == LS_EXIT_OK)
        code = run[which](&cli);
    ls_out_abandon(&cli);
    if (code < 0 || code > 3)
        abort(); /* the exit codes are 0..3 (docs/cli.md) */
    return code;
}

/* The public interface on the same circuit; every result is read. */
static void run_api(const char *text, size_t len, const char *node, bool sparse)
{
    ls_circuit *c = NULL;
    if (ls_circuit_parse_string("fuzz.stack", text, len, NULL, 0, &c) >= 0) {
        ls_solve_options o = {.backend = sparse ? LS_BACKEND_SPARSE : LS_BACKEND_AUTO};
        if (ls_circuit_solve(c, &o) >= 0) {
            ls_port_info p;
            for (int i = 0; i < ls_circuit_port_count(c); i++)
                (void)ls_circuit_port(c, i, &p);
            ls_check_info *ck = NULL;
            int n = 0, failed = 0;
            if (ls_circuit_checks(c, 1, &ck, &n, &failed) == LS_OK)
                ls_free(ck);
            double v;
            ls_sag_entry *sg = NULL;
            if (node[0] && ls_circuit_sag(c, node, &v, &sg, &n) == LS_OK)
                ls_free(sg);
            ls_thevenin_info th;
            if (node[0])
                (void)ls_circuit_thevenin(c, node, &th);
            ls_influence_entry *se = NULL;
            if (node[0] && ls_circuit_influence(c, node, &v, &se, &n) == LS_OK)
                ls_free(se);
            if (node[0])
                (void)ls_circuit_eval(c, node, &v);
            ls_part_info pi;
            if (ls_circuit_part(c, 0, &pi) == LS_OK && pi.name)
                (void)ls_circuit_set_value(c, pi.name, 1e3);
        }
    }
    ls_circuit_free(&c);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1)
        return 0;
    init_scratch();
    unsigned sel = data[0];
    const char *text = (const char *)data + 1;
    size_t len = size - 1;
    FILE *f = fopen(circuit_path, "wb");
    if (!f)
        return 0;
    fwrite(text, 1, len, f);
    fclose(f);
    char node[1100], param[1100];
    pick_names(text, len, node, param, sizeof node);
    int which = (int)(sel & 7u);
    ls_format fmt = (sel >> 3 & 3u) == 2 ? FMT_CSV : (sel >> 3 & 3u) == 0 ? FMT_TEXT : FMT_JSON;
    bool sparse = sel & 32u;
    if (!(which == 6 && !param[0]) && !(which >= 2 && which <= 5 && !node[0]))
        run_command(which, fmt, sparse, node, param);
    run_api(text, len, node, sparse);
    unlink(report_path);
    unlink(svg_path);
    return 0;
}

#ifdef FUZZ_REPLAY_MAIN
#include <dirent.h>

/* Run every file of the directories named on the command line once.  A
 * directory named corpus_commands holds this target's own inputs (selector
 * byte first); in any other, a file is a circuit, and file k runs with command
 * k mod 8 and format (k / 8) mod 3, so each command and format sees a share
 * of the corpus, and the public interface sees all of it. */
int main(int argc, char **argv)
{
    static uint8_t buf[1 << 20];
    int k = 0;
    for (int i = 1; i < argc; i++) {
        size_t al = strlen(argv[i]);
        bool own = al >= 15 && strcmp(argv[i] + al - 15, "corpus_commands") == 0;
        DIR *dir = opendir(argv[i]);
        struct dirent *e;
        while (dir && (e = readdir(dir)) != NULL) {
            char path[4096];
            snprintf(path, sizeof path, "%s/%s", argv[i], e->d_name);
            FILE *f = e->d_name[0] != '.' ? fopen(path, "rb") : NULL;
            if (!f)
                continue;
            size_t n = fread(buf + !own, 1, sizeof buf - 1, f);
            fclose(f);
            if (!own)
                buf[0] = (uint8_t)(k % 8 | (k / 8 % 3) << 3);
            LLVMFuzzerTestOneInput(buf, n + !own);
            k++;
        }
        if (dir)
            closedir(dir);
    }
    unlink(circuit_path);
    rmdir(scratch);
    printf("replayed %d files through the commands, the formats and the C interface\n", k);
    return 0;
}
#endif
