#!/usr/bin/python3
"""Error bounds of large resistive networks by one solve, against numpy's explicit inverse.

Usage: bound_signs.py RESID_DUMP_BINARY

Above 400 unknowns a node's error bound |A^-1| w (accuracy.c; w = |r| + 4 eps g,
the residual and the parts' rounding) cannot be had one transposed solve per node.
For a network of positive resistances, current sources and voltage sources with
one end on ground, every column of A^-1 has one sign in all node rows (the nodal
matrix with the sources' rows eliminated is an M-matrix, whose inverse is
nonnegative: Berman & Plemmons, Nonnegative Matrices in the Mathematical Sciences,
1994, ch. 6; a grounded source's column takes the sign of its orientation), so
|A^-1| w in the node rows is A^-1 (s .* w), one solve, exact per node.

For random such networks of 420 to 600 unknowns (a mesh with shortcuts, sources
from and to ground, some with rint, current sources), resid_dump --bounds gives
the program's matrix, its residual and node bounds.  Here, with numpy (Debian's
python3-numpy):
  * inv(A) is formed explicitly and every node row of every column is checked to
    have the sign the part table predicts (the theory itself);
  * every node bound must equal 2 (|inv(A)| w)_i + eps |v_i| (the program's
    formula, SOLVE_SAFETY = 2) to 1e-6 relative, and the bounds are "per-node";
  * a network with a source between two non-ground nodes (whose column has both
    signs) must fall back to "estimate", and its estimate must be at least the
    largest true node value 2 max_i (|inv(A)| w)_i / 3 (Hager's estimator is a
    lower bound of the norm, within a small factor in practice: common practice).
Exit 0 when every check passes, 1 otherwise.
"""

import os
import random
import subprocess
import sys
import tempfile

import numpy as np

EPS = 2.0 ** -52
DATA_ROUNDING = 4 * EPS     # accuracy.c: the rounding of a part's own value and stamp


def network(rng, side, floating):
    """A side x side mesh with random values, shortcuts, grounded sources both ways,
    current sources; with `floating`, one source between two mesh nodes."""
    lines = ["ground gnd"]
    node = lambda i, j: "n%d_%d" % (i, j)
    k = 0
    for i in range(side):
        for j in range(side):
            for di, dj in ((0, 1), (1, 0)):
                if i + di < side and j + dj < side:
                    k += 1
                    lines.append("resistor r%d %s -> %s %.4g" % (k, node(i, j), node(i + di, j + dj),
                                                                 10 ** rng.uniform(0, 4)))
    for _ in range(side):
        k += 1
        a, b = (rng.randrange(side), rng.randrange(side)), (rng.randrange(side), rng.randrange(side))
        if a != b:
            lines.append("resistor r%d %s -> %s %.4g" % (k, node(*a), node(*b), 10 ** rng.uniform(2, 6)))
    lines.append("resistor rg %s -> gnd 1k" % node(side - 1, side - 1))
    for s in range(4):
        n = node(rng.randrange(side), rng.randrange(side))
        rint = " rint=%.3g" % (10 ** rng.uniform(-1, 2)) if s % 2 else ""
        if s < 2:
            lines.append("voltage vs%d gnd -> %s %.3g V%s" % (s, n, rng.uniform(1, 10), rint))
        else:
            lines.append("voltage vs%d %s -> gnd %.3g V%s" % (s, n, rng.uniform(1, 10), rint))
    for s in range(3):
        a, b = node(rng.randrange(side), rng.randrange(side)), node(rng.randrange(side), rng.randrange(side))
        lines.append("current is%d %s -> %s %.3g mA" % (s, a, b, rng.uniform(0.1, 5)))
    if floating:
        lines.append("voltage vf %s -> %s 0.5 V rint=10" % (node(0, 1), node(1, 1)))
    return "\n".join(lines) + "\n"


def dump(exe, path):
    out = subprocess.run([exe, "--bounds", path], capture_output=True, text=True, timeout=120)
    if out.returncode != 0:
        raise RuntimeError(out.stderr)
    entries, b, x, r, nb, mode, n = [], {}, {}, {}, {}, None, 0
    for line in out.stdout.splitlines():
        w = line.split()
        if w[0] == "variant":
            n = int(w[3])
        elif w[0] == "a":
            entries.append((int(w[1]), int(w[2]), float.fromhex(w[3])))
        elif w[0] == "x":
            x[int(w[1])] = float.fromhex(w[2])
        elif w[0] == "r":
            r[int(w[2])] = (float.fromhex(w[3]), float.fromhex(w[4]))
        elif w[0] == "bounds":
            mode = w[1]
        elif w[0] == "nb":
            nb[int(w[1])] = float.fromhex(w[2])
    a = np.zeros((n, n))
    for i, j, v in entries:
        a[i, j] += v
    return a, x, r, nb, mode


def main():
    exe = sys.argv[1]
    rng = random.Random(2214)
    failures, checks = [], 0
    with tempfile.TemporaryDirectory() as tmp:
        for case in range(6):
            floating = case == 5
            side = rng.choice((21, 22, 24))
            path = os.path.join(tmp, "net%d.stack" % case)
            with open(path, "w") as f:
                f.write(network(rng, side, floating))
            a, x, r, nb, mode = dump(exe, path)
            nn = len(nb)
            w = np.array([abs(r[i][0]) + DATA_ROUNDING * r[i][1] for i in range(len(r))])
            inv = np.linalg.inv(a)
            true = np.abs(inv[:nn, :]) @ w
            if floating:
                checks += 1
                if mode != "estimate":
                    failures.append("net%d: a floating source, bounds %r, not 'estimate'" % (case, mode))
                elif max(nb.values()) < 2 * true.max() / 3:
                    failures.append("net%d: the estimate %.3g is under 2/3 of the true largest %.3g"
                                    % (case, max(nb.values()), 2 * true.max()))
                continue
            # the theory: every column one-signed in the node rows
            block = inv[:nn, :]
            scale = np.abs(block).max()
            mixed = [j for j in range(block.shape[1])
                     if block[:, j].max() > 1e-9 * scale and block[:, j].min() < -1e-9 * scale]
            checks += 1
            if mixed:
                failures.append("net%d: columns %s of inv(A) have both signs in the node rows" % (case, mixed[:5]))
            checks += 1
            if mode != "per-node":
                failures.append("net%d: bounds %r, not 'per-node'" % (case, mode))
                continue
            for i in range(nn):
                want = 2 * true[i] + EPS * abs(x[i])
                checks += 1
                if abs(nb[i] - want) > 1e-6 * want:
                    failures.append("net%d: node unknown %d bound %.6g, numpy %.6g" % (case, i, nb[i], want))
                    break
            print("net%d: %d unknowns, %s bounds, largest %.3g V" % (case, a.shape[0], mode, max(nb.values())))
    for f in failures:
        print("FAIL " + f)
    print("%d checks; %d failures" % (checks, len(failures)))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
