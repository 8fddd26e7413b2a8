/* plot.h — line plots and histograms drawn with cairo, written as SVG, PNG or PDF.
 *
 * The caller fills a plain description struct (all pointers are borrowed and
 * only read during the call) and names the output file; the extension picks
 * the format: ".svg", ".png" or ".pdf" (any case), anything else is an error.  The
 * picture is drawn into a temporary file in the same directory and renamed
 * over the target only when complete, so a failed call leaves no partial file;
 * only a regular file is ever written (output.h, docs/output.md).
 * Tick labels are "nice" 1-2-5 values in engineering notation with the axis
 * unit (ls_fmt_eng: "1.5 mV", "10 kΩ"), so axis labels carry no unit.
 * Every text is placed where it overlaps no other text (tick labels are thinned,
 * limit labels and histogram marks moved to a free row). */
#ifndef LS_PLOT_H
#define LS_PLOT_H

#include <stdbool.h>
#include <stddef.h>

#include "report/output.h"

#define LS_PLOT_MAX_SERIES 8
#define LS_PLOT_MAX_MARKS 16
#define LS_PLOT_DEFAULT_WIDTH 800   /* pixels */
#define LS_PLOT_DEFAULT_HEIGHT 500

enum ls_plot_status {
    LS_PLOT_OK = 0,
    LS_PLOT_EARG,     /* bad description: no data, too many series, x ≤ 0 on a log axis, ... */
    LS_PLOT_EFORMAT,  /* file name is not .svg, .png or .pdf */
    LS_PLOT_EIO,      /* temporary file cannot be created, written or renamed */
    LS_PLOT_ECAIRO,   /* cairo reported an error while drawing or encoding */
};

/* One curve; points with a non-finite x or y are gaps in the line.  Curves of
 * different units go to separate panels, stacked over one shared x axis, one
 * panel per unit in order of first appearance. */
typedef struct ls_plot_series {
    const char *name;     /* legend text; NULL or "" leaves it out of the legend */
    const double *x, *y;  /* n points each */
    size_t n;
    const char *unit;     /* y unit (as for ls_fmt_eng); NULL: the plot's yunit */
    bool limit;           /* a limit that may vary along x: drawn dashed in dark red and
                           * labelled with its name at its right end, not in the legend */
} ls_plot_series;

/* A labelled reference line: horizontal (y = value) on a line plot, vertical
 * (x = value) on a histogram.  E.g. {0.2, "expect ≥ 0.2 V"}. */
typedef struct ls_plot_mark {
    double value;         /* in the axis's unit; must be finite */
    const char *label;    /* may be NULL */
} ls_plot_mark;

typedef struct ls_plot_line {
    const char *title;                 /* may be NULL */
    const char *xlabel, *xunit;        /* unit as given to ls_fmt_eng: "V", "Ω", "" */
    const char *ylabel, *yunit;
    bool logx;                         /* log x axis; every finite x must then be > 0 */
    /* 1..LS_PLOT_MAX_SERIES curves plus 0..LS_PLOT_MAX_MARKS limits.  The x
     * axis spans exactly the curves' x range (a sweep's FROM to TO). */
    const ls_plot_series *series;
    size_t nseries;
    const ls_plot_mark *bounds;        /* 0..LS_PLOT_MAX_MARKS horizontal lines (yunit's panel) */
    size_t nbounds;
    int width, height;                 /* pixels, 100..20000; 0 = default 800 × 500 */
} ls_plot_line;

/* The x range shows the data (2 % air each side); a mark beyond it is drawn
 * at the nearer edge as an arrow with its label and value, so a distant
 * limit neither hides nor squashes the distribution. */
typedef struct ls_plot_hist {
    const char *title;
    const char *xlabel, *xunit;
    const char *ylabel;                /* NULL = "count" */
    const double *values;              /* non-finite values are skipped */
    size_t n;
    int bins;                          /* 0 = ls_plot_hist_bins() */
    const ls_plot_mark *marks;         /* 0..LS_PLOT_MAX_MARKS vertical lines */
    size_t nmarks;
    int width, height;                 /* as for ls_plot_line */
} ls_plot_hist;

/* Draw p into `path`.  Returns an ls_plot_status; on failure a one-line reason
 * goes to msg (msgn bytes, may be NULL/0) and no file is left at path. */
int ls_plot_line_write(const ls_plot_line *p, const char *path, char *msg, size_t msgn);
int ls_plot_hist_write(const ls_plot_hist *p, const char *path, char *msg, size_t msgn);

/* The same into a destination the caller opened (ls_dest_open on a .svg or
 * .png path) and commits or discards: how a command writes its plot, checked
 * before the work and committed with the report. */
int ls_plot_line_write_to(const ls_plot_line *p, ls_dest *dest, char *msg, size_t msgn);
int ls_plot_hist_write_to(const ls_plot_hist *p, ls_dest *dest, char *msg, size_t msgn);

enum ls_plot_format { LS_PLOT_SVG = 1, LS_PLOT_PNG, LS_PLOT_PDF };

/* The picture format a file name asks for (an ls_plot_format), 0 for none. */
int ls_plot_format(const char *path);

/* Ticks at k·step, step = 1, 2 or 5 × 10^e chosen so about `target` (≥ 1)
 * intervals cover [lo, hi]; the first tick is ≤ lo and the last ≥ hi.  lo > hi
 * is swapped; lo == hi is widened by 10 % (±1 around 0).  Each tick is the
 * double nearest its decimal value (0.3, not 0.30000000000000004).  Writes at
 * most max ticks to ticks[] and the step to *step (if not NULL); returns the
 * count, or 0 when lo or hi is not finite or more than max ticks are needed. */
size_t ls_plot_nice_ticks(double lo, double hi, int target, double *ticks, size_t max,
                          double *step);

/* Default histogram bin count for the finite values of v: Freedman–Diaconis,
 * ceil(range / (2·IQR·n^(−1/3))) with quartiles by linear interpolation (as
 * numpy's histogram 'fd'); the square-root rule ceil(√n) when the IQR or range
 * is 0; clamped to 1..500.  Returns 1 for fewer than 2 finite values. */
int ls_plot_hist_bins(const double *v, size_t n);

#endif
