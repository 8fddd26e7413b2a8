/* direct_same.c — the first assembly's direct build gives the matrix that
 * compressing triplets gives.
 *
 * ls_mna_build stamps every part straight into slots of its column, sized
 * from the parts' pins and branches, sums each entry's duplicates in stamp
 * order and sorts each column; ls_mna_stamp_triplets (the assembly through
 * triplets, a counting sort by column and an insertion sort within each)
 * is the reference.  For every circuit, as written and as a variant (a third
 * of the parts opened, the ports buffered, ties on a quarter of the nodes),
 * the two compressed matrices and right-hand sides must be the same bit for
 * bit: column pointers, row indices, values and b.
 *
 * Circuits: every file under the directories given on the command line that
 * loads without errors (the example circuits, the docs' and the tests'),
 * and random networks of every linear kind built here, controlled sources
 * with via= among them (whose stamps reach beyond their own pins: some
 * overflow their columns and take the triplets instead, which the counts
 * show and the test requires to happen).
 *
 * usage: direct_same DIR...   (exit 0 when every circuit agrees, 1 otherwise) */
#define _GNU_SOURCE
#include <ftw.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "circuit.h"
#include "lang/parser.h"
#include "mna/mna.h"
#include "../unit/splitmix.h"

static int failures, circuits, direct_builds, fallbacks;

/* A copy of a's arrays and of b (n doubles), or 0 when out of memory. */
typedef struct kept {
    ls_csc a;
    double *b;
} kept;

static int keep(const ls_mna *m, kept *k)
{
    int n = m->a.n, nnz = ls_csc_nnz(&m->a);
    k->a.n = n;
    k->a.colptr = malloc(((size_t)n + 1) * sizeof *k->a.colptr);
    k->a.rowind = malloc(((size_t)nnz + 1) * sizeof *k->a.rowind);
    k->a.val = malloc(((size_t)nnz + 1) * sizeof *k->a.val);
    k->b = malloc(((size_t)n + 1) * sizeof *k->b);
    if (!k->a.colptr || !k->a.rowind || !k->a.val || !k->b)
        return 0;
    memcpy(k->a.colptr, m->a.colptr, ((size_t)n + 1) * sizeof *k->a.colptr);
    memcpy(k->a.rowind, m->a.rowind, (size_t)nnz * sizeof *k->a.rowind);
    memcpy(k->a.val, m->a.val, (size_t)nnz * sizeof *k->a.val);
    memcpy(k->b, m->b, (size_t)n * sizeof *k->b);
    return 1;
}

/* Build m (direct), then assemble it again through triplets and compare. */
static void compare(const char *what, ls_mna *m)
{
    kept k = {0};
    if (!keep(m, &k)) {
        fprintf(stderr, "direct_same: %s: out of memory\n", what);
        failures++;
        goto out;
    }
    if (m->direct)
        direct_builds++;
    else
        fallbacks++;
    if (ls_mna_stamp_triplets(m) != 0) {
        fprintf(stderr, "direct_same: %s: out of memory (triplets)\n", what);
        failures++;
        goto out;
    }
    int n = m->a.n, nnz = ls_csc_nnz(&m->a);
    const char *diff = NULL;
    if (k.a.n != n || k.a.colptr[n] != nnz || memcmp(k.a.colptr, m->a.colptr, ((size_t)n + 1) * sizeof(int)))
        diff = "column pointers";
    else if (memcmp(k.a.rowind, m->a.rowind, (size_t)nnz * sizeof(int)))
        diff = "row indices";
    else if (memcmp(k.a.val, m->a.val, (size_t)nnz * sizeof(double)))
        diff = "values";
    else if (memcmp(k.b, m->b, (size_t)n * sizeof(double)))
        diff = "right-hand side";
    if (diff) {
        fprintf(stderr, "direct_same: %s: the %s differ (%d unknowns, %d entries)\n", what, diff, n, nnz);
        failures++;
    }
out:
    ls_csc_free(&k.a);
    free(k.b);
}

/* The circuit in text (len bytes), as written and as a variant. */
static void check_text(const char *name, const char *text, size_t len)
{
    ls_circuit c;
    ls_circuit_init(&c);
    ls_load how = {.name = name, .text = text, .len = len};
    if (ls_circuit_load(&c, &how) == LS_LOADED && c.nl.nparts > 0) {
        const ls_netlist *nl = &c.nl;
        circuits++;
        ls_mna m;
        char what[4200];
        if (ls_mna_build(&m, nl) == 0) {
            snprintf(what, sizeof what, "%s", name);
            compare(what, &m);
        } else {
            fprintf(stderr, "direct_same: %s: build failed\n", name);
            failures++;
        }
        ls_mna_free(&m);
        unsigned char *opened = calloc((size_t)nl->nparts, 1);
        ls_tie *ties = calloc((size_t)nl->nnodes, sizeof *ties);
        if (opened && ties) {
            for (int i = 0; i < nl->nparts; i++)
                opened[i] = nl->parts[i].kind->is_port ? LS_BUFFERED : i % 3 == 1 ? LS_OPENED : LS_KEPT;
            for (int i = 1; i < nl->nnodes; i++)
                if (i % 4 == 1)
                    ties[i] = (ls_tie){.g = 1e-3 * i, .v = 0.5};
            if (ls_mna_build_variant(&m, nl, NULL, opened, ties) == 0) {
                snprintf(what, sizeof what, "%s (variant)", name);
                compare(what, &m);
            } else {
                fprintf(stderr, "direct_same: %s: variant build failed\n", name);
                failures++;
            }
            ls_mna_free(&m);
        }
        free(opened);
        free(ties);
    }
    ls_circuit_release(&c);
}

/* nftw's visit: every circuit file of up to 1 MB. */
static int visit(const char *path, const struct stat *st, int type, struct FTW *ftw)
{
    (void)ftw;
    size_t l = strlen(path);
    if (type != FTW_F || !S_ISREG(st->st_mode) || st->st_size > (1 << 20) || l < 6 || strcmp(path + l - 6, ".stack"))
        return 0;
    size_t len;
    char *text = ls_read_file(path, &len);
    if (text)
        check_text(path, text, len);
    free(text);
    return 0;
}

/* Every circuit file under dir (recursively). */
static void check_dir(const char *dir)
{
    if (nftw(dir, visit, 16, FTW_PHYS) != 0) {
        fprintf(stderr, "direct_same: cannot walk %s\n", dir);
        failures++;
    }
}

/* A node name among k nodes (gnd now and then). */
static void node_name(uint64_t *s, int k, char *buf)
{
    int i = (int)(ls_test_next64(s) % (uint64_t)(k + 1));
    if (i == k)
        strcpy(buf, "gnd");
    else
        sprintf(buf, "n%d", i);
}

/* Random networks: a resistor path through every node to ground (so each
 * loads), then parts of every linear kind between random nodes, shorted
 * parts (both ends on one node) among them; controlled sources read a
 * random earlier resistor's or source's current. */
static void check_random(int count)
{
    uint64_t s = 0x5eed1e55;
    char *text = malloc(1 << 16);
    if (!text) {
        failures++;
        return;
    }
    for (int c = 0; c < count; c++) {
        int k = 2 + (int)(ls_test_next64(&s) % 12), parts = 1 + (int)(ls_test_next64(&s) % 25);
        size_t len = (size_t)sprintf(text, "ground gnd\n");
        for (int i = 0; i < k; i++) {
            char to[16];
            if (i + 1 < k)
                sprintf(to, "n%d", i + 1);
            else
                strcpy(to, "gnd");
            len += (size_t)sprintf(text + len, "resistor rp%d n%d -> %s %d\n", i, i, to, 1 + i);
        }
        for (int p = 0; p < parts; p++) {
            char a[16], b[16], cp[16], cm[16];
            node_name(&s, k, a);
            node_name(&s, k, b);
            node_name(&s, k, cp);
            node_name(&s, k, cm);
            if (ls_test_next64(&s) % 8 == 0)
                strcpy(b, a);
            double v = (double)(1 + ls_test_next64(&s) % 1000) / 7;
            const char *via = ls_test_next64(&s) % 2 ? "rp0" : "rp1";
            switch (ls_test_next64(&s) % 8) {
            case 0: len += (size_t)sprintf(text + len, "resistor r%d %s -> %s %.17g\n", p, a, b, v); break;
            case 1: len += (size_t)sprintf(text + len, "current i%d %s -> %s %.17g\n", p, a, b, v); break;
            case 2: len += (size_t)sprintf(text + len, "voltage v%d gnd -> %s %.17g rint=%g\n", p, a, v, v / 3); break;
            case 3:
                len += (size_t)sprintf(text + len, "vccs g%d %s -> %s gm=%.17g cplus=%s cminus=%s\n", p, a, b, v, cp, cm);
                break;
            case 4:
                len += (size_t)sprintf(text + len, "vcvs e%d gnd -> %s gain=%.17g cplus=%s cminus=%s\n", p, a, v, cp, cm);
                break;
            case 5: len += (size_t)sprintf(text + len, "cccs f%d %s -> %s gain=%.17g via=%s\n", p, a, b, v, via); break;
            case 6: len += (size_t)sprintf(text + len, "ccvs h%d gnd -> %s rm=%.17g via=%s\n", p, a, v, via); break;
            default:
                len += (size_t)sprintf(text + len, "opamp u%d plus=%s minus=%s out=%s gain=%.17g rout=%g\n", p, cp, cm, a,
                                       1e5 * v, v);
                break;
            }
        }
        char name[64];
        snprintf(name, sizeof name, "random%d.stack", c);
        check_text(name, text, len);
    }
    free(text);
}

/* A 300 x 300 grid of resistors with a source at a corner: 720 000 slots,
 * whose values (5.8 MB) pass LS_BIG_BLOCK and come from a mapping of their
 * own (base/pages.h), as on the large grids the program is timed on. */
static void check_grid(void)
{
    enum { N = 300 };
    size_t cap = (size_t)2 * N * N * 48 + 256;
    char *text = malloc(cap);
    if (!text) {
        failures++;
        return;
    }
    size_t len = (size_t)sprintf(text, "ground gnd\nvoltage vs gnd -> n0_0 1\nresistor rg n%d_%d -> gnd 1\n", N - 1,
                                 N - 1);
    for (int i = 0; i < N; i++)
        for (int j = 0; j < N; j++) {
            if (j + 1 < N)
                len += (size_t)sprintf(text + len, "resistor ra%d_%d n%d_%d -> n%d_%d %d\n", i, j, i, j, i, j + 1,
                                       1 + (i + j) % 7);
            if (i + 1 < N)
                len += (size_t)sprintf(text + len, "resistor rb%d_%d n%d_%d -> n%d_%d %d\n", i, j, i, j, i + 1, j,
                                       1 + (i * j) % 5);
        }
    check_text("grid300.stack", text, len);
    free(text);
}

int main(int argc, char **argv)
{
    for (int i = 1; i < argc; i++)
        check_dir(argv[i]);
    check_grid();
    int files = circuits;
    check_random(400);
    printf("direct_same: %d files and %d random networks loaded; %d direct builds, %d through triplets; %d "
           "differ\n",
           files, circuits - files, direct_builds, fallbacks, failures);
    if (files < 40 || circuits - files < 200 || direct_builds == 0 || fallbacks == 0) {
        fprintf(stderr, "direct_same: too few circuits, or one of the two paths never taken\n");
        return 1;
    }
    return failures ? 1 : 0;
}
