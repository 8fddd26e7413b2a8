/* test_plot.c — tick generator, histogram binning, and SVG/PNG output.
 * Outside checks: SVG well-formedness by Python's xml.etree, PNG size from the
 * IHDR chunk (PNG specification, ISO/IEC 15948: signature, then IHDR with
 * big-endian width and height at bytes 16..23), bin counts by numpy's
 * histogram_bin_edges(..., 'fd') — both from Debian's /usr/bin/python3. */
#include "report/plot.h"

#include "../../cu_run.h"
#include <dirent.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static char dir[64];

static int make_dir(void)
{
    strcpy(dir, "/tmp/ls_plot_test_XXXXXX");
    return mkdtemp(dir) ? 0 : 1;
}

/* Removes the temp dir and whatever the tests left in it. */
static int remove_dir(void)
{
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    return system(cmd) == 0 ? 0 : 1;
}

static const char *in_dir(char *buf, size_t n, const char *name)
{
    snprintf(buf, n, "%s/%s", dir, name);
    return buf;
}

/* True when step is 1, 2 or 5 × 10^k (to rounding). */
static int is_125(double step)
{
    double m = step / pow(10.0, floor(log10(step) + 1e-9));
    return fabs(m - 1) < 1e-9 || fabs(m - 2) < 1e-9 || fabs(m - 5) < 1e-9;
}

/* The 1-2-5 value just below step. */
static double prev_125(double step)
{
    double e = pow(10.0, floor(log10(step) + 1e-9)), m = step / e;
    return m < 1.5 ? 0.5 * e : m < 3 ? e : 2 * e;
}

/* Known cases worked by hand, then the defining properties over many ranges:
 * 1-2-5 step, first tick ≤ lo, last ≥ hi, evenly spaced, the smallest such
 * step that keeps ≤ target intervals inside the data, decimal-exact values. */
static void test_nice_ticks(void)
{
    double t[64], step;
    size_t n = ls_plot_nice_ticks(0, 1, 5, t, 64, &step);
    CU_ASSERT_EQUAL_FATAL(n, 6);
    CU_ASSERT_DOUBLE_EQUAL(step, 0.2, 0);
    CU_ASSERT_DOUBLE_EQUAL(t[3], 0.6, 0);
    CU_ASSERT_DOUBLE_EQUAL(t[5], 1.0, 0);
    n = ls_plot_nice_ticks(0.3, 2.7, 5, t, 64, &step); /* raw step 0.48 -> 0.5 */
    CU_ASSERT_EQUAL_FATAL(n, 7);
    CU_ASSERT_DOUBLE_EQUAL(t[0], 0.0, 0);
    CU_ASSERT_DOUBLE_EQUAL(t[6], 3.0, 0);
    n = ls_plot_nice_ticks(-3.2e-3, 7.7e-3, 5, t, 64, &step); /* raw 2.18 m -> 5 m */
    CU_ASSERT_EQUAL_FATAL(n, 4);
    CU_ASSERT_DOUBLE_EQUAL(t[0], -5e-3, 0);
    CU_ASSERT_DOUBLE_EQUAL(t[1], 0.0, 0);
    CU_ASSERT_DOUBLE_EQUAL(t[3], 1e-2, 0);
    n = ls_plot_nice_ticks(1e3, 1e6, 5, t, 64, &step);
    CU_ASSERT_EQUAL(n, 6);
    CU_ASSERT_DOUBLE_EQUAL(step, 2e5, 0);
    n = ls_plot_nice_ticks(4.98, 5.02, 6, t, 64, &step); /* raw 6.7 m -> 10 m */
    CU_ASSERT_EQUAL(n, 5);
    CU_ASSERT_DOUBLE_EQUAL(t[0], 4.98, 0);
    CU_ASSERT_DOUBLE_EQUAL(t[4], 5.02, 0);
    n = ls_plot_nice_ticks(5, 5, 4, t, 64, &step); /* widened to 4.5..5.5 */
    CU_ASSERT(n >= 2 && t[0] <= 4.5 && t[n - 1] >= 5.5);
    n = ls_plot_nice_ticks(2, -2, 4, t, 64, &step); /* swapped */
    CU_ASSERT(n == 5 && t[0] == -2 && t[4] == 2);
    CU_ASSERT_EQUAL(ls_plot_nice_ticks(0, NAN, 5, t, 64, &step), 0);
    CU_ASSERT_EQUAL(ls_plot_nice_ticks(0, INFINITY, 5, t, 64, &step), 0);
    CU_ASSERT_EQUAL(ls_plot_nice_ticks(-1e308, 1e308, 5, t, 64, &step), 0);
    CU_ASSERT_EQUAL(ls_plot_nice_ticks(0, 1, 50, t, 4, &step), 0); /* does not fit */

    uint64_t x = 88172645463325252u; /* xorshift64 ranges over many decades */
    for (int k = 0; k < 2000; k++) {
        x ^= x << 13, x ^= x >> 7, x ^= x << 17;
        double a = ldexp((double)(x >> 11), -53);
        x ^= x << 13, x ^= x >> 7, x ^= x << 17;
        double b = ldexp((double)(x >> 11), -53);
        double scale = pow(10.0, -12 + 24 * a), lo = (b - 0.5) * scale;
        double hi = lo + scale * (0.001 + a * b);
        int target = 2 + k % 9;
        n = ls_plot_nice_ticks(lo, hi, target, t, 64, &step);
        CU_ASSERT_FATAL(n >= 2);
        CU_ASSERT(is_125(step));
        CU_ASSERT(t[0] <= lo + 1e-9 * step && t[n - 1] >= hi - 1e-9 * step);
        CU_ASSERT(t[0] > lo - step && t[n - 1] < hi + step);
        CU_ASSERT((hi - lo) / step <= target * (1 + 1e-9));
        CU_ASSERT((hi - lo) / prev_125(step) > target * (1 - 1e-9));
        for (size_t i = 1; i < n; i++) {
            CU_ASSERT(fabs(t[i] - t[i - 1] - step) <= 1e-9 * step);
            char buf[40];
            snprintf(buf, sizeof buf, "%.12g", t[i]);
            CU_ASSERT(strtod(buf, NULL) == t[i]);
        }
    }
}

/* Runs a shell command; returns its exit status (or -1). */
static int run(const char *cmd)
{
    int st = system(cmd);
    return st == -1 ? -1 : WEXITSTATUS(st);
}

/* Freedman–Diaconis bins against numpy for two deterministic data sets. */
static void test_hist_bins(void)
{
    enum { N = 3000 };
    static double v[N];
    for (int set = 0; set < 2; set++) {
        for (int i = 0; i < N; i++)
            v[i] = set ? 3.3 + 0.01 * tan(M_PI * ((i * 0.618034) - floor(i * 0.618034) - 0.5) * 0.9)
                       : sqrt((double)i) * cos(i * 1.7);
        char path[128];
        FILE *f = fopen(in_dir(path, sizeof path, "bins.txt"), "w");
        CU_ASSERT_PTR_NOT_NULL_FATAL(f);
        for (int i = 0; i < N; i++)
            fprintf(f, "%.17g\n", v[i]);
        fclose(f);
        char cmd[512];
        snprintf(cmd, sizeof cmd,
                 "/usr/bin/python3 -c 'import sys, numpy as np;"
                 " x = np.loadtxt(sys.argv[1]);"
                 " sys.exit(0 if len(np.histogram_bin_edges(x, \"fd\")) - 1 == int(sys.argv[2]) else 1)'"
                 " %s %d", path, ls_plot_hist_bins(v, N));
        CU_ASSERT_EQUAL(run(cmd), 0);
        CU_ASSERT(ls_plot_hist_bins(v, N) > 5);
    }
    double same[9] = {2, 2, 2, 2, 2, 2, 2, 2, 2}; /* IQR 0: sqrt rule, ceil(sqrt 9) = 3 */
    CU_ASSERT_EQUAL(ls_plot_hist_bins(same, 9), 3);
    double one[2] = {1, NAN};
    CU_ASSERT_EQUAL(ls_plot_hist_bins(one, 2), 1);
}

/* PNG width and height from the IHDR chunk; 0 on any mismatch. */
static int png_size(const char *path, uint32_t *w, uint32_t *h)
{
    static const unsigned char sig[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'};
    unsigned char b[24];
    FILE *f = fopen(path, "rb");
    if (!f)
        return 0;
    size_t got = fread(b, 1, 24, f);
    fclose(f);
    if (got != 24 || memcmp(b, sig, 8) != 0 || memcmp(b + 12, "IHDR", 4) != 0)
        return 0;
    *w = (uint32_t)b[16] << 24 | (uint32_t)b[17] << 16 | (uint32_t)b[18] << 8 | b[19];
    *h = (uint32_t)b[20] << 24 | (uint32_t)b[21] << 16 | (uint32_t)b[22] << 8 | b[23];
    return 1;
}

/* 0 when Python's XML parser accepts the file and its root is <svg> with
 * the given width and height attributes. */
static int svg_check(const char *path, const char *w, const char *h)
{
    char cmd[512];
    snprintf(cmd, sizeof cmd,
             "/usr/bin/python3 -c 'import sys, xml.etree.ElementTree as ET;"
             " r = ET.parse(sys.argv[1]).getroot();"
             " sys.exit(0 if r.tag.endswith(\"svg\") and r.get(\"width\") == sys.argv[2]"
             " and r.get(\"height\") == sys.argv[3] else 1)' '%s' '%s' '%s'",
             path, w, h);
    return run(cmd);
}

/* Names in the temp dir other than "." and ".." and bins.txt. */
static int count_files(void)
{
    DIR *d = opendir(dir);
    int n = 0;
    for (struct dirent *e; d && (e = readdir(d));)
        n += e->d_name[0] != '.' && strcmp(e->d_name, "bins.txt") != 0;
    if (d)
        closedir(d);
    return n;
}

/* A bench-supply monitor: sense voltage against load current, with a gap. */
enum { NP = 41 };
static double xs[NP], ynom[NP], yhot[NP];
static const ls_plot_series series[2] = {{"sense (nominal)", xs, ynom, NP, NULL, false}, {"sense (hot)", xs, yhot, NP, NULL, false}};
static const ls_plot_mark bounds[2] = {{0.2, "expect \xE2\x89\xA5 0.2 V"}, {1.1, "expect \xE2\x89\xA4 1.1 V"}};

static ls_plot_line line_desc(bool logx)
{
    for (int i = 0; i < NP; i++) {
        xs[i] = logx ? pow(10.0, -3 + 4.0 * i / (NP - 1)) : 0.025 * i; /* A */
        ynom[i] = 1.0 - 0.02 * i;
        yhot[i] = i == 20 ? NAN : 0.95 - 0.021 * i;
    }
    ls_plot_line p = {.title = "Supply monitor: sense vs load", .xlabel = "load current",
                      .xunit = "A", .ylabel = "sense voltage", .yunit = "V", .logx = logx,
                      .series = series, .nseries = 2, .bounds = bounds, .nbounds = 2};
    return p;
}

/* Line plots in SVG (default size) and PNG (asked size), linear and log x. */
static void test_line_files(void)
{
    char path[128], msg[256] = "";
    ls_plot_line p = line_desc(false);
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "line.svg"), msg, sizeof msg), LS_PLOT_OK);
    CU_ASSERT_EQUAL(svg_check(path, "800px", "500px"), 0);
    p = line_desc(true);
    p.width = 640, p.height = 400;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "line_log.PNG"), msg, sizeof msg), LS_PLOT_OK);
    uint32_t w = 0, h = 0;
    CU_ASSERT(png_size(path, &w, &h) && w == 640 && h == 400);
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "line_log.svg"), msg, sizeof msg), LS_PLOT_OK);
    CU_ASSERT_EQUAL(svg_check(path, "640px", "400px"), 0);
    p.width = p.height = 0;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "line_def.png"), msg, sizeof msg), LS_PLOT_OK);
    CU_ASSERT(png_size(path, &w, &h) && w == 800 && h == 500);
    /* PDF: the file header of ISO 32000-1, 7.5.2 */
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "line.Pdf"), msg, sizeof msg), LS_PLOT_OK);
    char head[8] = "";
    FILE *f = fopen(path, "rb");
    CU_ASSERT(f && fread(head, 1, 5, f) == 5 && memcmp(head, "%PDF-", 5) == 0);
    if (f)
        fclose(f);
    CU_ASSERT_EQUAL(count_files(), 5); /* no temporary file left behind */
}

/* Histogram of a soil-probe reading with worst-case and expect markers. */
static void test_hist_files(void)
{
    enum { N = 5000 };
    static double v[N];
    for (int i = 0; i < N; i++) /* a smooth bell from a deterministic sum of fractions */
        v[i] = 1.2e-3 * (((i * 0.7548776662) - floor(i * 0.7548776662)) +
                         ((i * 0.5698402910) - floor(i * 0.5698402910)) - 1.0) + 0.5;
    v[7] = NAN; /* skipped */
    static const ls_plot_mark marks[3] = {{0.4985, "worst-case min"}, {0.5015, "worst-case max"},
                                          {0.4990, "expect \xE2\x89\xA5 499 mV"}};
    ls_plot_hist p = {.title = "Soil probe output, 5000 trials", .xlabel = "probe voltage",
                      .xunit = "V", .values = v, .n = N, .marks = marks, .nmarks = 3};
    char path[128], msg[256] = "";
    CU_ASSERT_EQUAL(ls_plot_hist_write(&p, in_dir(path, sizeof path, "hist.svg"), msg, sizeof msg), LS_PLOT_OK);
    CU_ASSERT_EQUAL(svg_check(path, "800px", "500px"), 0);
    p.width = 1024, p.height = 300, p.bins = 40;
    CU_ASSERT_EQUAL(ls_plot_hist_write(&p, in_dir(path, sizeof path, "hist.png"), msg, sizeof msg), LS_PLOT_OK);
    uint32_t w = 0, h = 0;
    CU_ASSERT(png_size(path, &w, &h) && w == 1024 && h == 300);
    CU_ASSERT_EQUAL(count_files(), 7);
}

/* Errors: a status code and a message, no crash, and no file left behind. */
static void test_errors(void)
{
    char path[128], msg[256];
    ls_plot_line p = line_desc(false);
    int before = count_files();
    msg[0] = 0;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "line.jpg"), msg, sizeof msg), LS_PLOT_EFORMAT);
    CU_ASSERT(msg[0] != 0);
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "svg"), msg, sizeof msg), LS_PLOT_EFORMAT);
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, NULL, NULL, 0), LS_PLOT_EFORMAT);
    msg[0] = 0;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "no/such/dir.svg"), msg, sizeof msg), LS_PLOT_EIO);
    CU_ASSERT(strstr(msg, "cannot create") != NULL);
    /* A directory is not a regular file: refused before anything is drawn
     * (docs/output.md), no temporary file, the directory untouched. */
    char sub[160], inner[200];
    snprintf(sub, sizeof sub, "%s/busy.svg", dir);
    CU_ASSERT_FATAL(mkdir(sub, 0755) == 0);
    snprintf(inner, sizeof inner, "%s/keep", sub);
    FILE *f = fopen(inner, "w");
    CU_ASSERT_PTR_NOT_NULL_FATAL(f);
    fclose(f);
    msg[0] = 0;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, sub, msg, sizeof msg), LS_PLOT_EIO);
    CU_ASSERT(strstr(msg, "is a directory") != NULL);
    CU_ASSERT_EQUAL(count_files(), before + 1); /* just busy.svg */
    CU_ASSERT_EQUAL(access(inner, F_OK), 0);

    p = line_desc(true);
    xs[3] = 0; /* log axis needs x > 0 */
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    p = line_desc(false);
    ls_plot_series nine[9];
    for (int i = 0; i < 9; i++)
        nine[i] = series[0];
    p.series = nine, p.nseries = 9;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    p = line_desc(false);
    p.width = 50;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    double nan2[2] = {NAN, NAN};
    ls_plot_series gap = {"all gaps", nan2, nan2, 2, NULL, false};
    p = line_desc(false);
    p.series = &gap, p.nseries = 1;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    ls_plot_mark nanmark = {NAN, "x"};
    p = line_desc(false);
    p.bounds = &nanmark, p.nbounds = 1;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    double wide[2] = {-1e308, 1e308}; /* span overflows a double */
    ls_plot_series huge = {"huge", wide, wide, 2, NULL, false};
    p = line_desc(false);
    p.series = &huge, p.nseries = 1;
    CU_ASSERT_EQUAL(ls_plot_line_write(&p, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    ls_plot_hist hp = {.values = nan2, .n = 2};
    CU_ASSERT_EQUAL(ls_plot_hist_write(&hp, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    CU_ASSERT_EQUAL(ls_plot_hist_write(NULL, in_dir(path, sizeof path, "bad.svg"), msg, sizeof msg), LS_PLOT_EARG);
    CU_ASSERT_EQUAL(count_files(), before + 1);
}

/* A histogram of one repeated value still draws (a single widened bin). */
static void test_hist_one_value(void)
{
    double v[5] = {3.3, 3.3, 3.3, 3.3, 3.3};
    ls_plot_hist p = {.xunit = "V", .values = v, .n = 5};
    char path[128], msg[256];
    CU_ASSERT_EQUAL(ls_plot_hist_write(&p, in_dir(path, sizeof path, "one.svg"), msg, sizeof msg), LS_PLOT_OK);
    CU_ASSERT_EQUAL(svg_check(path, "800px", "500px"), 0);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"nice ticks", test_nice_ticks},
        {"Freedman-Diaconis bins vs numpy", test_hist_bins},
        {"line plot SVG/PNG", test_line_files},
        {"histogram SVG/PNG", test_hist_files},
        {"errors leave no file", test_errors},
        {"histogram of one value", test_hist_one_value},
    };
    return ls_cu_run("plot", make_dir, remove_dir, cases, LS_CU_COUNT(cases));
}
