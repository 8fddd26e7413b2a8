/* test_threads.c — the library from several threads at once, for
 * ThreadSanitizer (built with -Db_sanitize=thread in .ci/run; in the normal
 * build it still checks the answers).
 *
 * 1. Two circuits parsed, solved and analysed on two threads through the
 *    public interface, each twenty times; every answer against its closed
 *    form (voltage-divider rule, Thevenin's theorem: a 10k/10k divider from
 *    5 V gives 2.5 V behind 5 kohm; a 1k/3k divider from 4 V gives 3 V behind
 *    750 ohm).
 * 2. The tol command's Monte Carlo threads: LOADSTACK_THREADS=4 and 512
 *    trials, so four workers share the trials, twice with the same seed: the
 *    two reports must be the same (each trial draws from its own stream). */
#include <loadstack/loadstack.h>

#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"

typedef struct job {
    const char *text;
    double vth, rth;   /* closed forms */
    int wrong;
} job;

static void *solve_many(void *arg)
{
    job *j = arg;
    for (int k = 0; k < 20; k++) {
        ls_circuit *c = NULL;
        ls_thevenin_info th;
        if (ls_circuit_parse_string("t.stack", j->text, strlen(j->text), NULL, 0, &c) < 0 ||
            ls_circuit_solve(c, NULL) < 0 || ls_circuit_thevenin(c, "mid", &th) != LS_OK ||
            fabs(th.vth - j->vth) > 1e-9 * j->vth || fabs(th.rth - j->rth) > 1e-9 * j->rth)
            j->wrong++;
        ls_circuit_free(&c);
    }
    return NULL;
}

/* The tol report of the circuit at path into out; the exit code. */
static int tol_report(const char *path, const char *out)
{
    ls_cli cli;
    memset(&cli, 0, sizeof cli);
    cli.command = "tol";
    cli.pos[0] = path;
    cli.pos[1] = "mid";
    cli.npos = 2;
    cli.fmt = FMT_JSON;
    cli.output = out;
    cli.derate = 1;
    cli.seed = 7;
    cli.trials = 512;
    int code = ls_out_prepare(&cli);
    if (code == LS_EXIT_OK)
        code = ls_cmd_tol(&cli);
    ls_out_abandon(&cli);
    return code;
}

static char *slurp(const char *path)
{
    FILE *f = fopen(path, "rb");
    char *b = f ? calloc(1, 1 << 20) : NULL;
    if (b)
        fread(b, 1, (1 << 20) - 1, f);
    if (f)
        fclose(f);
    return b;
}

int main(int argc, char **argv)
{
    const char *dir = argc > 1 ? argv[1] : "/tmp";
    job a = {"ground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> mid 10k\nresistor r2 mid -> gnd 10k\n", 2.5,
             5e3, 0};
    job b = {"ground gnd\nvoltage vs gnd -> top 4 V\nresistor r1 top -> mid 1k\nresistor r2 mid -> gnd 3k\n", 3.0,
             750, 0};
    pthread_t ta, tb;
    pthread_create(&ta, NULL, solve_many, &a);
    pthread_create(&tb, NULL, solve_many, &b);
    pthread_join(ta, NULL);
    pthread_join(tb, NULL);
    int fails = a.wrong + b.wrong;
    if (fails)
        fprintf(stderr, "FAIL: %d wrong answers from the two threads\n", fails);

    char path[512], r1[512], r2[512];
    snprintf(path, sizeof path, "%s/threads.stack", dir);
    snprintf(r1, sizeof r1, "%s/threads1.json", dir);
    snprintf(r2, sizeof r2, "%s/threads2.json", dir);
    FILE *f = fopen(path, "w");
    if (!f)
        return 2;
    fputs("ground gnd\nvoltage vs gnd -> top 5 V tol=1%\nresistor r1 top -> mid 10k tol=1%\n"
          "resistor r2 mid -> gnd 10k tol=1%\n",
          f);
    fclose(f);
    setenv("LOADSTACK_THREADS", "4", 1);
    char *x = NULL, *y = NULL;
    if (tol_report(path, r1) != 0 || tol_report(path, r2) != 0 || !(x = slurp(r1)) || !(y = slurp(r2)) ||
        strcmp(x, y) != 0 || !strstr(x, "\"trials\": 512")) {
        fprintf(stderr, "FAIL: tol on four threads: no report, or two runs with one seed differ\n");
        fails++;
    }
    free(x);
    free(y);
    remove(path);
    remove(r1);
    remove(r2);
    printf("%s\n", fails ? "thread test failed" : "two circuits on two threads and tol's workers agree");
    return fails ? 1 : 0;
}
