/* test_api_threads.c — distinct circuits on two threads at once give the same
 * numbers as one thread alone.  Each thread parses, solves and runs the port
 * report, sag by connection, Thevenin, influence, a tolerance study and a sweep
 * on a circuit of its own; the results are compared bit for bit with the same
 * calls made before the threads start.  Built as well with ThreadSanitizer by
 * tests/tsan/run.sh (the api-threads-tsan test), which then reports any data race
 * between the two.
 *
 * The circuits: a 10k/10k divider from 5 V into a 20k load through a port, and
 * a 1k/3k divider from 12 V into a 6k load (closed forms by the divider rule:
 * loaded 2.0 V and 12 V · 2k / 3k = 8.0 V, also checked here). */
#include <loadstack/loadstack.h>

#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>

#define NV 12

typedef struct job {
    const char *text;
    double expect_loaded;      /* V, by the divider rule */
    double v[NV];              /* results, in a fixed order */
    int ok;
} job;

/* Run every analysis on the job's circuit; fills v[] and ok. */
static void *work(void *arg)
{
    job *j = arg;
    ls_circuit *c = NULL;
    j->ok = 0;
    if (ls_circuit_parse_string("t.stack", j->text, strlen(j->text), NULL, 0, &c) < 0 ||
        ls_circuit_solve(c, NULL) < 0) {
        ls_circuit_free(&c);
        return NULL;
    }
    ls_port_info p;
    ls_sag_info si;
    ls_sag_share *sh = NULL;
    ls_thevenin_info th;
    ls_influence_entry *inf = NULL;
    ls_tol_info ti;
    ls_tol_options to = {.trials = 400, .seed = 5, .threads = 2};
    const char *q[] = {"mid"};
    double *x = NULL, *y = NULL, val = 0;
    int n = 0, m = 0, ns = 0;
    if (ls_circuit_port(c, 0, &p) == LS_OK && ls_circuit_sag_ports(c, "mid", &si, &sh, &n) == LS_OK &&
        ls_circuit_thevenin(c, "mid", &th) == LS_OK && ls_circuit_influence(c, "mid", &val, &inf, &m) == LS_OK &&
        ls_circuit_tol(c, "mid", &to, &ti, NULL) >= 0 &&
        ls_circuit_sweep(c, "vs_v", 1, 10, 5, 0, q, 1, &x, &y, &ns) == LS_OK) {
        double r[NV] = {p.open, p.loaded, p.zout, si.alone, sh[0].share, th.rth, inf[0].per_unit,
                        ti.mean, ti.std, ti.pct[2], y[2], y[4]};
        memcpy(j->v, r, sizeof r);
        j->ok = fabs(p.loaded - j->expect_loaded) <= 1e-12 * j->expect_loaded;
    }
    ls_free(sh);
    ls_free(inf);
    ls_free(x);
    ls_free(y);
    ls_circuit_free(&c);
    return NULL;
}

int main(void)
{
    static const char *a = "ground gnd\nlet vs_v = 5 V\nvoltage vs gnd -> top vs_v\n"
                           "resistor r1 top -> mid 10k tol=1%\nresistor r2 mid -> gnd 10k tol=1%\n"
                           "port p mid -> in\nresistor rl in -> gnd 20k tol=5%\n";
    static const char *b = "ground gnd\nlet vs_v = 12 V\nvoltage vs gnd -> top vs_v\n"
                           "resistor r1 top -> mid 1k tol=1%\nresistor r2 mid -> gnd 3k tol=2%\n"
                           "port p mid -> in\nresistor rl in -> gnd 6k tol=5%\n";
    job alone[2] = {{a, 2.0, {0}, 0}, {b, 8.0, {0}, 0}}, both[2] = {{a, 2.0, {0}, 0}, {b, 8.0, {0}, 0}};
    work(&alone[0]);
    work(&alone[1]);
    pthread_t t0, t1;
    if (pthread_create(&t0, NULL, work, &both[0]) != 0 || pthread_create(&t1, NULL, work, &both[1]) != 0) {
        fprintf(stderr, "cannot start the threads\n");
        return 1;
    }
    pthread_join(t0, NULL);
    pthread_join(t1, NULL);
    int bad = 0;
    for (int k = 0; k < 2; k++) {
        if (!alone[k].ok || !both[k].ok) {
            fprintf(stderr, "circuit %d: an analysis failed or the loaded voltage is not the divider rule's\n", k);
            bad++;
        }
        for (int i = 0; i < NV; i++)
            if (memcmp(&alone[k].v[i], &both[k].v[i], sizeof(double)) != 0) {
                fprintf(stderr, "circuit %d, result %d: %.17g alone, %.17g beside another thread\n", k, i,
                        alone[k].v[i], both[k].v[i]);
                bad++;
            }
    }
    printf("two circuits on two threads: %s\n", bad ? "DIFFERENT" : "the same numbers as alone");
    return bad ? 1 : 0;
}
