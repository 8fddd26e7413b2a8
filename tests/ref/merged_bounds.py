#!/usr/bin/python3
"""Reference test: error bounds taken from the refinement's last residual hold the true error.

Usage: merged_bounds.py LOADSTACK_BINARY [--seed 11] [--verbose]

When the extra-precise refinement's last correction moved every unknown by far
less than double precision, the bounds start from that step's residual and add
how far x + tail moved since (docs/accuracy.md, "Error bounds").  This checks
that every bound so taken still contains the true error, against the exact
solution in rational arithmetic (Python's fractions.Fraction; every decimal of
the file read as the rational it denotes, every number of the JSON as the
double it denotes):

  * resistor ladders of K rungs (a series resistor from node i-1 to node i and a
    shunt resistor from node i to ground, i = 1..K, fed by a grounded source),
    values of 3 significant digits, series from 1 mOhm to 100 Ohm and shunts
    from 1 kOhm to 10 MOhm (so the far end's voltage stays a normal double): K = 40 takes the
    per-result bounds (up to 400 unknowns), K = 450 and 700 the per-node bounds
    of one solve;
  * solved exactly by the ladder's recursion from its far end: the resistance
    Y_i seen at node i to ground, Y_K = P_K, Y_i = P_i || (S_{i+1} + Y_{i+1}),
    then V_i = V_{i-1} Y_i / (S_i + Y_i).

Checked for every node voltage and every part current: |reported - exact| <=
reported bound (the source's branch current has none above 400 unknowns); and that the bounds are of the kind expected ("per-result" or
"per-node").  Exit 0 when every ladder passes.
"""

import argparse
import json
import os
import random
import subprocess
import sys
import tempfile
from fractions import Fraction


def value(rng, lo, hi):
    """3 significant digits, log-uniform in [10^lo, 10^hi): its text and exact rational."""
    e = rng.randint(lo, hi - 1)
    m = rng.randint(100, 999)
    return "%de%d" % (m, e - 2), Fraction(m) * Fraction(10) ** (e - 2)


def ladder(rng, k):
    """The circuit text and its exact node voltages and part currents."""
    vin_text, vin = "%d.%02d" % (rng.randint(1, 9), rng.randint(0, 99)), None
    vin = Fraction(vin_text)
    s, p, lines = [None], [None], ["ground g", "voltage vin g -> n0 %s" % vin_text]
    for i in range(1, k + 1):
        st, sv = value(rng, -3, 2)
        pt, pv = value(rng, 3, 7)
        s.append(sv)
        p.append(pv)
        lines.append("resistor s%d n%d -> n%d %s" % (i, i - 1, i, st))
        lines.append("resistor p%d n%d -> g %s" % (i, i, pt))
    y = [None] * (k + 1)
    y[k] = p[k]
    for i in range(k - 1, 0, -1):
        z = s[i + 1] + y[i + 1]
        y[i] = p[i] * z / (p[i] + z)
    v = [vin] + [None] * k
    for i in range(1, k + 1):
        v[i] = v[i - 1] * y[i] / (s[i] + y[i])
    nodes = {"n%d" % i: v[i] for i in range(k + 1)}
    parts = {}
    for i in range(1, k + 1):
        parts["s%d" % i] = (v[i - 1] - v[i]) / s[i]
        parts["p%d" % i] = v[i] / p[i]
    # the source's current, FROM -> TO through it (g -> n0): it delivers what s1 carries
    parts["vin"] = parts["s1"]
    return "\n".join(lines) + "\n", nodes, parts


def check(binary, text, nodes, parts, expect_kind, verbose):
    """Failures (strings) of one ladder."""
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "ladder.stack")
        with open(path, "w") as f:
            f.write(text)
        run = subprocess.run([binary, "solve", path, "--format", "json"], capture_output=True, text=True)
    if run.returncode != 0:
        return ["exit %d: %s" % (run.returncode, run.stderr.strip())]
    js = json.loads(run.stdout)
    acc = js["accuracy"]
    bad = []
    if acc["bounds"] != expect_kind:
        bad.append("bounds %s, expected %s" % (acc["bounds"], expect_kind))
    worst = 0.0
    for name, exact in nodes.items():
        got, bound = js["nodes"][name], acc["nodes"][name]
        err = abs(Fraction(got) - exact)
        if bound is None or err > Fraction(bound):
            bad.append("node %s: error %.3g beyond its bound %s" % (name, float(err), bound))
        elif bound:
            worst = max(worst, float(err / Fraction(bound)))
    for name, exact in parts.items():
        rec = js["parts"][name]
        got, bound = rec["current"], rec.get("error_bound")
        if name == "vin" and bound is None and expect_kind != "per-result":
            continue  # a large system's branch current has no bound (docs/accuracy.md)
        if name == "vin":
            exact = -exact if abs(Fraction(got) + exact) < abs(Fraction(got) - exact) else exact
        err = abs(Fraction(got) - exact)
        if bound is None or err > Fraction(bound):
            bad.append("part %s: error %.3g beyond its bound %s" % (name, float(err), bound))
        elif bound:
            worst = max(worst, float(err / Fraction(bound)))
    if verbose:
        print("  %s: largest error / bound %.3g" % (expect_kind, worst))
    return bad


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("binary")
    ap.add_argument("--seed", type=int, default=11)
    ap.add_argument("--verbose", action="store_true")
    a = ap.parse_args()
    rng = random.Random(a.seed)
    failed = 0
    cases = [(40, "per-result"), (40, "per-result"), (450, "per-node"), (700, "per-node")]
    for k, kind in cases:
        text, nodes, parts = ladder(rng, k)
        bad = check(a.binary, text, nodes, parts, kind, a.verbose)
        for b in bad[:10]:
            print("ladder of %d rungs: %s" % (k, b))
        failed += bool(bad)
    print("%d passed, %d failed" % (len(cases) - failed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
