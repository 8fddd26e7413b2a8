#!/usr/bin/python3
"""The selected inverse on the factor's pattern matches numpy's dense inverse.

Usage: selinv_ref.py SELINV_DUMP [--seed 19] [--count 12]

src/solve/selinv.c computes the entries of A^-1 on the closed pattern of its
sparse LU in one backward pass (Takahashi's recurrences).  For random sparse
matrices of four shapes

  - 2-D grids of random conductances, some nodes tied to ground (symmetric
    positive definite M-matrices, the reduced nodal form of resistor grids);
  - random sparse symmetric positive definite matrices with off-diagonal
    entries of both signs (diagonally dominant);
  - MNA-shaped unsymmetric systems: conductances, voltage-source branch rows
    with a zero diagonal (the LU must pivot off the diagonal) and
    transconductances off the symmetric pattern;
  - random sparse unsymmetric matrices with a dominant diagonal,

every entry tests/scale/selinv_dump prints (row, column, value, bound) is
compared with numpy.linalg.inv's: |value - ref| within 100 eps kappa_1(A)
max|A^-1| (the forward error of a backward-stable inversion, Higham, Accuracy
and Stability of Numerical Algorithms, 2nd ed., ch. 14), the bound not below
|value|, every place of A's own symmetric pattern present for the SPD shapes
(the entries a part's own unknowns need), and each place printed once.
"""

import argparse
import subprocess
import sys

import numpy as np

EPS = np.finfo(float).eps


def grid_spd(rng, side):
    n = side * side
    a = np.zeros((n, n))
    for r in range(side):
        for c in range(side):
            i = r * side + c
            for j in ([i + 1] if c + 1 < side else []) + ([i + side] if r + 1 < side else []):
                g = 10 ** rng.uniform(-1, 1)
                a[i, i] += g
                a[j, j] += g
                a[i, j] -= g
                a[j, i] -= g
    for i in rng.choice(n, size=max(1, n // 20), replace=False):
        a[i, i] += 10 ** rng.uniform(-1, 1)   # a path to ground
    return a


def random_offdiag(rng, n, count, symmetric):
    """count random off-diagonal entries in (-1, 1), mirrored when symmetric."""
    a = np.zeros((n, n))
    for _ in range(count):
        i, j = rng.integers(0, n, size=2)
        if i != j:
            v = rng.uniform(-1, 1)
            a[i, j] += v
            if symmetric:
                a[j, i] += v
    return a


def random_spd(rng, n):
    a = random_offdiag(rng, n, 2 * n, True)
    a += np.diag(np.abs(a).sum(axis=1) + rng.uniform(0.1, 1, size=n))
    return a


def mna_unsym(rng, nodes, sources):
    n = nodes + sources
    a = np.zeros((n, n))
    for i in range(nodes):
        j = -1 if i == 0 else int(rng.integers(0, i))
        for (p, q) in [(i, j), tuple(rng.integers(0, nodes, size=2))]:
            g = 10 ** rng.uniform(-3, 1)
            if p == q:
                continue
            a[p, p] += g
            if q >= 0:
                a[q, q] += g
                a[p, q] -= g
                a[q, p] -= g
    for k in range(sources):   # V(node) fixed: branch row with a zero diagonal
        node = int(rng.integers(0, nodes))
        a[node, nodes + k] += 1
        a[nodes + k, node] += 1
    for _ in range(nodes // 4):   # transconductances
        p, q = rng.integers(0, nodes, size=2)
        a[p, q] += 0.01 * rng.uniform()
    return a


def random_unsym(rng, n):
    a = random_offdiag(rng, n, 3 * n, False)
    a += np.diag(np.abs(a).sum(axis=1) * rng.uniform(0.6, 1.5, size=n) + 0.1)
    return a


def dump(binary, a):
    ii, jj = np.nonzero(a)
    lines = ["%d %d" % (a.shape[0], len(ii))]
    lines += ["%d %d %.17g" % (i, j, a[i, j]) for i, j in zip(ii, jj)]
    p = subprocess.run([binary], input="\n".join(lines) + "\n", capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        return None
    out = p.stdout.split("\n")
    size = int(out[1].split()[1])
    rows = [ln.split() for ln in out[2:2 + size]]
    return [(int(r[0]), int(r[1]), float(r[2]), float(r[3])) for r in rows]


def check(name, binary, a, spd, failures):
    entries = dump(binary, a)
    if entries is None:
        failures.append("%s: selinv_dump failed" % name)
        return 0
    inv = np.linalg.inv(a)
    big = np.abs(inv).max()
    tol = 100 * EPS * np.linalg.cond(a, 1) * big
    seen = set()
    for i, j, v, m in entries:
        if (i, j) in seen:
            failures.append("%s: (%d, %d) printed twice" % (name, i, j))
        seen.add((i, j))
        if abs(v - inv[i, j]) > tol:
            failures.append("%s: (%d, %d) = %.17g, numpy %.17g (tolerance %.3g)" % (name, i, j, v, inv[i, j], tol))
        if m < abs(v) * (1 - 1e-12):
            failures.append("%s: (%d, %d) bound %.17g below |value| %.17g" % (name, i, j, m, abs(v)))
    if spd:
        for i, j in zip(*np.nonzero(a)):
            if (i, j) not in seen:
                failures.append("%s: A's entry (%d, %d) missing from the pattern" % (name, i, j))
    if len(entries) <= np.count_nonzero(a) and spd:
        failures.append("%s: no fill in the pattern (%d entries): too small to test" % (name, len(entries)))
    return len(entries)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("dump")
    ap.add_argument("--seed", type=int, default=19)
    ap.add_argument("--count", type=int, default=12)
    args = ap.parse_args()
    rng = np.random.default_rng(args.seed)
    failures, total = [], 0
    for t in range(args.count):
        total += check("grid %d" % t, args.dump, grid_spd(rng, 6 + t), True, failures)
        total += check("spd %d" % t, args.dump, random_spd(rng, 20 + 10 * t), True, failures)
        total += check("mna %d" % t, args.dump, mna_unsym(rng, 15 + 8 * t, 1 + t % 4), False, failures)
        total += check("unsym %d" % t, args.dump, random_unsym(rng, 20 + 10 * t), False, failures)
    for f in failures[:30]:
        print("FAIL", f)
    print("%d entries of A^-1 compared on %d matrices, %d failures" % (total, 4 * args.count, len(failures)))
    return 1 if failures or total < 10000 else 0


if __name__ == "__main__":
    sys.exit(main())
