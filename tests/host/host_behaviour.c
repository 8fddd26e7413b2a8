/* host_behaviour.c — the library as a guest in a long-running host process.
 *
 * Sets thread settings of its own (OpenBLAS 2 threads, OpenMP 3 threads with
 * dynamic adjustment off: values no solve would choose for a small circuit),
 * then calls every public function of <loadstack/loadstack.h> many times on
 * the given circuit and checks that
 *   - the host's OpenBLAS and OpenMP settings are the same after every call;
 *   - the resident set size after the first LOOPS/5 rounds stays flat to within
 *     BOUND_KB for the rest (a handle that grew by one quantity per call grew
 *     by hundreds of kilobytes here before per-call scratch);
 *   - every round gives the same numbers as the first (the calls leave
 *     nothing behind that changes a later answer).
 * Run under Valgrind or LeakSanitizer it also shows that nothing leaks.
 *
 * Usage: host_behaviour CIRCUIT [--loops N] [--threads T] [--no-rss]
 *   --threads T runs T host threads, each on its own handle of the circuit
 *   (and, from the second on, a second circuit made here), for the
 *   ThreadSanitizer run of tests/tsan/run.sh.
 * Prints "N passed, N failed" and exits 1 on any failure. */
#include <loadstack/loadstack.h>

#include <math.h>
#include <omp.h>
#include <pthread.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

void openblas_set_num_threads(int num_threads);
int openblas_get_num_threads(void);

#define BOUND_KB 256   /* RSS growth allowed after the warm-up (malloc arenas settle) */

/* A second circuit for the threaded run: a bridge with a port and an op-amp
 * buffer of our own, so two threads factor different systems at once. */
static const char *second =
    "title \"bridge and buffer\"\n"
    "ground gnd\n"
    "voltage vb gnd -> top 5 V\n"
    "resistor ra top -> left 10k\n"
    "resistor rb left -> gnd 10k\n"
    "resistor rc top -> right 10k\n"
    "resistor rd right -> gnd 12k\n"
    "port pb right -> buf_in\n"
    "opamp u1 plus=buf_in minus=out out=out gain=100k\n"
    "resistor rl out -> gnd 2k\n"
    "expect out = right within 0.1%\n";

typedef struct run {
    const char *path;     /* circuit file, or NULL for `second` */
    int loops;
    bool alone;           /* the only host thread: OpenBLAS's count is checked after every round */
    int failed, passed;
    char first_fail[200];
} run;

static void fail(run *r, const char *what, int round)
{
    if (!r->failed)
        snprintf(r->first_fail, sizeof r->first_fail, "%s (round %d)", what, round);
    r->failed++;
}

static long rss_kb(void)
{
    FILE *f = fopen("/proc/self/statm", "r");
    long pages = 0, res = 0;
    if (!f)
        return -1;
    if (fscanf(f, "%ld %ld", &pages, &res) != 2)
        res = -1;
    fclose(f);
    return res < 0 ? -1 : res * (sysconf(_SC_PAGESIZE) / 1024);
}

/* One round of every public function; returns a checksum of the numbers. */
static double one_round(run *r, ls_circuit *c, int round)
{
    double sum = 0, v = 0;
    ls_solve_info si;
    if (ls_circuit_solve(c, NULL) < 0)
        fail(r, "solve", round);
    if (ls_circuit_solve_info(c, &si) != LS_OK)
        fail(r, "solve_info", round);
    sum += si.unknowns;
    (void)ls_circuit_title(c);
    for (int i = 0; i < ls_circuit_diag_count(c); i++) {
        ls_diagnostic d;
        if (ls_circuit_diag(c, i, &d) != LS_OK)
            fail(r, "diag", round);
    }
    for (int i = 1; i < ls_circuit_node_count(c); i++) {
        const char *name = ls_circuit_node_name(c, i);
        if (ls_circuit_node_index(c, name) < 0 || ls_circuit_voltage(c, name, &v) != LS_OK)
            fail(r, "voltage", round);
        sum += v;
        if (ls_circuit_error_bound(c, name, &v) != LS_OK)
            fail(r, "error_bound", round);
    }
    for (int i = 0; i < ls_circuit_part_count(c); i++) {
        ls_part_info p;
        if (ls_circuit_part(c, i, &p) != LS_OK || ls_circuit_part_index(c, p.name) != i)
            fail(r, "part", round);
        sum += p.current;
    }
    for (int i = 0; i < ls_circuit_port_count(c); i++) {
        ls_port_info p;
        if (ls_circuit_port(c, i, &p) != LS_OK || ls_circuit_port_by_name(c, p.name, &p) != LS_OK)
            fail(r, "port", round);
        sum += p.loaded;
    }
    const char *node = ls_circuit_node_name(c, ls_circuit_node_count(c) - 1);
    char q[200];
    snprintf(q, sizeof q, "%s * 2 - %s", node, node);
    if (ls_circuit_eval(c, q, &v) != LS_OK)
        fail(r, "eval", round);
    sum += v;
    ls_check_info *checks = NULL;
    int n = 0, nf = 0;
    if (ls_circuit_checks(c, 1, &checks, &n, &nf) != LS_OK)
        fail(r, "checks", round);
    sum += n + nf;
    ls_free(checks);
    ls_sag_entry *sag = NULL;
    if (ls_circuit_sag(c, node, &v, &sag, &n) != LS_OK)
        fail(r, "sag", round);
    ls_free(sag);
    ls_thevenin_info th;
    if (ls_circuit_thevenin(c, node, &th) != LS_OK)
        fail(r, "thevenin", round);
    sum += th.rth;
    ls_influence_entry *se = NULL;
    if (ls_circuit_influence(c, node, &v, &se, &n) != LS_OK)
        fail(r, "influence", round);
    for (int i = 0; i < n; i++)
        sum += se[i].per_unit;
    ls_free(se);
    /* a sweep point and back: the library's form of `sweep` */
    ls_part_info p0;
    ls_circuit_part(c, 1, &p0);
    if (!isnan(p0.value) && strcmp(p0.kind, "resistor") == 0) {
        if (ls_circuit_set_value(c, p0.name, p0.value * 1.01) < 0 ||
            ls_circuit_set_value(c, p0.name, p0.value) < 0)
            fail(r, "set_value", round);
    }
    return sum;
}

/* Settings the host chose; any change by the library is a failure. */
typedef struct host_settings {
    int blas, omp, dyn;
} host_settings;

static host_settings settings_now(void)
{
    return (host_settings){openblas_get_num_threads(), omp_get_max_threads(), omp_get_dynamic()};
}

/* Parse and solve the circuit of r: a new handle, or NULL after a failure. */
static ls_circuit *open_circuit(run *r)
{
    ls_circuit *c = NULL;
    ls_status st = r->path ? ls_circuit_parse_file(r->path, NULL, 0, &c)
                           : ls_circuit_parse_string("second.stack", second, strlen(second), NULL, 0, &c);
    if (st < 0) {
        ls_circuit_print_diags(c, stderr);
        ls_circuit_free(&c);
        fail(r, "parse", 0);
    }
    return c;
}

static void *thread_main(void *arg)
{
    run *r = arg;
    omp_set_num_threads(3);
    omp_set_dynamic(0);
    host_settings want = settings_now();
    ls_circuit *c = open_circuit(r);
    if (!c)
        return NULL;
    double first = one_round(r, c, 0);
    for (int k = 1; k < r->loops; k++) {
        double s = one_round(r, c, k);
        host_settings now = settings_now();
        if (now.omp != want.omp || now.dyn != want.dyn)
            fail(r, "OpenMP settings changed", k);
        if (r->alone && now.blas != want.blas)
            fail(r, "OpenBLAS thread count changed", k);
        if (s != first && !(isnan(s) && isnan(first)))
            fail(r, "a later round differs from the first", k);
        /* a fresh handle now and then: parse, solve, free */
        if (k % 50 == 0) {
            ls_circuit *t = open_circuit(r);
            if (t && ls_circuit_solve(t, NULL) < 0)
                fail(r, "fresh solve", k);
            ls_circuit_free(&t);
        }
    }
    ls_circuit_free(&c);
    r->passed++;
    return NULL;
}

int main(int argc, char **argv)
{
    const char *path = NULL;
    int loops = 5000, threads = 1, check_rss = 1;
    for (int i = 1; i < argc; i++) {
        if (strcmp(argv[i], "--loops") == 0 && i + 1 < argc)
            loops = atoi(argv[++i]);
        else if (strcmp(argv[i], "--threads") == 0 && i + 1 < argc)
            threads = atoi(argv[++i]);
        else if (strcmp(argv[i], "--no-rss") == 0)
            check_rss = 0;
        else
            path = argv[i];
    }
    if (!path || loops < 10 || threads < 1 || threads > 8) {
        fprintf(stderr, "usage: host_behaviour CIRCUIT [--loops N>=10] [--threads 1..8] [--no-rss]\n");
        return 2;
    }
    openblas_set_num_threads(2);
    omp_set_num_threads(3);
    omp_set_dynamic(0);
    host_settings want = settings_now();
    int passed = 0, failed = 0;
    if (threads == 1) {
        run r = {path, loops / 5, true, 0, 0, ""};
        thread_main(&r); /* warm-up: malloc's pools, OpenBLAS's buffers */
        long before = rss_kb();
        r.loops = loops - loops / 5;
        thread_main(&r);
        long after = rss_kb();
        printf("rss after warm-up %ld kB, at the end %ld kB (%d rounds)\n", before, after, loops);
        passed += r.passed;
        failed += r.failed;
        if (r.failed)
            printf("FAIL: %s\n", r.first_fail);
        if (check_rss) {
            bool flat = before > 0 && after - before <= BOUND_KB;
            printf("%s: resident memory flat within %d kB\n", flat ? "ok" : "FAIL", BOUND_KB);
            flat ? passed++ : failed++;
        }
    } else {
        run r[8];
        pthread_t tid[8];
        for (int t = 0; t < threads; t++) {
            r[t] = (run){t % 2 == 0 ? path : NULL, loops, false, 0, 0, ""};
            pthread_create(&tid[t], NULL, thread_main, &r[t]);
        }
        for (int t = 0; t < threads; t++) {
            pthread_join(tid[t], NULL);
            passed += r[t].passed;
            failed += r[t].failed;
            if (r[t].failed)
                printf("FAIL (thread %d): %s\n", t, r[t].first_fail);
        }
    }
    host_settings now = settings_now();
    bool same = now.blas == want.blas && now.omp == want.omp && now.dyn == want.dyn;
    printf("%s: host settings blas %d omp %d dynamic %d, now %d %d %d\n", same ? "ok" : "FAIL", want.blas,
           want.omp, want.dyn, now.blas, now.omp, now.dyn);
    same ? passed++ : failed++;
    printf("%d passed, %d failed\n", passed, failed);
    return failed ? 1 : 0;
}
