/* restamp_check.c — the in-place restamp of src/mna.c against a fresh assembly.
 *
 * Usage: restamp_check [--rounds R] [--seed S] FILE.stack...
 * For each circuit: assemble it, then R times change the part values (each main
 * value scaled by a random factor in [1/2, 2]; in about a third of the rounds
 * one controlled source's gain is also set to zero, or a zeroed one given back
 * its value, which removes or adds matrix entries) and restamp the same
 * ls_mna.  After every restamp the matrix and right-hand side must equal,
 * bit for bit, what ls_mna_build assembles from scratch on the same netlist
 * through triplets and compression (the general path).  The rounds whose
 * pattern did not change must have been done in place (ls_mna.in_place
 * counts them), and the others must have fallen back to a full assembly.
 *
 * With --patch, each round changes one to three random parts instead of all
 * (sometimes a controlled source to or from zero) and announces them with
 * ls_mna_expect_changes (src/mna/patch.c), so the restamp recomputes only
 * the entries those parts reach: the system must again equal a fresh
 * assembly bit for bit, and every round that kept the pattern must have been
 * patched (ls_mna.patched counts them) in a circuit of at least 8 parts,
 * except the first after a full restamp (which records what each part
 * reaches), a round that gives a zeroed source its value back (its entries
 * were not recorded: a full restamp is right) and the rounds after patching
 * gave up (several full restamps in a row).
 * Prints one line per circuit; exit 0 when all agree, 1 on a mismatch, 2 on
 * bad usage or a circuit that does not load. */
#include "elab/elab.h"
#include "mna/mna.h"
#include "lang/parser.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* xorshift64*: a fixed, portable sequence for a given seed. */
static uint64_t rnd_next(uint64_t *s)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    return *s * 2685821657736338717ULL;
}

static double rnd_unit(uint64_t *s)
{
    return (double)(rnd_next(s) >> 11) * (1.0 / 9007199254740992.0);
}

static int same_csc(const ls_csc *a, const ls_csc *b)
{
    if (a->n != b->n || memcmp(a->colptr, b->colptr, ((size_t)a->n + 1) * sizeof *a->colptr) != 0)
        return 0;
    size_t nnz = (size_t)ls_csc_nnz(a);
    return memcmp(a->rowind, b->rowind, nnz * sizeof *a->rowind) == 0 &&
           memcmp(a->val, b->val, nnz * sizeof *a->val) == 0;
}

static int same_pattern(const ls_csc *a, const ls_csc *b)
{
    return a->n == b->n && memcmp(a->colptr, b->colptr, ((size_t)a->n + 1) * sizeof *a->colptr) == 0 &&
           memcmp(a->rowind, b->rowind, (size_t)ls_csc_nnz(a) * sizeof *a->rowind) == 0;
}

static int is_controlled(const ls_part *p)
{
    const char *k = p->kind->name;
    return !strcmp(k, "vcvs") || !strcmp(k, "vccs") || !strcmp(k, "cccs") || !strcmp(k, "ccvs");
}

/* Change one to three random parts (their indices into changed[], count
 * returned): a value scaled by [1/2, 2], or a controlled source's value to
 * zero and back (saved[] keeps it; *gave_back set when one got it back). */
static int change_some(ls_netlist *nl, double *saved, int *changed, uint64_t *seed, int *gave_back)
{
    int k = 1 + (int)(rnd_unit(seed) * 3), c = 0;
    for (int j = 0; j < k; j++) {
        int i = (int)(rnd_unit(seed) * nl->nparts);
        ls_part *p = &nl->parts[i];
        if (is_controlled(p) && rnd_unit(seed) < 0.3) {
            if (p->value != 0) {
                saved[i] = p->value;
                p->value = 0;
            } else if (saved[i] != 0) {
                p->value = saved[i];
                *gave_back = 1;
            }
        } else if (p->value != 0) {
            p->value *= 0.5 + 1.5 * rnd_unit(seed);
        }
        changed[c++] = i;
    }
    return c;
}

/* Check one circuit; returns 0 agreed, 1 mismatch, 2 did not load. */
static int check(const char *path, int rounds, uint64_t *seed, int patch)
{
    ls_arena arena;
    ls_diags diags;
    ls_program prog;
    ls_netlist nl;
    memset(&prog, 0, sizeof prog);
    memset(&nl, 0, sizeof nl);
    ls_arena_init(&arena);
    ls_diags_init(&diags, &arena);
    int rc = 2;
    ls_mna m, fresh;
    memset(&m, 0, sizeof m);
    memset(&fresh, 0, sizeof fresh);
    double *saved = NULL;
    if (ls_parse_file(&diags, path, &prog) || ls_elaborate(&prog, &diags, NULL, 0, &nl) ||
        ls_mna_build(&m, &nl) != 0) {
        fprintf(stderr, "restamp_check: %s does not load\n", path);
        goto out;
    }
    saved = calloc((size_t)(nl.nparts ? nl.nparts : 1), sizeof *saved);
    if (!saved)
        goto out;
    int fallback = 0, expect_in_place = 0, changed[3];
    rc = 0;
    for (int r = 0; r < rounds && rc == 0; r++) {
        ls_csc before = m.a; /* only its pattern is read, before the restamp frees it */
        int *bcol = malloc(((size_t)before.n + 1) * sizeof *bcol);
        int *brow = malloc(((size_t)ls_csc_nnz(&before) + 1) * sizeof *brow);
        if (!bcol || !brow) {
            free(bcol);
            free(brow);
            rc = 2;
            break;
        }
        memcpy(bcol, before.colptr, ((size_t)before.n + 1) * sizeof *bcol);
        memcpy(brow, before.rowind, (size_t)ls_csc_nnz(&before) * sizeof *brow);
        before.colptr = bcol;
        before.rowind = brow;
        int gave_back = 0, was_indexed = m.index != NULL;
        if (patch)
            ls_mna_expect_changes(&m, changed, change_some(&nl, saved, changed, seed, &gave_back));
        for (int i = 0; i < nl.nparts && !patch; i++) {
            ls_part *p = &nl.parts[i];
            if (p->value != 0)
                p->value *= 0.5 + 1.5 * rnd_unit(seed);
        }
        if (!patch && rnd_unit(seed) < 0.35) { /* remove or give back one controlled source's entries */
            int pick = (int)(rnd_unit(seed) * nl.nparts);
            for (int k = 0; k < nl.nparts; k++) {
                ls_part *p = &nl.parts[(pick + k) % nl.nparts];
                if (!is_controlled(p))
                    continue;
                int i = (int)(p - nl.parts);
                if (p->value != 0) {
                    saved[i] = p->value;
                    p->value = 0;
                } else if (saved[i] != 0) {
                    p->value = saved[i];
                }
                break;
            }
        }
        unsigned in_place0 = m.in_place, patched0 = m.patched;
        int gave_up = m.patch_failures >= 3;
        if (ls_mna_restamp(&m) != 0 || ls_mna_build(&fresh, &nl) != 0) {
            free(bcol);
            free(brow);
            rc = 2;
            break;
        }
        int pattern_kept = same_pattern(&before, &fresh.a);
        free(bcol);
        free(brow);
        int in_place = m.in_place != in_place0 || m.patched != patched0;
        int want_patch = patch && pattern_kept && nl.nparts >= 8 && was_indexed && !gave_back && !gave_up;
        expect_in_place += pattern_kept;
        fallback += !in_place;
        if (!same_csc(&m.a, &fresh.a) || memcmp(m.b, fresh.b, (size_t)m.n * sizeof *m.b) != 0 ||
            m.amax != fresh.amax) {
            printf("%s: round %d: the restamped system differs from a fresh assembly\n", path, r);
            rc = 1;
        } else if (want_patch && m.patched == patched0) {
            printf("%s: round %d: the pattern was kept but only changed parts were not restamped\n", path, r);
            rc = 1;
        } else if (in_place != pattern_kept) {
            printf("%s: round %d: pattern %s but the restamp %s\n", path, r, pattern_kept ? "kept" : "changed",
                   in_place ? "was done in place" : "fell back to a full assembly");
            rc = 1;
        }
        ls_mna_free(&fresh);
    }
    if (rc == 0)
        printf("%s: %d unknowns, %d entries, %d rounds agree (%d in place, %d reassembled, %u patched)\n", path,
               m.n, ls_csc_nnz(&m.a), rounds, expect_in_place, fallback, m.patched);
out:
    free(saved);
    ls_mna_free(&m);
    ls_mna_free(&fresh);
    ls_netlist_free(&nl);
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    return rc;
}

int main(int argc, char **argv)
{
    int rounds = 12;
    uint64_t seed = 1;
    int i = 1, worst = 0, files = 0, patch = 0;
    for (; i < argc; i++) {
        if (!strcmp(argv[i], "--rounds") && i + 1 < argc)
            rounds = atoi(argv[++i]);
        else if (!strcmp(argv[i], "--patch"))
            patch = 1;
        else if (!strcmp(argv[i], "--seed") && i + 1 < argc)
            seed = strtoull(argv[++i], NULL, 10) * 0x9E3779B97F4A7C15ULL + 1;
        else
            break;
    }
    if (i >= argc || rounds < 1) {
        fprintf(stderr, "usage: restamp_check [--rounds R] [--seed S] [--patch] FILE.stack...\n");
        return 2;
    }
    for (; i < argc; i++, files++) {
        int rc = check(argv[i], rounds, &seed, patch);
        worst = rc > worst ? rc : worst;
    }
    return worst;
}
