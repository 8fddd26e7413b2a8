#!/usr/bin/python3
"""Circuit generator for the loadstack benchmarks and grid tests.

Usage:
  gen.py grid N [--feed voltage|current] [--out FILE]
      An N x N grid of one-ohm resistors.  Node (i, j) is `n<i>_<j>`; the corner
      (N-1, N-1) is the ground node `g`.  --feed voltage (default) puts a grounded
      1 V source `vin` from g to n0_0; --feed current a 1 A source into n0_0.
  gen.py chain K [--out FILE]
      A K-stage chain of inverting op-amp stages with finite gain (general MNA):
      stage s has rin_s (10k) from the previous output to its minus input, rf_s
      (10k) from minus to its output, gain 200k and rout 50.
  gen.py ports M [--out FILE]
      M buffered sensor channels, each a divider driving an ADC input through a
      port (a many-port loading report).
  gen.py tol [PARTS] [--out FILE]
      A resistor ladder of PARTS parts (default 50) with tolerances (tolerance
      runs): a source, (PARTS - 2) / 2 rungs of (series, shunt) and a load.
  gen.py dense N [--out FILE]
      N unknowns for the dense path: N pads, each with a resistor to ground and
      resistors to its next 8 pads, fed by a grounded current source; with
      --matrix FILE also its nodal matrix (n, then n*n column-major doubles,
      then the n right-hand-side values, all binary) for dgesv_ref.
  gen.py gridmatrix N --out FILE.npz
      The nodal matrix of the `grid N --feed voltage` circuit with the source's
      node voltage eliminated (the same unknowns the reduced nodal form solves),
      as scipy CSC + right-hand side, for the spsolve reference.

The generator is deterministic: the same arguments give the same file.
"""

import argparse
import sys


def out_stream(path):
    return open(path, "w", buffering=1 << 20) if path and path != "-" else sys.stdout


def node(n, i, j):
    return "g" if (i == n - 1 and j == n - 1) else "n%d_%d" % (i, j)


def write_grid(n, feed, f):
    f.write('title "Heater mat, %d x %d one-ohm cells"\n' % (n, n))
    f.write("ground g\n")
    if feed == "voltage":
        f.write("voltage vin g -> n0_0 1 V\n")
    else:
        f.write("current iin g -> n0_0 1 A\n")
    lines = []
    for i in range(n):
        lines.clear()
        for j in range(n):
            a = node(n, i, j)
            if j + 1 < n:
                lines.append("resistor h%d_%d %s -> %s 1\n" % (i, j, a, node(n, i, j + 1)))
            if i + 1 < n:
                lines.append("resistor v%d_%d %s -> %s 1\n" % (i, j, a, node(n, i + 1, j)))
        f.write("".join(lines))


def write_chain(k, f):
    f.write('title "Cascaded conditioning chain, %d inverting stages"\n' % k)
    f.write("ground gnd\n")
    f.write("voltage vs gnd -> s0 10 mV\n")
    for s in range(1, k + 1):
        prev = "s%d" % (s - 1)
        f.write("resistor rin%d %s -> m%d 10k\n" % (s, prev, s))
        f.write("resistor rf%d m%d -> s%d 10k\n" % (s, s, s))
        f.write("opamp u%d plus=gnd minus=m%d out=s%d gain=200k rout=50\n" % (s, s, s))
    f.write("resistor rload s%d -> gnd 2k\n" % k)


def write_ports(m, f):
    f.write('title "Soil probe array, %d channels"\n' % m)
    f.write("ground gnd\n")
    f.write("voltage vref gnd -> ref 3.3 V rint=0.5\n")
    for c in range(m):
        f.write("resistor rt%d ref -> s%d 10k\n" % (c, c))
        f.write("resistor rb%d s%d -> gnd %dk\n" % (c, c, 5 + c % 20))
        f.write("port p%d s%d -> adc%d\n" % (c, c, c))
        f.write("resistor rin%d adc%d -> gnd 1M\n" % (c, c))


def write_tol(parts, f):
    rungs = (max(parts, 4) - 2) // 2
    f.write('title "Bench supply monitor ladder, %d parts"\n' % (2 * rungs + 2))
    f.write("ground gnd\n")
    f.write("voltage vsup gnd -> t0 12 V rint=0.1 tol=2%\n")
    # rungs of (series, shunt) + a load: 1 + 2 * rungs + 1 parts
    for r in range(rungs):
        f.write("resistor rs%d t%d -> t%d %dk tol=1%%\n" % (r, r, r + 1, 1 + r % 5))
        f.write("resistor rp%d t%d -> gnd %dk tol=5%%\n" % (r, r + 1, 47 + r % 50))
    f.write("resistor rl t%d -> gnd 100k tol=1%%\n" % rungs)
    if rungs <= 24:
        f.write("expect t%d between 0.001 V and 12 V\n" % rungs)


DENSE_WINDOW = 8


def dense_parts(n):
    """(name, a, b, ohms) of the dense benchmark; b = -1 is ground."""
    for i in range(n):
        yield ("rg%d" % i, i, -1, 1000 + i)
        for j in range(i + 1, min(n, i + 1 + DENSE_WINDOW)):
            yield ("r%d_%d" % (i, j), i, j, 100 + (i * 7 + j * 13) % 900)


def write_dense(n, f):
    f.write('title "Electrode mesh, %d fully coupled pads"\n' % n)
    f.write("ground gnd\n")
    f.write("current iin gnd -> p0 1 mA\n")
    for (name, a, b, r) in dense_parts(n):
        f.write("resistor %s p%d -> %s %d\n" % (name, a, "gnd" if b < 0 else "p%d" % b, r))


def dense_matrix(n, path):
    import numpy as np
    a = np.zeros((n, n))
    for (_, i, j, r) in dense_parts(n):
        g = 1.0 / r
        a[i, i] += g
        if j >= 0:
            a[j, j] += g
            a[i, j] -= g
            a[j, i] -= g
    b = np.zeros(n)
    b[0] = 1e-3
    with open(path, "wb") as f:
        np.array([n], dtype=np.int64).tofile(f)
        np.asfortranarray(a).T.ravel().tofile(f)  # column-major
        b.tofile(f)


def grid_matrix(n, path):
    """Reduced nodal matrix of `grid n --feed voltage`: unknowns are the grid
    nodes other than g (ground) and n0_0 (set to 1 V by the source)."""
    import numpy as np
    import scipy.sparse as sp
    idx = -np.ones((n, n), dtype=np.int64)
    free = np.ones((n, n), dtype=bool)
    free[n - 1, n - 1] = False
    free[0, 0] = False
    idx[free] = np.arange(free.sum())
    known = np.zeros((n, n))
    known[0, 0] = 1.0
    rows, cols, vals = [], [], []
    diag = np.zeros(int(free.sum()))
    rhs = np.zeros(int(free.sum()))
    # each resistor joins A = (i, j) to B = (i, j + 1) or (i + 1, j)
    for (sa, sb) in (((slice(0, n), slice(0, n - 1)), (slice(0, n), slice(1, n))),
                     ((slice(0, n - 1), slice(0, n)), (slice(1, n), slice(0, n)))):
        ia, ib = idx[sa].ravel(), idx[sb].ravel()
        ka, kb = known[sa].ravel(), known[sb].ravel()
        for (p, q, kq) in ((ia, ib, kb), (ib, ia, ka)):
            m = p >= 0
            np.add.at(diag, p[m], 1.0)
            mm = m & (q >= 0)
            rows.append(p[mm]); cols.append(q[mm]); vals.append(-np.ones(int(mm.sum())))
            mk = m & (q < 0)
            np.add.at(rhs, p[mk], kq[mk])
    nu = int(free.sum())
    rows.append(np.arange(nu)); cols.append(np.arange(nu)); vals.append(diag)
    a = sp.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(nu, nu))
    np.savez(path, data=a.data, indices=a.indices, indptr=a.indptr, shape=a.shape, rhs=rhs)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("what", choices=["grid", "chain", "ports", "tol", "dense", "gridmatrix"])
    ap.add_argument("size", type=int, nargs="?", default=0)
    ap.add_argument("--feed", choices=["voltage", "current"], default="voltage")
    ap.add_argument("--out", default="-")
    ap.add_argument("--matrix", help="dense: also write the matrix for dgesv_ref")
    a = ap.parse_args()
    if a.what != "tol" and a.size < 2:
        ap.error("size must be at least 2")
    if a.what == "gridmatrix":
        grid_matrix(a.size, a.out)
        return
    if a.what == "dense" and a.matrix:
        dense_matrix(a.size, a.matrix)
    f = out_stream(a.out)
    {"grid": lambda: write_grid(a.size, a.feed, f), "chain": lambda: write_chain(a.size, f),
     "ports": lambda: write_ports(a.size, f), "tol": lambda: write_tol(a.size or 50, f),
     "dense": lambda: write_dense(a.size, f)}[a.what]()
    if f is not sys.stdout:
        f.close()


if __name__ == "__main__":
    main()
