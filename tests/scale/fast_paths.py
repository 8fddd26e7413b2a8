#!/usr/bin/python3
"""The fast paths of issue 19 give the simple paths' answers.

Usage: fast_paths.py LOADSTACK_BINARY [--random 60] [--seed 19]

The port report takes the entries of A^-1 it needs either from two refined
transposed solves per port (the simple path, used below 2000 unknowns) or from
the selected-inverse factor (src/selinv.c, used from 2000 unknowns on); the
variable LOADSTACK_SELINV_MIN_N moves that line, so both paths run on small
circuits here: -1 forces the solves, 0 the selected inverse.  For every
circuit in circuits/ and docs/examples/, and for random networks with ports
(the generator of tests/ref/random_mna.py, split by ports as in
tests/loading/test_sens_random.py), `solve --format json` must agree on every
port field: to 1e-12 of the field's own magnitude, and for sag (a difference
of two voltages) to 1e-12 of the larger of open and loaded; verdicts and
texts must be equal.  What the two paths must agree on is the same exact
number, A^-1's entries, so the reference is the simple path itself; the
simple path is checked against numpy by tests/loading/test_sens_random.py.

Where the system is ill-conditioned (the report's solver.rcond below 1e-6)
neither path is accurate to 1e-12: a refined solve's forward error, like the
plain LU's, is of the order of eps / rcond, so there the tolerance is
100 eps / rcond (standard forward-error bound of a backward-stable solve,
e.g. Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., sec.
7.1).  An impedance both paths put within 1e-12 of the circuit's largest port
impedance is zero to both (the simple path can leave 1e-17 ohm of rounding
where the fast one has an exact zero); the fields derived from it (ratio,
verdict, why, fix) are then not compared.
"""

import argparse
import glob
import json
import math
import os
import random
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))
sys.path.insert(0, os.path.join(ROOT, "tests", "ref"))
sys.path.insert(0, os.path.join(ROOT, "tests", "loading"))
import random_mna  # noqa: E402
from test_sens_random import add_ports  # noqa: E402

REL = 1e-12


def run(binary, path, min_n):
    env = dict(os.environ, LOADSTACK_SELINV_MIN_N=str(min_n))
    p = subprocess.run([binary, "solve", path, "--format", "json", "--quiet"], env=env,
                       capture_output=True, text=True, timeout=120)
    try:
        return p.returncode, json.loads(p.stdout) if p.stdout.strip() else None
    except json.JSONDecodeError:
        return p.returncode, None


def differ(a, b, scale, rel):
    if a is None or b is None or isinstance(a, str) or isinstance(b, str):
        return a != b
    if isinstance(a, bool) or isinstance(b, bool):
        return a != b
    if math.isinf(a) or math.isinf(b):
        return a != b
    return abs(a - b) > rel * max(abs(a), abs(b), scale)


def num(x):
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def same(a, b, rel):
    """Equal structure, numbers within rel of their magnitude."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(same(a[k], b[k], rel) for k in a)
    if isinstance(a, float) or isinstance(b, float):
        return not differ(a, b, 0, rel)
    return a == b


DERIVED = ("ratio", "verdict", "why", "fix", "by")


def forward_bound(rcond):
    """100 eps / rcond: a backward-stable solve's relative forward error."""
    return 100 * 2.2e-16 / max(rcond or 0, 1e-300)


def port_scales(a, b, floors, rel):
    """Scales of one port's fields for differ() at rel: each field is also
    held to rel of the report's norm of its kind (floors: volts, amps, ohms),
    a solve's forward error being bounded in norm, not entry by entry.
    Returns (the scales, whether zout or zin is zero to both reports, the
    relative tolerance of the fields derived from them)."""
    v = floors["amps"] if a.get("mode") == "current" else floors["volts"]
    z = floors["ohms"]
    opens = [abs(a.get("open") or 0), abs(b.get("open") or 0)] if num(a.get("open")) and num(b.get("open")) else [0]
    sc = {"open": v, "loaded": v, "sag": v, "budget": v, "current": floors["amps"], "zout": z, "zin": z,
          "sag_rel": v / min(opens) if min(opens) else math.inf}
    zs = [k for k in ("zout", "zin") if num(a.get(k)) and num(b.get(k)) and math.isfinite(a[k])]
    zero = any(max(abs(a[k]), abs(b[k])) <= rel * z for k in zs)
    derived = 2 * max([rel] + [rel * z / abs(a[k]) for k in zs if a[k]])
    return sc, zero, derived


def compare(path, slow, fast, counts, rel=None, floors=None):
    """The ports of two reports; returns a list of differences.

    rel: the relative tolerance (default: REL, or forward_bound where the
    report's rcond is below 1e-6).  floors (default: none): {"volts": V,
    "amps": A, "ohms": R}, the report's largest values; then every voltage
    passes within rel of V too, every current within rel of A, every
    impedance within rel of R (zero to both within that), and the fields
    derived from zout and zin (ratio, fix) are held to twice the relative
    tolerance those got."""
    bad = []
    if (slow is None) != (fast is None):
        return ["%s: one path gave no report" % path]
    if slow is None:
        return []
    rcond = (slow.get("solver") or {}).get("rcond") or 0
    if rel is None:
        rel = REL if rcond >= 1e-6 else max(REL, forward_bound(rcond))
    counts["loose" if rel > REL else "strict"] += 1
    ps, pf = slow.get("ports", {}), fast.get("ports", {})
    if set(ps) != set(pf):
        return ["%s: different ports" % path]
    zmax = max([abs(p[k]) for p in ps.values() for k in ("zout", "zin")
                if num(p.get(k)) and math.isfinite(p[k])] + [0])
    for name in ps:
        a, b = ps[name], pf[name]
        volts = max(abs(a.get("open") or 0), abs(a.get("loaded") or 0))
        zero_z = any(num(a.get(k)) and num(b.get(k)) and a[k] != b[k]
                     and max(abs(a[k]), abs(b[k])) <= REL * zmax for k in ("zout", "zin"))
        scales = {"sag": volts, "sag_rel": 1, "zout": REL * zmax / rel, "zin": REL * zmax / rel}
        drel = rel
        if floors:
            scales, zero_z, drel = port_scales(a, b, floors, rel)
        for key in a:
            if zero_z and key in DERIVED:
                continue
            if isinstance(a[key], (int, float)) and not isinstance(a[key], bool):
                if differ(a[key], b.get(key), scales.get(key, 0), drel if key == "ratio" else rel):
                    bad.append("%s: port %s %s: %r against %r" % (path, name, key, a[key], b.get(key)))
            elif key == "fix":
                if not same(a[key], b.get(key), drel):
                    bad.append("%s: port %s fix: %r against %r" % (path, name, a[key], b.get(key)))
            elif a[key] != b.get(key):
                bad.append("%s: port %s %s: %r against %r" % (path, name, key, a[key], b.get(key)))
    return bad


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("--random", type=int, default=60)
    ap.add_argument("--seed", type=int, default=19)
    args = ap.parse_args()
    files = sorted(glob.glob(os.path.join(ROOT, "circuits", "**", "*.stack"), recursive=True) +
                   glob.glob(os.path.join(ROOT, "docs", "examples", "**", "*.stack"), recursive=True))
    bad, ports_seen, circuits = [], 0, 0
    counts = {"strict": 0, "loose": 0}
    for path in files:
        (rs, slow), (rf, fast) = run(args.binary, path, -1), run(args.binary, path, 0)
        if rs != rf:
            bad.append("%s: exit %d against %d" % (path, rs, rf))
            continue
        bad += compare(os.path.relpath(path, ROOT), slow, fast, counts)
        ports_seen += len((slow or {}).get("ports", {}))
        circuits += 1
    rng = random.Random(args.seed)
    with tempfile.TemporaryDirectory(prefix="loadstack_fast_") as tmp:
        made = 0
        for i in range(1, 20 * args.random):
            if made >= args.random:
                break
            net = random_mna.generate(rng, rng.randint(4, 40), i)
            if len(add_ports(net, rng, count=rng.randint(1, 4))) == 0:
                continue
            path = os.path.join(tmp, "net%03d.stack" % i)
            with open(path, "w", encoding="utf-8") as f:
                f.write(net.text)
            (rs, slow), (rf, fast) = run(args.binary, path, -1), run(args.binary, path, 0)
            if rs != rf:
                bad.append("random net %d: exit %d against %d" % (i, rs, rf))
                continue
            if slow is None:
                continue
            made += 1
            ports_seen += len(slow.get("ports", {}))
            bad += ["random net %d: %s" % (i, b) for b in compare(path, slow, fast, counts)]
    print("%d circuits and %d random networks, %d ports compared; %d reports to 1e-12, %d ill-conditioned "
          "ones to 100 eps / rcond" % (circuits, made, ports_seen, counts["strict"], counts["loose"]))
    for b in bad[:20]:
        print("  " + b)
    if made < args.random // 2 or ports_seen < 100 or counts["strict"] < 2 * counts["loose"]:
        print("too few comparisons: the test lost its power")
        return 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
