#!/usr/bin/python3
"""The reduced nodal form (sparse-cholesky / cholmod-reduced) against an
independent numpy solution of the same circuits.

Usage: reduced_agree.py LOADSTACK_BINARY [--count 25] [--seed 7]

Random heater-mat style networks of resistors fed by grounded voltage sources
without rs (they fix their node), voltage sources with rs, grounded or floating
(Norton-converted), and current sources.  Each circuit is solved here by
numpy.linalg.solve on a modified-nodal system written from the sign conventions
of shared/spec/language.md (a voltage source FROM -> TO forces
V(TO) - V(FROM) = VALUE - rs * I, its current I flowing FROM -> TO through it;
a current source drives VALUE from FROM to TO through itself), and by loadstack
with --solver sparse (which must report the reduced form) and --solver dense.
Checked to 1e-9 (relative to the largest value of the same kind):
  * every node voltage and every part's current (solve);
  * d V(probe) / d R for every resistor (influence; the adjoint runs a transposed
    solve), against numpy's exact derivative -x_a^T dA x from the same system;
  * the Thevenin resistance at the probe (thevenin), against numpy's
    (A^-1)_{probe,probe} with the sources zeroed.
Exit 0 when every circuit matches, 1 otherwise.
"""

import json
import random
import subprocess
import sys
import tempfile
import os

import numpy as np


def make(rng, idx):
    nn = rng.randint(4, 40)
    nodes = ["gnd"] + ["m%d" % i for i in range(1, nn)]
    parts = []  # (kind, name, a, b, value, rs)
    # a random spanning tree of resistors keeps every node on a DC path
    for i in range(1, nn):
        j = rng.randrange(0, i)
        parts.append(("resistor", "r%d" % len(parts), i, j, round(rng.uniform(10, 10000), 3), None))
    for _ in range(rng.randint(0, 2 * nn)):
        i, j = rng.sample(range(nn), 2)
        parts.append(("resistor", "r%d" % len(parts), i, j, round(rng.uniform(1, 1e5), 3), None))
    fixed = set()
    for _ in range(rng.randint(1, 4)):  # grounded, no rs: each fixes a distinct node
        k = rng.randrange(1, nn)
        if k in fixed:
            continue
        fixed.add(k)
        if rng.random() < 0.5:
            parts.append(("voltage", "v%d" % len(parts), 0, k, round(rng.uniform(-12, 12), 3), None))
        else:
            parts.append(("voltage", "v%d" % len(parts), k, 0, round(rng.uniform(-12, 12), 3), None))
    for _ in range(rng.randint(0, 3)):  # with rs, anywhere
        i, j = rng.sample(range(nn), 2)
        parts.append(("voltage", "v%d" % len(parts), i, j, round(rng.uniform(-5, 5), 3), round(rng.uniform(0.1, 50), 3)))
    for _ in range(rng.randint(0, 3)):
        i, j = rng.sample(range(nn), 2)
        parts.append(("current", "i%d" % len(parts), i, j, round(rng.uniform(-0.01, 0.01), 6), None))
    return nodes, parts


def write(path, nodes, parts):
    with open(path, "w") as f:
        f.write('title "Heater mat zone test"\nground gnd\n')
        for (k, name, a, b, v, rs) in parts:
            unit = {"resistor": "", "voltage": " V", "current": " A"}[k]
            f.write("%s %s %s -> %s %r%s%s\n" % (k, name, nodes[a], nodes[b], v, unit,
                                                  " rint=%r" % rs if rs else ""))


def mna(nodes, parts, zero_sources=False):
    nn = len(nodes) - 1
    br = [p for p in parts if p[0] == "voltage"]
    n = nn + len(br)
    a = np.zeros((n, n))
    b = np.zeros(n)
    u = lambda node: node - 1
    k = nn
    col = {}
    for p in parts:
        kind, name, f, t, v, rs = p
        if kind == "resistor":
            g = 1.0 / v
            for (x, y, s) in ((f, f, g), (t, t, g), (f, t, -g), (t, f, -g)):
                if x and y:
                    a[u(x), u(y)] += s
        elif kind == "current" and not zero_sources:
            if f:
                b[u(f)] -= v
            if t:
                b[u(t)] += v
        elif kind == "voltage":
            col[name] = k
            if f:
                a[u(f), k] += 1
                a[k, u(f)] -= 1
            if t:
                a[u(t), k] -= 1
                a[k, u(t)] += 1
            a[k, k] += rs or 0.0
            b[k] = 0.0 if zero_sources else v
            k += 1
    return a, b, col


def run(exe, args):
    out = subprocess.run([exe] + args + ["--format", "json"], capture_output=True, text=True, timeout=120)
    if out.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (" ".join(args), out.returncode, out.stderr[-800:]))
    return json.loads(out.stdout)


def close(x, y, scale):
    return abs(x - y) <= 1e-9 * scale + 1e-15


def main():
    if len(sys.argv) < 2:
        print(__doc__)
        return 2
    exe = sys.argv[1]
    count = int(sys.argv[sys.argv.index("--count") + 1]) if "--count" in sys.argv else 25
    seed = int(sys.argv[sys.argv.index("--seed") + 1]) if "--seed" in sys.argv else 7
    rng = random.Random(seed)
    bad = 0
    reduced_seen = 0
    with tempfile.TemporaryDirectory() as tmp:
        for c in range(count):
            nodes, parts = make(rng, c)
            path = os.path.join(tmp, "c%d.stack" % c)
            write(path, nodes, parts)
            a, b, col = mna(nodes, parts)
            x = np.linalg.solve(a, b)
            v = np.concatenate([[0.0], x[:len(nodes) - 1]])
            probe = rng.randrange(1, len(nodes))
            errs = []
            for solver in ("sparse", "dense"):
                js = run(exe, ["solve", path, "--solver", solver])
                if solver == "sparse":
                    if js["solver"]["library"] == "cholmod-reduced":
                        reduced_seen += 1
                    else:
                        errs.append("sparse run used %s, not the reduced form" % js["solver"]["library"])
                vs = max(abs(v).max(), 1e-30)
                for i, name in enumerate(nodes):
                    if not close(js["nodes"][name], v[i], vs):
                        errs.append("%s V(%s) = %r, numpy %r" % (solver, name, js["nodes"][name], v[i]))
                cur = {}
                for (kind, name, f, t, val, rs) in parts:
                    if kind == "resistor":
                        cur[name] = (v[f] - v[t]) / val
                    elif kind == "current":
                        cur[name] = val
                    else:
                        cur[name] = x[col[name]]
                cs = max(max(abs(q) for q in cur.values()), 1e-30)
                for name, q in cur.items():
                    if not close(js["parts"][name]["current"], q, cs):
                        errs.append("%s I(%s) = %r, numpy %r" % (solver, name, js["parts"][name]["current"], q))
            # sensitivities of V(probe) to each resistor: dV/dR = -(A^-T e)^T (dA/dR) x
            e = np.zeros(len(b))
            e[probe - 1] = 1
            lam = np.linalg.solve(a.T, e)
            js = run(exe, ["influence", path, nodes[probe], "--solver", "sparse"])
            got = {it["part"]: it["per_unit"] for it in js["items"]}
            ders = {}
            for (kind, name, f, t, val, rs) in parts:
                if kind != "resistor":
                    continue
                dg = -1.0 / (val * val)
                da = np.zeros_like(a)
                for (p, q, s) in ((f, f, dg), (t, t, dg), (f, t, -dg), (t, f, -dg)):
                    if p and q:
                        da[p - 1, q - 1] += s
                ders[name] = -lam @ (da @ x)
            ds = max(max(abs(q) for q in ders.values()), 1e-30)
            for name, q in ders.items():
                if name not in got or not close(got[name], q, ds):
                    errs.append("influence dV(%s)/dR(%s) = %r, numpy %r" % (nodes[probe], name, got.get(name), q))
            # Thevenin resistance at the probe, sources zeroed
            a0, _, _ = mna(nodes, parts, zero_sources=True)
            rth = np.linalg.inv(a0)[probe - 1, probe - 1]
            js = run(exe, ["thevenin", path, nodes[probe], "--solver", "sparse"])
            if js["rth"] is None or not close(js["rth"], rth, abs(rth)):
                errs.append("thevenin rth(%s) = %r, numpy %r" % (nodes[probe], js["rth"], rth))
            if not close(js["vth"], v[probe], max(abs(v).max(), 1e-30)):
                errs.append("thevenin vth(%s) = %r, numpy %r" % (nodes[probe], js["vth"], v[probe]))
            if errs:
                bad += 1
                print("FAIL circuit %d (%s):" % (c, path))
                for m in errs[:8]:
                    print("     " + m)
    print("%d circuits, %d through the reduced nodal form, %d failed" % (count, reduced_seen, bad))
    return 1 if bad or reduced_seen == 0 else 0


if __name__ == "__main__":
    sys.exit(main())
