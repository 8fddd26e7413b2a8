/* ports_bench.c — in-process timing of the port report against one plain solve.
 *
 * Usage: ports_bench FILE [REPEAT] [auto|dense|sparse]
 *
 * For the circuit in FILE (tests/bench/ports_bench.py make writes the
 * 200-channel one), best of REPEAT runs (default 5) of:
 *   load   parse and elaborate the file;
 *   solve  ls_op_solve: assemble, topology checks, factor, refined solve;
 *   ports  the port report of every port (ls_op_port: one low-rank update of
 *          the factored system per port, no refactorization).
 * Prints the times, the ratio (load + solve + ports) / (load + solve) — the full
 * report against one plain solve of the same circuit — and ports / solve. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analysis/analysis.h"
#include "elab/elab.h"
#include "lang/parser.h"

/* Seconds on the monotonic clock. */
static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

typedef struct times {
    double load, solve, ports;
    int nports, unknowns;
} times;

/* One timed run; returns 0, or -1 after printing the diagnostics. */
static int run_once(const char *path, ls_solver_choice solver, times *t)
{
    ls_arena arena;
    ls_diags diags;
    ls_program prog;
    ls_netlist nl;
    ls_op op;
    int rc = -1;
    memset(&prog, 0, sizeof prog);
    memset(&nl, 0, sizeof nl);
    ls_arena_init(&arena);
    ls_diags_init(&diags, &arena);
    double t0 = now();
    if (ls_parse_file(&diags, path, &prog) == 0 && ls_elaborate(&prog, &diags, NULL, 0, &nl) == 0) {
        double t1 = now();
        ls_options o = {.solver = solver, .min_ratio = 0, .derate = 1};
        ls_outcome st = ls_op_solve(&op, &nl, &o);
        double t2 = now();
        if (st == LS_DONE) {
            int np = 0;
            for (int i = 0; i < nl.nparts; i++)
                if (nl.parts[i].kind->is_port && ls_op_port(&op, i))
                    np++;
            double t3 = now();
            *t = (times){t1 - t0, t2 - t1, t3 - t2, np, op.mna.n};
            rc = 0;
        }
        ls_op_free(&op);
    }
    if (rc != 0)
        ls_diags_print(&diags, stderr);
    ls_netlist_free(&nl);
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    return rc;
}

/* Best-of-REPEAT timings of FILE; exit 0, 2 on bad usage, 3 when it does not solve. */
int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: ports_bench FILE [REPEAT] [auto|dense|sparse]\n");
        return 2;
    }
    int repeat = argc > 2 ? atoi(argv[2]) : 5;
    ls_solver_choice solver = LS_CHOOSE_AUTO;
    if (argc > 3)
        solver = strcmp(argv[3], "dense") == 0 ? LS_CHOOSE_DENSE : strcmp(argv[3], "sparse") == 0 ? LS_CHOOSE_SPARSE
                                                                                                   : LS_CHOOSE_AUTO;
    times best = {1e30, 1e30, 1e30, 0, 0};
    for (int k = 0; k < (repeat > 0 ? repeat : 1); k++) {
        times t;
        if (run_once(argv[1], solver, &t) != 0)
            return 3;
        if (t.load < best.load)
            best.load = t.load;
        if (t.solve < best.solve)
            best.solve = t.solve;
        if (t.ports < best.ports)
            best.ports = t.ports;
        best.nports = t.nports;
        best.unknowns = t.unknowns;
    }
    double plain = best.load + best.solve;
    printf("unknowns %d, ports %d (best of %d)\n", best.unknowns, best.nports, repeat);
    printf("load (parse + elaborate)  %9.2f ms\n", 1e3 * best.load);
    printf("solve (ls_op_solve)       %9.2f ms\n", 1e3 * best.solve);
    printf("port report, all ports    %9.2f ms  (%.1f us a port)\n", 1e3 * best.ports,
           1e6 * best.ports / (best.nports ? best.nports : 1));
    printf("full report / plain solve %9.2f\n", (plain + best.ports) / plain);
    printf("ports / solve             %9.2f\n", best.ports / best.solve);
    return 0;
}
