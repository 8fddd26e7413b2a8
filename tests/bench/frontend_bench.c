/* frontend_bench.c — parse + elaboration alone, for the front end's target
 * (docs/performance.md, "Front end"): reads FILE R times (default 3) with
 * the library's parser and elaborator, as `loadstack solve` does before its
 * solve, and prints the CPU seconds (user + system) of the best repetition
 * and the megabytes per CPU second, with the numbers the parser gave node
 * names (each costs the elaborator one name-table lookup: lang/nodenames.h).  Not a timed test: the suite
 * (bench-frontend-small) runs it on a 30 x 30 grid and checks only that it
 * elaborates without errors into the grid's 1741 parts (2 * 30 * 29 + 1).
 *
 * usage: frontend_bench FILE [REPS] */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "elab/elab.h"
#include "lang/parser.h"

/* CPU seconds of this process so far (user + system). */
static double cpu_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* One parse + elaboration of path: its CPU seconds in *parse_s and *elab_s;
 * the number of errors (printed to stderr) as the result. */
static int once(const char *path, double *parse_s, double *elab_s, int *nparts, int *keys)
{
    ls_arena a, syntax;
    ls_diags d;
    ls_arena_init(&a);
    ls_arena_init(&syntax);
    ls_diags_init(&d, &a);
    ls_program prog;
    ls_netlist nl;
    memset(&nl, 0, sizeof nl);
    double t0 = cpu_s();
    int errs = ls_parse_file_to(&d, path, &syntax, &prog);
    double t1 = cpu_s();
    *keys = prog.node_keys;
    errs += ls_elaborate(&prog, &d, NULL, 0, &nl);
    double t2 = cpu_s();
    if (errs)
        ls_diags_print(&d, stderr);
    *parse_s = t1 - t0;
    *elab_s = t2 - t1;
    *nparts = nl.nparts;
    ls_netlist_free(&nl);
    ls_diags_free(&d);
    ls_arena_free(&syntax);
    ls_arena_free(&a);
    return errs;
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: frontend_bench FILE [REPS]\n");
        return 2;
    }
    int reps = argc > 2 ? atoi(argv[2]) : 3;
    struct stat st;
    if (stat(argv[1], &st) != 0) {
        perror(argv[1]);
        return 2;
    }
    double best = 1e30, bp = 0, be = 0;
    int nparts = 0, keys = 0;
    for (int r = 0; r < (reps > 0 ? reps : 1); r++) {
        double p, e;
        if (once(argv[1], &p, &e, &nparts, &keys) != 0)
            return 1;
        if (p + e < best) {
            best = p + e;
            bp = p;
            be = e;
        }
    }
    double mb = (double)st.st_size / 1e6;
    printf("%s: %.1f MB, %d parts, %d node-name numbers; parse %.4f s, elaborate %.4f s CPU (best of %d): "
           "%.1f MB/s\n", argv[1], mb, nparts, keys, bp, be, reps, mb / best);
    return 0;
}
