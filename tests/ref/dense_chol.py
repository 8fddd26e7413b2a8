#!/usr/bin/python3
"""Reference test: the dense backend's Cholesky path and its LU fallback.

Usage: dense_chol.py LOADSTACK_BINARY [--count 40] [--seed 7]

Random circuits are written as .stack files, solved by
`LOADSTACK solve FILE --format json` (automatic solver: up to 100 unknowns is
the dense backend; one larger circuit per run with `--solver dense`) and
compared with references computed here from the same numbers:

* Circuits of resistors and current sources (a random spanning tree of
  resistors to ground plus extra resistors, so the nodal matrix G is symmetric,
  diagonally dominant and positive definite): `solver.method` must be
  `dense-cholesky`; every node voltage must agree with numpy.linalg.solve(G, b)
  and with scipy.linalg.cho_solve(scipy.linalg.cho_factor(G), b) to 1e-9
  relative plus 1e-12 times the largest voltage; and `solver.rcond` must lie
  between 1 / numpy.linalg.cond(As, 1) and ten times it, As = S G S with
  S = diag(1 / sqrt(g_jj)) the scaling the backend factors (LAPACK's dpocon
  estimates the norm of the inverse from below, so its reciprocal condition
  is at least the true one; Higham's estimator is in practice within a
  factor of three).
* The same circuits with one change that takes them off the Cholesky path,
  each solved against numpy.linalg.solve of its own matrix: a vccs from a
  node to ground controlled by another node (G + gm e_i e_j^T: not
  symmetric), and a vccs from a node to ground controlled by that node with
  a negative gm past the node's conductance to ground (symmetric, no longer
  diagonally dominant; positive definite or not): `solver.method` must be
  `dense-lu`.  Circuits whose G has a 2-norm condition above 1e10 are drawn
  again.

Source of every expected number: numpy 1.24 / scipy 1.10 of Debian's
/usr/bin/python3 (LAPACK underneath, an independent build of the matrices).
Exit 0 when every check holds, 1 otherwise.
"""

import argparse
import json
import os
import random
import subprocess
import sys
import tempfile

import numpy as np
import scipy.linalg

RTOL = 1e-9


def spd_circuit(rng, n):
    """(lines, G, b): n nodes n1..nn, resistors and current sources only."""
    lines = ['title "Random pad network, %d pads"' % n, "ground gnd"]
    g = np.zeros((n, n))
    b = np.zeros(n)

    def resistor(name, i, j, ohms):
        a = "gnd" if i < 0 else "n%d" % (i + 1)
        c = "gnd" if j < 0 else "n%d" % (j + 1)
        lines.append("resistor %s %s -> %s %d" % (name, a, c, ohms))
        y = 1.0 / ohms
        for (p, q) in ((i, i), (j, j)):
            if p >= 0:
                g[p, q] += y
        if i >= 0 and j >= 0:
            g[i, j] -= y
            g[j, i] -= y

    for k in range(n):  # a spanning tree to ground keeps G positive definite
        resistor("rt%d" % k, k, rng.randrange(-1, k), rng.randint(10, 100000))
    for k in range(2 * n):
        i, j = rng.randrange(n), rng.randrange(n)
        if i != j:
            resistor("rx%d" % k, i, j, rng.randint(10, 100000))
    for k in range(max(1, n // 8)):
        i = rng.randrange(n)
        ua = rng.randint(1, 999)
        lines.append("current i%d gnd -> n%d %d uA" % (k, i + 1, ua))
        b[i] += ua * 1e-6
    return lines, g, b


def solve(exe, lines, tmp, extra=()):
    path = os.path.join(tmp, "c.stack")
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")
    p = subprocess.run([exe, "solve", path, "--format", "json"] + list(extra),
                       capture_output=True, text=True, timeout=120)
    if p.returncode != 0:
        return None, p.stderr.strip()[:300]
    return json.loads(p.stdout), ""


def voltages(rep, n):
    return np.array([rep["nodes"]["n%d" % (i + 1)] for i in range(n)])


def agree(got, ref):
    return np.all(np.abs(got - ref) <= RTOL * np.abs(ref) + 1e-12 * np.max(np.abs(ref)))


def check_spd(exe, rng, n, tmp, extra=()):
    """Problems (strings) of one SPD circuit on the Cholesky path."""
    lines, g, b = spd_circuit(rng, n)
    rep, err = solve(exe, lines, tmp, extra)
    if rep is None:
        return ["SPD n=%d: loadstack failed: %s" % (n, err)]
    bad = []
    if rep["solver"]["method"] != "dense-cholesky":
        bad.append("SPD n=%d: method %s, not dense-cholesky" % (n, rep["solver"]["method"]))
    x = voltages(rep, n)
    x_np = np.linalg.solve(g, b)
    x_cho = scipy.linalg.cho_solve(scipy.linalg.cho_factor(g), b)
    if not agree(x, x_np):
        bad.append("SPD n=%d: node voltages differ from numpy.linalg.solve" % n)
    if not agree(x, x_cho):
        bad.append("SPD n=%d: node voltages differ from scipy.linalg.cho_solve" % n)
    s = 1 / np.sqrt(np.diag(g))
    true_rcond = 1 / np.linalg.cond(s[:, None] * g * s[None, :], 1)
    rc = rep["solver"]["rcond"]
    if not (true_rcond * (1 - 1e-9) <= rc <= 10 * true_rcond):
        bad.append("SPD n=%d: rcond %.6g, 1/cond_1(As) %.6g" % (n, rc, true_rcond))
    return bad


def check_off_path(exe, rng, n, tmp, symmetric):
    """Problems of one circuit that the Cholesky path must leave to LU."""
    while True:
        lines, g, b = spd_circuit(rng, n)
        i, j = rng.sample(range(n), 2)
        if symmetric:
            # a negative conductance from n_i to ground, past n_i's own
            # conductance to ground by a quarter of its other conductances:
            # G stays symmetric and loses column i's dominance
            off = np.sum(np.abs(g[:, i])) - g[i, i]
            y = -((g[i, i] - off) + off / 4)
            lines.append("vccs gneg n%d -> gnd gm=%.17g cplus=n%d cminus=gnd" % (i + 1, y, i + 1))
            g[i, i] += y
        else:
            gm = g[i, i] / 5
            lines.append("vccs gx n%d -> gnd gm=%.17g cplus=n%d cminus=gnd" % (i + 1, gm, j + 1))
            g[i, j] += gm
        if np.linalg.cond(g) < 1e10:   # well posed: else draw another
            break
    rep, err = solve(exe, lines, tmp)
    what = "symmetric, not dominant" if symmetric else "not symmetric"
    if rep is None:
        return ["%s n=%d: loadstack failed: %s" % (what, n, err)]
    bad = []
    if rep["solver"]["method"] != "dense-lu":
        bad.append("%s n=%d: method %s, not dense-lu" % (what, n, rep["solver"]["method"]))
    if not agree(voltages(rep, n), np.linalg.solve(g, b)):
        bad.append("%s n=%d: node voltages differ from numpy.linalg.solve" % (what, n))
    return bad


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("exe")
    ap.add_argument("--count", type=int, default=40)
    ap.add_argument("--seed", type=int, default=7)
    a = ap.parse_args()
    rng = random.Random(a.seed)
    bad = []
    with tempfile.TemporaryDirectory() as tmp:
        for k in range(a.count):
            n = rng.randint(2, 100)
            bad += check_spd(a.exe, rng, n, tmp)
            bad += check_off_path(a.exe, rng, n, tmp, symmetric=k % 2 == 0)
        bad += check_spd(a.exe, rng, 400, tmp, ["--solver", "dense"])
    for m in bad:
        print("FAIL " + m)
    print("%d SPD circuits and %d off the Cholesky path checked, %d problems" % (a.count + 1, a.count, len(bad)))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
