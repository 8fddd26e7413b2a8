/* fmt.c — engineering notation and full-precision numbers. */
#include "fmt.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

static const char *prefix_for(int exp3, bool ascii)
{
    static const char *const pre[] = {"f", "p", "n", "u", "m", "", "k", "M", "G", "T"};
    int i = exp3 / 3 + 5;
    if (i < 0 || i > 9)
        return NULL;
    if (i == 3 && !ascii)
        return "\xC2\xB5"; /* µ */
    return pre[i];
}

static const char *unit_text(const char *unit, bool ascii)
{
    if (ascii && strcmp(unit, "\xCE\xA9") == 0)
        return "ohm";
    return unit;
}

char *ls_fmt_eng(char *buf, size_t n, double v, const char *unit, int sig, bool ascii)
{
    const char *u = unit_text(unit ? unit : "", ascii);
    const char *sep = u[0] ? " " : "";
    if (isnan(v)) {
        snprintf(buf, n, "undefined");
        return buf;
    }
    if (isinf(v)) {
        snprintf(buf, n, "%sunbounded", v < 0 ? "-" : "");
        return buf;
    }
    if (sig < 1)
        sig = 1;
    if (v == 0) {
        snprintf(buf, n, "0%s%s", sep, u);
        return buf;
    }
    double a = fabs(v);
    int e = (int)floor(log10(a));
    /* Round first so 999.95 becomes 1.000 k, not 1000 (one more digit). */
    double scale = pow(10.0, sig - 1 - e);
    double r = round(a * scale) / scale;
    if (r > 0)
        e = (int)floor(log10(r));
    int e3 = (int)(floor(e / 3.0) * 3);
    const char *p = prefix_for(e3, ascii);
    if (!p) {
        snprintf(buf, n, "%.*e%s%s", sig - 1, v, sep, u);
        return buf;
    }
    double m = r / pow(10.0, e3);
    int decimals = sig - 1 - (e - e3);
    if (decimals < 0)
        decimals = 0;
    snprintf(buf, n, "%s%.*f%s%s%s", v < 0 ? "-" : "", decimals, m, sep, p, u);
    return buf;
}

char *ls_fmt_full(char *buf, size_t n, double v)
{
    if (!isfinite(v))
        snprintf(buf, n, "null");
    else
        snprintf(buf, n, "%.17g", v);
    return buf;
}
