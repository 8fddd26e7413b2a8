/* html.h — the one-page HTML report of `solve` and `chain` (--format html).
 *
 * One self-contained file: inline CSS, the chain drawing as inline SVG, the
 * tolerance histograms as embedded SVG images, no script and nothing fetched.
 * Every string that comes from the circuit is escaped. */
#ifndef LS_HTML_H
#define LS_HTML_H

#include <stdint.h>
#include <stdio.h>

#include "analysis/chain.h"
#include "report/chain_plot.h"
#include "cli/cli.h"

#define LS_HTML_TRIALS 2000L   /* Monte Carlo trials per histogram: enough for its shape, quick */

/* Write the page of the solved session s to o.  c and pic may be NULL (then
 * they are built here).  Histograms of the quantities the expects name are
 * drawn with --plot-all, or when some part has a tol=.  Returns an exit code. */
int ls_html_page(FILE *o, ls_session *s, const ls_chain *c, const ls_chain_pic *pic);

/* Monte Carlo values of q over `trials` trials, each part uniform within its
 * tol=, from `seed` (as `loadstack tol`).  *values gets `trials` values (NaN
 * where a trial did not solve; caller frees).  Returns 0, or -1 when out of
 * memory.  (tol_cmd.c) */
int ls_tol_sample(ls_session *s, const ls_q *q, long trials, uint64_t seed, double **values);

#endif
