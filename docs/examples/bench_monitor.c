/* bench_monitor.c — embedding loadstack: solve a bench-supply monitor,
 * read its voltages and the loading report of the ADC port, ask why the ADC
 * reads low, and try a stiffer sense divider.  Uses only <loadstack/loadstack.h>.
 *
 *   cc bench_monitor.c $(pkg-config --cflags --libs loadstack) -o bench_monitor
 *   ./bench_monitor bench_monitor.stack
 *
 * Exit status: 0 when the stiffer divider passes the 10x rule, 1 when it does
 * not, 2 when the circuit cannot be read or solved. */
#include <stdio.h>
#include <stdlib.h>

#include <loadstack/loadstack.h>

/* Print the diagnostics as a list, one per line (file:line:col: level: message). */
static void show_diags(const ls_circuit *c)
{
    static const char *const level[] = {"note", "warning", "error"};
    for (int i = 0; i < ls_circuit_diag_count(c); i++) {
        ls_diagnostic d;
        if (ls_circuit_diag(c, i, &d) != LS_OK)
            continue;
        if (d.file)
            fprintf(stderr, "%s:%d:%d: %s: %s\n", d.file, d.line, d.column, level[d.level], d.message);
        else
            fprintf(stderr, "%s: %s\n", level[d.level], d.message);
    }
}

/* Print the loading report of the port called name; returns its verdict. */
static ls_port_verdict show_port(ls_circuit *c, const char *name)
{
    static const char *const verdict[] = {"ok", "marginal", "loading"};
    ls_port_info p;
    if (ls_circuit_port_by_name(c, name, &p) != LS_OK)
        return LS_VERDICT_LOADING;
    printf("port %s (%s -> %s): open %.4f V, loaded %.4f V, sag %.4f V\n", p.name, p.from, p.to, p.open,
           p.loaded, p.sag);
    printf("  zout %.1f ohm, zin %.1f ohm, ratio %.3f: %s\n", p.zout, p.zin, p.ratio, verdict[p.verdict]);
    return p.verdict;
}

/* The three parts that move the ADC reading most, by sag and by influence. */
static void explain(ls_circuit *c)
{
    ls_sag_entry *sag = NULL;
    ls_influence_entry *inf = NULL;
    int n = 0;
    double v = 0;
    if (ls_circuit_sag(c, "tap", &v, &sag, &n) == LS_OK) {
        printf("sag at tap (%.4f V):\n", v);
        for (int i = 0; i < n && i < 3; i++)
            printf("  without %-6s %s %.4f V (delta %+.4f V)\n", sag[i].name, sag[i].is_port ? "(port)" : "      ",
                   sag[i].without, sag[i].delta);
    }
    ls_free(sag);
    if (ls_circuit_influence(c, "adc", &v, &inf, &n) == LS_OK) {
        printf("influence on adc (%.4f V):\n", v);
        for (int i = 0; i < n && i < 3; i++)
            printf("  %-6s %+.4f %% per %%\n", inf[i].part, inf[i].percent_per_percent);
    }
    ls_free(inf);
}

int main(int argc, char **argv)
{
    const char *path = argc > 1 ? argv[1] : "bench_monitor.stack";
    ls_circuit *c = NULL;
    ls_status st = ls_circuit_parse_file(path, NULL, 0, &c);
    if (st >= 0)
        st = ls_circuit_solve(c, NULL);
    show_diags(c);
    if (st < 0) {
        fprintf(stderr, "bench_monitor: %s\n", ls_status_str(st));
        ls_circuit_free(&c);
        return 2;
    }
    printf("%s (loadstack %s)\n", ls_circuit_title(c), ls_version());
    for (int i = 0; i < ls_circuit_node_count(c); i++) {
        double v;
        const char *name = ls_circuit_node_name(c, i);
        if (ls_circuit_voltage(c, name, &v) == LS_OK)
            printf("  %-4s %8.4f V\n", name, v);
    }
    show_port(c, "p_tap");
    ls_thevenin_info th;
    if (ls_circuit_thevenin(c, "tap", &th) == LS_OK)
        printf("thevenin at tap: %.4f V behind %.1f ohm\n", th.vth, th.rth);
    explain(c);

    /* A divider ten times stiffer keeps the same ratio and drives the ADC. */
    printf("with r_hi = 10k, r_lo = 2.2k:\n");
    int code = 2;
    if (ls_circuit_set_value(c, "r_hi", 10e3) >= 0 && ls_circuit_set_value(c, "r_lo", 2.2e3) >= 0)
        code = show_port(c, "p_tap") == LS_VERDICT_OK ? 0 : 1;
    ls_check_info *checks = NULL;
    int n = 0, failed = 0;
    if (ls_circuit_checks(c, 1, &checks, &n, &failed) == LS_OK)
        printf("checks: %d of %d pass\n", n - failed, n);
    ls_free(checks);
    ls_circuit_free(&c);
    return code;
}
