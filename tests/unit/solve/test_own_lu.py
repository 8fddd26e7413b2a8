#!/usr/bin/python3
"""The dense backend's own LU (ls_solver_own_lu, src/solve/dense.c) against
numpy.linalg.solve (LAPACK's gesv through numpy: an outside reference), run
through tests/unit/solve/own_lu_driver.

Usage: test_own_lu.py PATH/TO/own_lu_driver      (exit 0 = all cases agree)

- Random dense systems (n = 1..40, plain and transposed): the own LU's x
  agrees with numpy's to the accuracy LU with partial pivoting promises, a
  relative error of at most n * cond(A) * 4 eps (Higham, "Accuracy and
  Stability of Numerical Algorithms", ch. 9, with a growth factor this small),
  and with the backend's LAPACK path to the same.
- Ill-conditioned systems: singular values spread over ten decades
  (cond 1e10), and rows scaled over eighteen decades (the backend
  equilibrates, so these solve to full accuracy): the same bound.
- Pivoting exercised: zero diagonals (a voltage source's branch row, a
  permutation matrix, a matrix whose first pivot is tiny against the
  column below it): without row exchanges each would divide by zero or lose
  every digit.
- Singular matrices: a repeated row, a zero column, a rank-one matrix, and
  a matrix singular only in its rounding (a row the sum of two others):
  refused as singular, as on the LAPACK path.
"""
import subprocess
import sys

import numpy as np

DRIVER = sys.argv[1] if len(sys.argv) > 1 else sys.exit("usage: test_own_lu.py own_lu_driver")
EPS = np.finfo(float).eps
failures = []


def solve(mode, a, b, trans=False):
    """x from the driver, or ('singular', column)."""
    n = a.shape[0]
    text = f"{n}\n" + "\n".join(" ".join(repr(float(v)) for v in row) for row in a) + "\n"
    text += " ".join(repr(float(v)) for v in b) + "\n"
    p = subprocess.run([DRIVER, mode, "T" if trans else "N"], input=text, capture_output=True, text=True)
    if p.returncode != 0:
        return ("error", p.stderr)
    lines = p.stdout.split()
    if lines[0] == "singular":
        return ("singular", int(lines[1]))
    return np.array([float(v) for v in lines])


def check(cond, msg):
    if not cond:
        failures.append(msg)
        print("FAIL:", msg)


def agrees(what, a, b, trans=False):
    """The own LU's x against numpy.linalg.solve and the LAPACK path's."""
    m = a.T if trans else a
    ref = np.linalg.solve(m, b)
    # the equilibrated matrix's condition bounds the error (dense.c scales as dgeequ)
    r = 1 / np.abs(m).max(axis=1)
    c = 1 / (np.abs(m) * r[:, None]).max(axis=0)
    cond = np.linalg.cond(r[:, None] * m * c[None, :], 1)
    bound = max(1, a.shape[0]) * cond * 4 * EPS
    own = solve("own", a, b, trans)
    lap = solve("lapack", a, b, trans)
    if isinstance(own, tuple) or isinstance(lap, tuple):
        check(False, f"{what}: solved (own {own if isinstance(own, tuple) else 'ok'}, lapack "
                     f"{lap if isinstance(lap, tuple) else 'ok'})")
        return
    err = np.linalg.norm(own - ref, np.inf) / np.linalg.norm(ref, np.inf)
    err_l = np.linalg.norm(own - lap, np.inf) / np.linalg.norm(lap, np.inf)
    check(err <= bound, f"{what}: own LU against numpy {err:.3g} > {bound:.3g}")
    check(err_l <= bound, f"{what}: own LU against the LAPACK path {err_l:.3g} > {bound:.3g}")


def singular(what, a):
    for trans in (False, True):
        own = solve("own", a, np.ones(a.shape[0]), trans)
        lap = solve("lapack", a, np.ones(a.shape[0]), trans)
        check(isinstance(own, tuple) and own[0] == "singular", f"{what}: own LU refuses it as singular ({own})")
        check(isinstance(lap, tuple) and lap[0] == "singular", f"{what}: LAPACK path refuses it as singular ({lap})")


def main():
    rng = np.random.default_rng(20261204)
    cases = 0
    for n in list(range(1, 13)) + [17, 24, 31, 40]:
        for trans in (False, True):
            a = rng.standard_normal((n, n))
            agrees(f"random n={n}{' transposed' if trans else ''}", a, rng.standard_normal(n), trans)
            cases += 1
    for n in (6, 20, 33):   # singular values over ten decades
        u, _ = np.linalg.qr(rng.standard_normal((n, n)))
        v, _ = np.linalg.qr(rng.standard_normal((n, n)))
        a = u @ np.diag(np.logspace(0, -10, n)) @ v.T
        for trans in (False, True):
            agrees(f"cond 1e10 n={n}", a, rng.standard_normal(n), trans)
            cases += 1
    for n in (8, 30):       # rows scaled over eighteen decades
        a = np.diag(np.logspace(-9, 9, n)) @ rng.standard_normal((n, n))
        agrees(f"rows scaled 1e-9..1e9 n={n}", a, rng.standard_normal(n))
        cases += 1
    # pivoting: a node with a voltage source's branch (zero diagonal), a
    # reversed permutation, a tiny first pivot over a large entry
    g = np.array([[1e-3, -1e-3, 1.0], [-1e-3, 3e-3, 0.0], [1.0, 0.0, 0.0]])
    agrees("source branch, zero diagonal", g, np.array([0.0, 0.0, 5.0]))
    agrees("source branch, transposed", g, np.array([1.0, 2.0, 5.0]), True)
    for n in (2, 5, 16):
        agrees(f"reversed permutation n={n}", np.fliplr(np.eye(n)) * np.arange(1, n + 1), rng.standard_normal(n))
    t = rng.standard_normal((12, 12))
    t[0, 0] = 1e-14
    t[7, 0] = 1e3
    agrees("tiny first pivot", t, rng.standard_normal(12))
    cases += 6
    s = rng.standard_normal((9, 9))
    s[5] = s[2]
    singular("repeated row", s)
    z = rng.standard_normal((7, 7))
    z[:, 3] = 0
    singular("zero column", z)
    singular("rank one", np.outer(rng.standard_normal(10), rng.standard_normal(10)))
    r = rng.standard_normal((11, 11))
    r[8] = r[1] + r[4]
    singular("a row the sum of two others", r)
    cases += 4
    print(f"{cases} cases, own LU against numpy.linalg.solve")
    if failures:
        print(f"{len(failures)} FAILED")
        sys.exit(1)
    print("all checks passed")


if __name__ == "__main__":
    main()
