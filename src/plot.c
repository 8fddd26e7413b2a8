/* plot.c — line plots and histograms with cairo (SVG and PNG surfaces). */
#include "plot.h"

#include "fmt.h"

#include <cairo-svg.h>
#include <cairo.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#define MAX_TICKS 64
#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

/* ---- messages ------------------------------------------------------------ */

/* Writes a printf-formatted reason to msg (if any) and returns code. */
static int fail(char *msg, size_t msgn, int code, const char *fmt, ...)
{
    if (msg && msgn) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(msg, msgn, fmt, ap);
        va_end(ap);
    }
    return code;
}

/* ---- ticks --------------------------------------------------------------- */

/* m × 10^e as the double nearest the decimal (one rounding: 10^|e| is exact
 * for |e| ≤ 22), so ticks print and compare as the decimals they stand for. */
static double dec(double m, int e)
{
    double p = 1.0;
    for (int i = 0; i < abs(e) && i < 330; i++)
        p *= 10.0;
    return e >= 0 ? m * p : m / p;
}

/* See the header. */
size_t ls_plot_nice_ticks(double lo, double hi, int target, double *ticks, size_t max,
                          double *step)
{
    if (!isfinite(lo) || !isfinite(hi) || !isfinite(hi - lo) || !ticks)
        return 0;
    if (lo > hi) {
        double t = lo;
        lo = hi;
        hi = t;
    }
    if (lo == hi) {
        double d = lo == 0 ? 1.0 : fabs(lo) * 0.1;
        lo -= d;
        hi += d;
    }
    if (target < 1)
        target = 1;
    double raw = (hi - lo) / target;
    int e = (int)floor(log10(raw));
    double f = raw / dec(1, e), m;
    /* The smallest 1-2-5 step not below raw: at most `target` intervals
     * inside the data, plus at most one partly outside at each end. */
    if (f <= 1.0 + 1e-9)
        m = 1;
    else if (f <= 2.0 + 1e-9)
        m = 2;
    else if (f <= 5.0 + 1e-9)
        m = 5;
    else
        m = 1, e++;
    double s = dec(m, e);
    /* Tolerance so a bound that is itself a tick (0.3 / 0.1 = 2.9999...)
     * starts there instead of one step further out. */
    double k0 = floor(lo / s + 1e-9), k1 = ceil(hi / s - 1e-9);
    if (k1 - k0 + 1 > (double)max)
        return 0;
    size_t n = 0;
    for (double k = k0; k <= k1; k++)
        ticks[n++] = k == 0 ? 0.0 : dec(k * m, e);
    if (step)
        *step = s;
    return n;
}

/* One axis: shown range, ticks, and how values map onto it. */
typedef struct axis {
    double lo, hi;
    bool log;
    double t[MAX_TICKS];
    size_t nt;
    double step;          /* linear tick step (sets the label digits) */
    const char *unit;
} axis;

/* Fills a from the data range [lo, hi]; the shown range is the outer ticks.
 * Log axes cover whole decades, with 1-2-5 ticks when they span ≤ 3.
 * Returns false when the range cannot be drawn (overflowing span or decades). */
static bool axis_make(axis *a, double lo, double hi, bool logscale, const char *unit, int target)
{
    a->log = logscale;
    a->unit = unit ? unit : "";
    if (!logscale) {
        a->nt = ls_plot_nice_ticks(lo, hi, target, a->t, MAX_TICKS, &a->step);
        if (a->nt < 2)
            return false;
        a->lo = a->t[0];
        a->hi = a->t[a->nt - 1];
        return a->hi > a->lo;
    }
    if (!(lo >= 1e-300 && hi <= 1e300))
        return false;
    int d0 = (int)floor(log10(lo) + 1e-9), d1 = (int)ceil(log10(hi) - 1e-9);
    if (d1 <= d0)
        d1 = d0 + 1;
    a->lo = dec(1, d0);
    a->hi = dec(1, d1);
    a->nt = 0;
    int every = (d1 - d0 + 7) / 8;
    for (int d = d0; d <= d1 && a->nt < MAX_TICKS - 3; d++) {
        if (d1 - d0 <= 3) {
            a->t[a->nt++] = dec(1, d);
            if (d < d1) {
                a->t[a->nt++] = dec(2, d);
                a->t[a->nt++] = dec(5, d);
            }
        } else if ((d - d0) % every == 0) {
            a->t[a->nt++] = dec(1, d);
        }
    }
    a->step = 0;
    return true;
}

/* Fraction 0..1 of v along the axis. */
static double axis_frac(const axis *a, double v)
{
    if (a->log)
        return (log10(v) - log10(a->lo)) / (log10(a->hi) - log10(a->lo));
    return (v - a->lo) / (a->hi - a->lo);
}

/* Tick label into buf: as many significant digits as the step resolves. */
static void axis_label(const axis *a, double v, char *buf, size_t n)
{
    int sig = 1;
    if (!a->log && v != 0) {
        sig = (int)floor(log10(fabs(v)) + 1e-9) - (int)floor(log10(a->step) + 1e-9) + 1;
        sig = sig < 1 ? 1 : sig > 6 ? 6 : sig;
    }
    ls_fmt_eng(buf, n, v, a->unit, sig, false);
}

/* ---- drawing helpers ------------------------------------------------------ */

typedef struct frame {
    double x0, y0, x1, y1;  /* plot area in pixels, y0 at the top */
    double fs;              /* base font size, pixels */
    int w, h;
} frame;

static double px(const frame *f, const axis *a, double v)
{
    return f->x0 + (f->x1 - f->x0) * axis_frac(a, v);
}

static double py(const frame *f, const axis *a, double v)
{
    return f->y1 - (f->y1 - f->y0) * axis_frac(a, v);
}

/* Width in pixels of s at the current font. */
static double text_w(cairo_t *cr, const char *s)
{
    cairo_text_extents_t te;
    cairo_text_extents(cr, s, &te);
    return te.x_advance;
}

/* Shows s with the point (x, y) at fraction (ax, ay) of its box: (0, 0) top
 * left, (0.5, 0.5) centre, (1, 1) bottom right. */
static void text_at(cairo_t *cr, double x, double y, const char *s, double ax, double ay)
{
    cairo_font_extents_t fe;
    cairo_font_extents(cr, &fe);
    double hgt = fe.ascent + fe.descent;
    cairo_move_to(cr, x - ax * text_w(cr, s), y - ay * hgt + fe.ascent);
    cairo_show_text(cr, s);
}

static const double palette[LS_PLOT_MAX_SERIES][3] = {
    {0.00, 0.45, 0.70}, {0.84, 0.37, 0.00}, {0.00, 0.62, 0.45}, {0.80, 0.47, 0.65},
    {0.35, 0.35, 0.35}, {0.90, 0.62, 0.00}, {0.34, 0.71, 0.91}, {0.60, 0.20, 0.20},
};

/* Lays out the plot area for a w × h picture whose y tick labels are in ya,
 * then draws background, grid, ticks, labels, box and title. */
static frame draw_frame(cairo_t *cr, int w, int h, const axis *xa, const axis *ya,
                        const char *title, const char *xlabel, const char *ylabel)
{
    frame f = {.w = w, .h = h};
    double sc = sqrt((double)w * h / (800.0 * 500.0));
    f.fs = 12.0 * (sc < 0.6 ? 0.6 : sc > 2.5 ? 2.5 : sc);
    char buf[64];
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, f.fs);
    double lw = 0;
    for (size_t i = 0; i < ya->nt; i++) {
        axis_label(ya, ya->t[i], buf, sizeof buf);
        lw = fmax(lw, text_w(cr, buf));
    }
    f.x0 = lw + f.fs * (ylabel && *ylabel ? 2.6 : 1.2);
    /* Room for half of the last x tick label, which is centred on the edge. */
    axis_label(xa, xa->t[xa->nt - 1], buf, sizeof buf);
    f.x1 = w - fmax(f.fs * 1.8, text_w(cr, buf) / 2 + 4);
    f.y0 = f.fs * (title && *title ? 3.0 : 1.2);
    f.y1 = h - f.fs * (xlabel && *xlabel ? 3.6 : 2.2);

    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_set_line_width(cr, 1);
    cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
    for (size_t i = 0; i < xa->nt; i++) {
        double x = round(px(&f, xa, xa->t[i])) + 0.5;
        cairo_move_to(cr, x, f.y0);
        cairo_line_to(cr, x, f.y1);
    }
    for (size_t i = 0; i < ya->nt; i++) {
        double y = round(py(&f, ya, ya->t[i])) + 0.5;
        cairo_move_to(cr, f.x0, y);
        cairo_line_to(cr, f.x1, y);
    }
    cairo_stroke(cr);

    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_rectangle(cr, f.x0, f.y0, f.x1 - f.x0, f.y1 - f.y0);
    cairo_stroke(cr);
    double tl = f.fs * 0.35;
    for (size_t i = 0; i < xa->nt; i++) {
        double x = px(&f, xa, xa->t[i]);
        cairo_move_to(cr, x, f.y1);
        cairo_line_to(cr, x, f.y1 + tl);
        cairo_stroke(cr);
        axis_label(xa, xa->t[i], buf, sizeof buf);
        text_at(cr, x, f.y1 + tl + 2, buf, 0.5, 0);
    }
    for (size_t i = 0; i < ya->nt; i++) {
        double y = py(&f, ya, ya->t[i]);
        cairo_move_to(cr, f.x0 - tl, y);
        cairo_line_to(cr, f.x0, y);
        cairo_stroke(cr);
        axis_label(ya, ya->t[i], buf, sizeof buf);
        text_at(cr, f.x0 - tl - 2, y, buf, 1, 0.5);
    }
    if (xlabel && *xlabel)
        text_at(cr, (f.x0 + f.x1) / 2, h - f.fs * 0.4, xlabel, 0.5, 1);
    if (ylabel && *ylabel) {
        cairo_save(cr);
        cairo_translate(cr, f.fs * 0.4, (f.y0 + f.y1) / 2);
        cairo_rotate(cr, -M_PI / 2);
        text_at(cr, 0, 0, ylabel, 0.5, 0);
        cairo_restore(cr);
    }
    if (title && *title) {
        cairo_save(cr);
        cairo_set_font_size(cr, f.fs * 1.25);
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
        text_at(cr, w / 2.0, f.fs * 0.8, title, 0.5, 0);
        cairo_restore(cr);
    }
    return f;
}

/* Dashed dark-red reference line from (xa, ya) to (xb, yb). */
static void mark_line(cairo_t *cr, double xa, double ya, double xb, double yb)
{
    static const double dash[] = {6, 4};
    cairo_save(cr);
    cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
    cairo_set_line_width(cr, 1.5);
    cairo_set_dash(cr, dash, 2, 0);
    cairo_move_to(cr, xa, ya);
    cairo_line_to(cr, xb, yb);
    cairo_stroke(cr);
    cairo_restore(cr);
}

/* ---- output ---------------------------------------------------------------- */

typedef void (*draw_fn)(cairo_t *cr, const void *desc, const axis *xa, const axis *ya, int w,
                        int h);

/* cairo stream callback: all or nothing into the FILE. */
static cairo_status_t write_cb(void *closure, const unsigned char *data, unsigned int len)
{
    return fwrite(data, 1, len, (FILE *)closure) == len ? CAIRO_STATUS_SUCCESS
                                                          : CAIRO_STATUS_WRITE_ERROR;
}

int ls_plot_format(const char *path)
{
    size_t len = path ? strlen(path) : 0;
    if (len > 4 && strcasecmp(path + len - 4, ".svg") == 0)
        return LS_PLOT_SVG;
    if (len > 4 && strcasecmp(path + len - 4, ".png") == 0)
        return LS_PLOT_PNG;
    return 0;
}

/* Draws with fn onto an SVG or PNG surface streamed into dest's temporary
 * file; with dest NULL, into a destination opened here on path (see
 * output.h: only a regular file, renamed into place when complete) and
 * committed or discarded before returning.  A caller's dest is left for the
 * caller to commit or discard.  Returns an ls_plot_status. */
static int render(ls_dest *dest, const char *path, int w, int h, draw_fn fn, const void *desc,
                  const axis *xa, const axis *ya, char *msg, size_t msgn)
{
    const char *name = dest ? dest->path : path;
    int format = ls_plot_format(name);
    if (!format)
        return fail(msg, msgn, LS_PLOT_EFORMAT, "'%s': a plot file must end in .svg or .png",
                    name ? name : "");
    ls_dest own;
    if (!dest) {
        char why[600];
        if (ls_dest_open(&own, "plot", path, why, sizeof why) != 0)
            return fail(msg, msgn, LS_PLOT_EIO, "%s", why);
        dest = &own;
    }
    FILE *fp = dest->f;
    bool svg = format == LS_PLOT_SVG, png = format == LS_PLOT_PNG;
    cairo_surface_t *s = svg ? cairo_svg_surface_create_for_stream(write_cb, fp, w, h)
                             : cairo_image_surface_create(CAIRO_FORMAT_RGB24, w, h);
    if (svg && cairo_surface_status(s) == CAIRO_STATUS_SUCCESS)
        cairo_svg_surface_set_document_unit(s, CAIRO_SVG_UNIT_PX);
    cairo_t *cr = cairo_create(s);
    if (cairo_status(cr) == CAIRO_STATUS_SUCCESS)
        fn(cr, desc, xa, ya, w, h);
    cairo_status_t st = cairo_status(cr);
    cairo_destroy(cr);
    if (st == CAIRO_STATUS_SUCCESS && png)
        st = cairo_surface_write_to_png_stream(s, write_cb, fp);
    cairo_surface_finish(s);
    if (st == CAIRO_STATUS_SUCCESS)
        st = cairo_surface_status(s);
    cairo_surface_destroy(s);
    int rc = LS_PLOT_OK;
    if (ferror(fp))
        rc = fail(msg, msgn, LS_PLOT_EIO, "cannot write '%s': %s", name, strerror(errno));
    else if (st != CAIRO_STATUS_SUCCESS)
        rc = fail(msg, msgn, LS_PLOT_ECAIRO, "cairo: %s", cairo_status_to_string(st));
    if (dest == &own) {
        char why[600];
        if (rc != LS_PLOT_OK)
            ls_dest_discard(&own);
        else if (ls_dest_commit(&own, why, sizeof why) != 0)
            rc = fail(msg, msgn, LS_PLOT_EIO, "%s", why);
    }
    return rc;
}

/* Checks the picture size, applying the 800 × 500 default for 0. */
static int check_size(int *w, int *h, char *msg, size_t msgn)
{
    if (*w == 0)
        *w = LS_PLOT_DEFAULT_WIDTH;
    if (*h == 0)
        *h = LS_PLOT_DEFAULT_HEIGHT;
    if (*w < 100 || *w > 20000 || *h < 100 || *h > 20000)
        return fail(msg, msgn, LS_PLOT_EARG, "picture size %d x %d is outside 100..20000", *w, *h);
    return LS_PLOT_OK;
}

/* Checks marks: count and finite values; widens [*lo, *hi] to include them. */
static int check_marks(const ls_plot_mark *m, size_t n, double *lo, double *hi, char *msg,
                       size_t msgn)
{
    if (n > LS_PLOT_MAX_MARKS || (n && !m))
        return fail(msg, msgn, LS_PLOT_EARG, "at most %d marker lines", LS_PLOT_MAX_MARKS);
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(m[i].value))
            return fail(msg, msgn, LS_PLOT_EARG, "marker line %zu has no finite value", i + 1);
        *lo = fmin(*lo, m[i].value);
        *hi = fmax(*hi, m[i].value);
    }
    return LS_PLOT_OK;
}

/* ---- line plot ------------------------------------------------------------- */

static void draw_line(cairo_t *cr, const void *desc, const axis *xa, const axis *ya, int w,
                      int h)
{
    const ls_plot_line *p = desc;
    frame f = draw_frame(cr, w, h, xa, ya, p->title, p->xlabel, p->ylabel);
    cairo_save(cr);
    cairo_rectangle(cr, f.x0, f.y0, f.x1 - f.x0, f.y1 - f.y0);
    cairo_clip(cr);
    for (size_t i = 0; i < p->nbounds; i++) {
        double y = py(&f, ya, p->bounds[i].value);
        mark_line(cr, f.x0, y, f.x1, y);
        if (p->bounds[i].label) {
            cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
            text_at(cr, f.x0 + 4, y - 2, p->bounds[i].label, 0, 1); /* left: the legend is right */
        }
    }
    cairo_set_line_width(cr, 1.8);
    cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND); /* a lone point between gaps shows as a dot */
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
    for (size_t s = 0; s < p->nseries; s++) {
        const ls_plot_series *se = &p->series[s];
        bool pen = false;
        for (size_t i = 0; i < se->n; i++) {
            if (!isfinite(se->x[i]) || !isfinite(se->y[i])) {
                pen = false;
                continue;
            }
            double x = px(&f, xa, se->x[i]), y = py(&f, ya, se->y[i]);
            if (!pen)
                cairo_move_to(cr, x, y);
            cairo_line_to(cr, x, y);
            pen = true;
        }
        cairo_set_source_rgb(cr, palette[s][0], palette[s][1], palette[s][2]);
        cairo_stroke(cr);
    }
    cairo_restore(cr);

    /* Legend box in the top right corner of the plot area. */
    double tw = 0;
    int rows = 0;
    for (size_t s = 0; s < p->nseries; s++)
        if (p->series[s].name && *p->series[s].name) {
            tw = fmax(tw, text_w(cr, p->series[s].name));
            rows++;
        }
    if (!rows)
        return;
    double rh = f.fs * 1.4, sw = f.fs * 2.2, pad = f.fs * 0.5;
    double bw = tw + sw + 3 * pad, bh = rows * rh + pad;
    double bx = f.x1 - bw - 6, by = f.y0 + 6;
    cairo_rectangle(cr, bx, by, bw, bh);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.85);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.5, 0.5, 0.5);
    cairo_set_line_width(cr, 1);
    cairo_stroke(cr);
    int r = 0;
    for (size_t s = 0; s < p->nseries; s++) {
        if (!p->series[s].name || !*p->series[s].name)
            continue;
        double y = by + pad / 2 + (r++ + 0.5) * rh;
        cairo_set_source_rgb(cr, palette[s][0], palette[s][1], palette[s][2]);
        cairo_set_line_width(cr, 2.5);
        cairo_move_to(cr, bx + pad, y);
        cairo_line_to(cr, bx + pad + sw, y);
        cairo_stroke(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text_at(cr, bx + 2 * pad + sw, y, p->series[s].name, 0, 0.5);
    }
}

/* Validates everything before any file is created, then draws into dest (or
 * a file at path when dest is NULL). */
static int line_write(const ls_plot_line *p, ls_dest *dest, const char *path, char *msg, size_t msgn)
{
    if (!p || !p->series || p->nseries < 1 || p->nseries > LS_PLOT_MAX_SERIES)
        return fail(msg, msgn, LS_PLOT_EARG, "a line plot needs 1..%d series", LS_PLOT_MAX_SERIES);
    int w = p->width, h = p->height;
    int rc = check_size(&w, &h, msg, msgn);
    if (rc)
        return rc;
    double x0 = INFINITY, x1 = -INFINITY, y0 = INFINITY, y1 = -INFINITY;
    for (size_t s = 0; s < p->nseries; s++) {
        const ls_plot_series *se = &p->series[s];
        if (se->n && (!se->x || !se->y))
            return fail(msg, msgn, LS_PLOT_EARG, "series %zu has no data arrays", s + 1);
        for (size_t i = 0; i < se->n; i++) {
            if (!isfinite(se->x[i]) || !isfinite(se->y[i]))
                continue;
            if (p->logx && se->x[i] <= 0)
                return fail(msg, msgn, LS_PLOT_EARG, "log x axis: series %zu has x = %g <= 0",
                            s + 1, se->x[i]);
            x0 = fmin(x0, se->x[i]);
            x1 = fmax(x1, se->x[i]);
            y0 = fmin(y0, se->y[i]);
            y1 = fmax(y1, se->y[i]);
        }
    }
    if (!(x0 <= x1))
        return fail(msg, msgn, LS_PLOT_EARG, "no point with finite x and y to plot");
    rc = check_marks(p->bounds, p->nbounds, &y0, &y1, msg, msgn);
    if (rc)
        return rc;
    axis xa, ya;
    if (!axis_make(&xa, x0, x1, p->logx, p->xunit, w / 110 > 2 ? w / 110 : 2) ||
        !axis_make(&ya, y0, y1, false, p->yunit, h / 70 > 2 ? h / 70 : 2))
        return fail(msg, msgn, LS_PLOT_EARG, "data range too wide to draw");
    return render(dest, path, w, h, draw_line, p, &xa, &ya, msg, msgn);
}

int ls_plot_line_write(const ls_plot_line *p, const char *path, char *msg, size_t msgn)
{
    return line_write(p, NULL, path, msg, msgn);
}

int ls_plot_line_write_to(const ls_plot_line *p, ls_dest *dest, char *msg, size_t msgn)
{
    return dest ? line_write(p, dest, NULL, msg, msgn) : fail(msg, msgn, LS_PLOT_EARG, "no destination");
}

/* ---- histogram ------------------------------------------------------------- */

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Quantile q of sorted v[0..n-1], linear between order statistics. */
static double quantile(const double *v, size_t n, double q)
{
    double pos = q * (double)(n - 1);
    size_t i = (size_t)floor(pos);
    if (i + 1 >= n)
        return v[n - 1];
    return v[i] + (pos - (double)i) * (v[i + 1] - v[i]);
}

/* See the header.  Sorts a malloc'd copy of the finite values, freed here. */
int ls_plot_hist_bins(const double *v, size_t n)
{
    double *s = malloc((n ? n : 1) * sizeof *s);
    size_t m = 0;
    if (!s)
        return 1;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]))
            s[m++] = v[i];
    int bins = 1;
    if (m >= 2) {
        qsort(s, m, sizeof *s, cmp_double);
        double iqr = quantile(s, m, 0.75) - quantile(s, m, 0.25), range = s[m - 1] - s[0];
        double bw = 2.0 * iqr / cbrt((double)m);
        double b = bw > 0 && range > 0 ? ceil(range / bw) : ceil(sqrt((double)m));
        bins = b < 1 ? 1 : b > 500 ? 500 : (int)b;
    }
    free(s);
    return bins;
}

/* Counted bins, passed to the drawing callback beside the description. */
typedef struct hist_data {
    const ls_plot_hist *p;
    double lo, width;      /* first bin edge and bin width, x units */
    int bins;
    unsigned *count;
} hist_data;

static void draw_hist(cairo_t *cr, const void *desc, const axis *xa, const axis *ya, int w,
                      int h)
{
    const hist_data *d = desc;
    const ls_plot_hist *p = d->p;
    frame f = draw_frame(cr, w, h, xa, ya, p->title, p->xlabel, p->ylabel ? p->ylabel : "count");
    cairo_save(cr);
    cairo_rectangle(cr, f.x0, f.y0, f.x1 - f.x0, f.y1 - f.y0);
    cairo_clip(cr);
    for (int b = 0; b < d->bins; b++) {
        if (!d->count[b])
            continue;
        double xl = px(&f, xa, d->lo + b * d->width), xr = px(&f, xa, d->lo + (b + 1) * d->width);
        double yt = py(&f, ya, d->count[b]);
        cairo_rectangle(cr, xl, yt, xr - xl, f.y1 - yt);
    }
    cairo_set_source_rgb(cr, 0.55, 0.70, 0.85);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.15, 0.30, 0.50);
    cairo_set_line_width(cr, 0.8);
    cairo_stroke(cr);
    for (size_t i = 0; i < p->nmarks; i++) {
        double x = px(&f, xa, p->marks[i].value);
        mark_line(cr, x, f.y0, x, f.y1);
        if (!p->marks[i].label)
            continue;
        /* Labels on three staggered rows, on the side facing the centre. */
        double y = f.y0 + 4 + (double)(i % 3) * f.fs * 1.3;
        bool left = x > (f.x0 + f.x1) / 2;
        cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
        text_at(cr, left ? x - 3 : x + 3, y, p->marks[i].label, left ? 1 : 0, 0);
    }
    cairo_restore(cr);
}

/* Validates, counts and draws into dest (or a file at path when dest is
 * NULL).  The bin counts are malloc'd here and freed before return. */
static int hist_write(const ls_plot_hist *p, ls_dest *dest, const char *path, char *msg, size_t msgn)
{
    if (!p || (p->n && !p->values))
        return fail(msg, msgn, LS_PLOT_EARG, "a histogram needs values");
    if (p->bins < 0 || p->bins > 10000)
        return fail(msg, msgn, LS_PLOT_EARG, "bin count %d is outside 0..10000", p->bins);
    int w = p->width, h = p->height;
    int rc = check_size(&w, &h, msg, msgn);
    if (rc)
        return rc;
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < p->n; i++)
        if (isfinite(p->values[i])) {
            lo = fmin(lo, p->values[i]);
            hi = fmax(hi, p->values[i]);
        }
    if (!(lo <= hi))
        return fail(msg, msgn, LS_PLOT_EARG, "no finite value to count");
    hist_data d = {.p = p, .bins = p->bins ? p->bins : ls_plot_hist_bins(p->values, p->n)};
    if (lo == hi) { /* one distinct value: a single bin of width 1 % of it (or 1) */
        double e = lo == 0 ? 0.5 : fabs(lo) * 0.005;
        lo -= e;
        hi += e;
    }
    d.lo = lo;
    d.width = (hi - lo) / d.bins;
    d.count = calloc((size_t)d.bins, sizeof *d.count);
    if (!d.count)
        return fail(msg, msgn, LS_PLOT_EIO, "out of memory");
    unsigned top = 0;
    for (size_t i = 0; i < p->n; i++) {
        double v = p->values[i];
        if (!isfinite(v))
            continue;
        int b = (int)((v - lo) / d.width);
        b = b < 0 ? 0 : b >= d.bins ? d.bins - 1 : b; /* the maximum falls in the last bin */
        if (++d.count[b] > top)
            top = d.count[b];
    }
    double xlo = lo, xhi = hi;
    rc = check_marks(p->marks, p->nmarks, &xlo, &xhi, msg, msgn);
    if (rc == LS_PLOT_OK) {
        /* 2 % air each side, so extreme markers do not sit on the frame. */
        double air = 0.02 * (xhi - xlo);
        xlo -= air;
        xhi += air;
        axis xa, ya;
        int yt = h / 70 > 2 ? h / 70 : 2;
        /* At least `yt` counts tall, so the tick step is a whole count. */
        if (!axis_make(&xa, xlo, xhi, false, p->xunit, w / 110 > 2 ? w / 110 : 2) ||
            !axis_make(&ya, 0, top > (unsigned)yt ? top : (unsigned)yt, false, "", yt))
            rc = fail(msg, msgn, LS_PLOT_EARG, "data range too wide to draw");
        else
            rc = render(dest, path, w, h, draw_hist, &d, &xa, &ya, msg, msgn);
    }
    free(d.count);
    return rc;
}

int ls_plot_hist_write(const ls_plot_hist *p, const char *path, char *msg, size_t msgn)
{
    return hist_write(p, NULL, path, msg, msgn);
}

int ls_plot_hist_write_to(const ls_plot_hist *p, ls_dest *dest, char *msg, size_t msgn)
{
    return dest ? hist_write(p, dest, NULL, msg, msgn) : fail(msg, msgn, LS_PLOT_EARG, "no destination");
}
