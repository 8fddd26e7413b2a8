#!/usr/bin/python3
"""Two-point resistance of square grids of equal resistors, loadstack against
published results.

Usage: two_point.py LOADSTACK_BINARY [--sizes 21,41,81,161,321]

Checks, each with its source:
 1. Cserti, "Application of the lattice Green's function for calculating the
    resistance of an infinite network of resistors", Am. J. Phys. 68, 896
    (2000): on the infinite square lattice of resistors R, adjacent nodes are
    R/2 apart and diagonal neighbours 2R/pi.  A finite N x N grid (free
    boundary) measured at its centre must approach these values, with the
    error shrinking at every step of the size sequence, and the largest grid
    within 1e-3 R.  Measured with a 1 A current source (the nodal matrix is
    symmetric positive definite: the plain Cholesky path).
 2. Wu, "Theory of resistor networks: the two-point resistance", J. Phys. A 37,
    6653 (2004): the resistance between nodes a and b of any network is
    sum_i (psi_i(a) - psi_i(b))^2 / lambda_i over the nonzero eigenvalues of its
    Laplacian.  For the M x N grid with free boundary the eigenvectors are
    products of cos((x + 1/2) m pi / M) and cos((y + 1/2) n pi / N), normalised
    sqrt(1/M) (m = 0) or sqrt(2/M), with lambda = (2 - 2 cos(m pi/M)) +
    (2 - 2 cos(n pi/N)) in units of 1/R; this is Wu's finite-lattice formula
    written as the eigen-sum (recalled from the paper; the script first checks
    it against a numpy pseudo-inverse of the Laplacian on a small grid, so a
    mistake in the recollection fails here, not in loadstack).  A 30 x 40 grid
    must match it to 1e-9 (relative) with the dense path (current feed: a
    symmetric positive definite matrix, so the dense Cholesky factorization), the
    reduced nodal form (a voltage source without rs: R = 1 V / I), and a
    Norton-converted source (rs = 0.25: R = 1 V / I - 0.25).
Exit 0 when every check holds, 1 otherwise.
"""

import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np


def name(x, y, gx, gy):
    return "g" if (x, y) == (gx, gy) else "n%d_%d" % (x, y)


def write_grid(path, m, n, a, b, feed, rs=None):
    """M x N one-ohm grid; ground at b; feed 'current' pushes 1 A from b into a,
    'voltage' puts 1 V from b to a."""
    with open(path, "w") as f:
        f.write('title "Electrode mesh %d x %d"\nground g\n' % (m, n))
        na = name(a[0], a[1], b[0], b[1])
        if feed == "current":
            f.write("current itest g -> %s 1 A\n" % na)
        else:
            f.write("voltage vtest g -> %s 1 V%s\n" % (na, " rint=%r" % rs if rs else ""))
        for x in range(m):
            for y in range(n):
                p = name(x, y, b[0], b[1])
                if x + 1 < m:
                    f.write("resistor h%d_%d %s -> %s 1\n" % (x, y, p, name(x + 1, y, b[0], b[1])))
                if y + 1 < n:
                    f.write("resistor v%d_%d %s -> %s 1\n" % (x, y, p, name(x, y + 1, b[0], b[1])))
    return na


def run(exe, path, solver):
    out = subprocess.run([exe, "solve", path, "--format", "json", "--solver", solver],
                         capture_output=True, text=True, timeout=600)
    if out.returncode != 0:
        raise RuntimeError("loadstack failed (%d): %s" % (out.returncode, out.stderr[-2000:]))
    return json.loads(out.stdout)


def measure(exe, tmp, m, n, a, b, feed, solver, rs=None):
    path = os.path.join(tmp, "grid_%d_%d_%s_%s.stack" % (m, n, feed, solver))
    na = write_grid(path, m, n, a, b, feed, rs)
    js = run(exe, path, solver)
    if feed == "current":
        return js["nodes"][na], js["solver"]
    i = abs(js["parts"]["vtest"]["current"])
    return 1.0 / i - (rs or 0.0), js["solver"]


def wu_resistance(m, n, a, b):
    """Wu (2004) eigen-sum for the M x N free-boundary grid of 1-ohm resistors."""
    tm = np.arange(m) * math.pi / m
    tn = np.arange(n) * math.pi / n
    cm = np.where(np.arange(m) == 0, math.sqrt(1.0 / m), math.sqrt(2.0 / m))
    cn = np.where(np.arange(n) == 0, math.sqrt(1.0 / n), math.sqrt(2.0 / n))
    ua = cm * np.cos((a[0] + 0.5) * tm)
    ub = cm * np.cos((b[0] + 0.5) * tm)
    va = cn * np.cos((a[1] + 0.5) * tn)
    vb = cn * np.cos((b[1] + 0.5) * tn)
    lam = (2 - 2 * np.cos(tm))[:, None] + (2 - 2 * np.cos(tn))[None, :]
    diff = np.outer(ua, va) - np.outer(ub, vb)
    lam[0, 0] = 1.0
    terms = diff ** 2 / lam
    terms[0, 0] = 0.0
    return float(terms.sum())


def laplacian_resistance(m, n, a, b):
    """Independent numpy check of the formula: Moore-Penrose pseudo-inverse of the
    grid Laplacian, R_ab = L+_aa + L+_bb - 2 L+_ab."""
    idx = lambda x, y: x * n + y
    lap = np.zeros((m * n, m * n))
    for x in range(m):
        for y in range(n):
            for (dx, dy) in ((1, 0), (0, 1)):
                if x + dx < m and y + dy < n:
                    i, j = idx(x, y), idx(x + dx, y + dy)
                    lap[i, i] += 1; lap[j, j] += 1; lap[i, j] -= 1; lap[j, i] -= 1
    p = np.linalg.pinv(lap)
    i, j = idx(*a), idx(*b)
    return p[i, i] + p[j, j] - 2 * p[i, j]


def main():
    if len(sys.argv) < 2:
        print(__doc__)
        return 2
    exe = sys.argv[1]
    # 321: over 100 000 nodes, so the matrix's slots, the factor and the
    # refinement's buffers are large blocks with huge pages (base/pages.h)
    sizes = [21, 41, 81, 161, 321]
    if "--sizes" in sys.argv:
        sizes = [int(s) for s in sys.argv[sys.argv.index("--sizes") + 1].split(",")]
    fails = 0

    def check(ok, text):
        nonlocal fails
        print(("ok    " if ok else "FAIL  ") + text)
        fails += 0 if ok else 1

    with tempfile.TemporaryDirectory() as tmp:
        # 1. Cserti (2000): infinite-lattice limits, error shrinking with size
        for label, off, exact in (("adjacent", (1, 0), 0.5), ("diagonal", (1, 1), 2 / math.pi)):
            errs = []
            for s in sizes:
                c = s // 2
                r, _ = measure(exe, tmp, s, s, (c, c), (c + off[0], c + off[1]), "current", "sparse")
                errs.append(abs(r - exact))
                print("      %s N=%d: R = %.12f, infinite lattice %.12f, error %.3e" % (label, s, r, exact, errs[-1]))
            check(all(errs[i + 1] < errs[i] for i in range(len(errs) - 1)),
                  "Cserti 2000, %s: error shrinks as the grid grows" % label)
            check(errs[-1] < 1e-3, "Cserti 2000, %s: N=%d within 1e-3 ohm of the infinite lattice" % (label, sizes[-1]))

        # 2. Wu (2004): the formula itself against numpy on a small grid
        for (a, b) in (((1, 2), (4, 5)), ((0, 0), (5, 6)), ((2, 3), (3, 3))):
            w, l = wu_resistance(6, 7, a, b), laplacian_resistance(6, 7, a, b)
            check(abs(w - l) <= 1e-12 * l, "Wu 2004 eigen-sum equals the numpy Laplacian pseudo-inverse on 6x7 "
                  "%s-%s (%.15f vs %.15f)" % (a, b, w, l))
        # ... and loadstack on a moderate grid, three ways
        m, n = 30, 40
        for (a, b) in (((3, 4), (25, 31)), ((14, 19), (15, 20)), ((0, 0), (29, 39))):
            ref = wu_resistance(m, n, a, b)
            for feed, solver, rs, path in (("current", "dense", None, "dense-cholesky"),
                                           ("voltage", "sparse", None, "sparse-cholesky"),
                                           ("voltage", "sparse", 0.25, "sparse-cholesky")):
                r, st = measure(exe, tmp, m, n, a, b, feed, solver, rs)
                rel = abs(r - ref) / ref
                check(rel <= 1e-9 and st["method"] == path,
                      "Wu 2004, %dx%d %s-%s by %s/%s (%s feed%s): %.12f vs %.12f (rel %.1e)"
                      % (m, n, a, b, st["method"], st.get("library", "?"), feed,
                         ", rs=%g" % rs if rs else "", r, ref, rel))
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
