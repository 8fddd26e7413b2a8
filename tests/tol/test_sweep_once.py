#!/usr/bin/python3
"""A sweep elaborates its circuit once and recomputes per point only the
values the swept let reaches (src/netlist/letdeps.c, src/analysis/sweep.c).
These checks hold it to the way every point used to be made, reading and
elaborating the circuit again with --set LET=x:

1. Every example circuit with a top-level let, every such let swept: the
   report is byte-for-byte the one of LOADSTACK_SWEEP_REELABORATE=1 (the same
   arithmetic: the values are the elaborator's, the solves the same), and a
   few points match a separate `solve --set LET=x` to 1e-12 relative (a
   point inside a chain refactors with the kept pivots, so its last bits may
   differ from a fresh factor).
2. Random resistor networks whose values are expressions of lets (a let of a
   let, a block parameter, a vcvs gain, an op-amp rail offset): the same two
   comparisons, and every node voltage against numpy.linalg.solve of the
   nodal equations written here (Debian's python3-numpy, the outside
   reference) to 1e-9.
3. The fallbacks: a let that picks a switch's state (a word: the sweep
   elaborates every point), a junction's rbulk= from 0 to positive (a branch
   unknown appears: that point is solved afresh, both ways; every point
   also against a separate solve), and a resistance that goes
   to zero or below at some points (those points are refused by the
   elaborator and reported null, as before).  Each against the per-point way
   and against closed forms (Ohm's law and the divider rule).
4. LOADSTACK_TIMING=1 shows one parse and one elaboration for a sweep that
   follows its let, and one per point (plus the first) for one that cannot.
"""
import glob
import json
import math
import os
import random
import re

import numpy as np

from lsrun import LOADSTACK, check, circuit, close, fail, finish, run

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
REEL = {"LOADSTACK_SWEEP_REELABORATE": "1"}
PREFIX = {"p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "m": 1e-3, "k": 1e3, "M": 1e6, "G": 1e9}
LET = re.compile(r"^let\s+(\w+)\s*=\s*([-+]?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?)\s*([^\s#]*)")


def top_lets(path):
    """(name, value) of the top-level lets written as a plain number."""
    out, depth = [], 0
    with open(path, encoding="utf-8") as f:
        for line in f:
            s = line.strip()
            if re.match(r"^block\s", s):
                depth += 1
            elif s == "end":
                depth -= 1
            m = LET.match(s)
            if m and depth == 0:
                v = float(m.group(2))
                unit = m.group(3)
                if unit and unit[0] in PREFIX and (len(unit) == 1 or unit[1:] in ("V", "A", "W", "ohm", "Ω", "F", "S")):
                    v *= PREFIX[unit[0]]
                out.append((m.group(1), v))
    return out


def sweep_pair(path, let, lo, hi, quantities, steps=10, extra=()):
    """The sweep both ways: (rc, out, err) each."""
    args = ["sweep", path, let, repr(lo), repr(hi)] + quantities + ["--steps", str(steps), "--format", "json",
                                                                   "--quiet"] + list(extra)
    return run(args), run(args, env=REEL)


def points(out):
    try:
        return json.loads(out)["points"]
    except (ValueError, KeyError):
        return None


def agree(a, b, scale):
    """1e-12 relative, with a floor of 1e-12 of the column's scale."""
    if a is None or b is None:
        return a is None and b is None
    return abs(a - b) <= 1e-12 * max(abs(a), abs(b)) + 1e-12 * scale


def against_solves(path, let, pts, nodes, idx, extra=()):
    """Points idx of a sweep against separate solves with --set LET=x."""
    for i in idx:
        x = pts[i][let]
        rc, out, err = run(["solve", path, "--set", "%s=%r" % (let, x), "--format", "json"] + list(extra))
        try:
            v = json.loads(out)["nodes"]
        except ValueError:
            check(all(pts[i][n] is None for n in nodes), f"{path} {let}={x}: solve fails, the sweep point is null")
            continue
        for n in nodes:
            scale = max(abs(p[n]) for p in pts if p[n] is not None) if any(p[n] is not None for p in pts) else 1
            if not agree(pts[i][n], v[n], scale):
                fail(f"{path} {let}={x} {n}: sweep {pts[i][n]!r}, solve {v[n]!r}")


def examples():
    """Every example circuit with a top-level let: both ways the same."""
    files = sorted(glob.glob(os.path.join(ROOT, "circuits", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "docs", "examples", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "tests", "cases", "closed", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "tests", "loading", "closed", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "tests", "tol", "*.stack")))
    swept = 0
    for path in files:
        lets = top_lets(path)
        if not lets:
            continue
        rc, out, err = run(["solve", path, "--format", "json"])
        try:
            nodes = [n for n in json.loads(out)["nodes"] if json.loads(out)["nodes"][n] != 0][:3]
        except (ValueError, KeyError):
            continue   # a circuit made to fail
        for let, v in lets:
            lo, hi = (0.5 * v, 1.5 * v) if v != 0 else (0.0, 1.0)
            (ra, oa, ea), (rb, ob, eb) = sweep_pair(path, let, lo, hi, nodes + [let])
            name = f"{os.path.relpath(path, ROOT)} {let}"
            if not check(ra == rb and oa == ob and ea == eb,
                         f"{name}: the once-elaborated sweep differs from the per-point one\n{ea}\n{eb}"):
                continue
            pts = points(oa)
            if pts is None:
                continue
            swept += 1
            for p in pts:
                if p[let] is not None and not math.isclose(p[let], p[let]):
                    fail(f"{name}: the let as a quantity is not its value")
            against_solves(path, let, pts, nodes, (0, 3, len(pts) - 1))
    check(swept >= 15, f"{swept} lets of the example circuits were swept (expected at least 15)")
    print(f"ok   {swept} lets of the example circuits: once = per point, byte for byte")


def random_network(rng, n):
    """A connected resistor network of n nodes (n0 is ground) fed by a
    source, its values expressions of lets; the text and a function giving
    the conductance matrix and the source at a value of `k`."""
    lets = {"k": rng.uniform(0.5, 2.0)}
    lines = ["ground n0", "let k = %r" % lets["k"], "let ra = k * 1k + 100", "let rb = ra / 3 + 2 * k",
             "block leg a b  r=1k", "  resistor inner a -> b  r", "end"]
    edges = []
    for i in range(1, n):
        edges.append((rng.randrange(0, i), i))
    for _ in range(n):
        a, b = rng.sample(range(n), 2)
        edges.append((a, b))
    vals = []
    for j, (a, b) in enumerate(edges):
        form = rng.choice(["num", "ra", "rb", "expr", "leg"])
        c = rng.choice([1.0, 2.2, 4.7, 10.0])
        if form == "num":
            text, f = "%gk" % c, (lambda k, c=c: c * 1e3)
        elif form == "ra":
            text, f = "ra", (lambda k: k * 1e3 + 100)
        elif form == "rb":
            text, f = "rb", (lambda k: (k * 1e3 + 100) / 3 + 2 * k)
        elif form == "expr":
            text, f = "%g * rb + k * 50" % c, (lambda k, c=c: c * ((k * 1e3 + 100) / 3 + 2 * k) + k * 50)
        else:
            text, f = None, (lambda k, c=c: c * 1e3 * k + 10)
        if text is None:
            lines.append("use leg l%d a=n%d b=n%d r=%g * k * 1k + 10" % (j, a, b, c))
        else:
            lines.append("resistor r%d n%d -> n%d %s" % (j, a, b, text))
        vals.append(f)
    lines.append("voltage vs n0 -> n%d 2 * k + 1 rint=50" % (n - 1))

    def system(k):
        g = np.zeros((n, n))
        for (a, b), f in zip(edges, vals):
            y = 1.0 / f(k)
            g[a, a] += y
            g[b, b] += y
            g[a, b] -= y
            g[b, a] -= y
        rhs = np.zeros(n)
        # the source with its internal resistance as a Norton equivalent into n-1
        g[n - 1, n - 1] += 1 / 50.0
        rhs[n - 1] += (2 * k + 1) / 50.0
        return g[1:, 1:], rhs[1:]
    return "\n".join(lines) + "\n", system


def random_circuits():
    rng = random.Random(19)
    for c in range(6):
        n = rng.randrange(4, 9)
        text, system = random_network(rng, n)
        path = circuit("random_%d.stack" % c, text)
        nodes = ["n%d" % i for i in range(1, n)]
        (ra, oa, ea), (rb, ob, eb) = sweep_pair(path, "k", 0.3, 3.0, nodes, steps=17)
        check(ra == 0 and ra == rb and oa == ob, f"random circuit {c}: once = per point, byte for byte\n{ea}{eb}")
        pts = points(oa)
        if not check(pts is not None, f"random circuit {c}: a JSON report\n{ea}"):
            continue
        worst = 0.0
        for p in pts:
            g, rhs = system(p["k"])
            v = np.linalg.solve(g, rhs)   # the outside reference
            for i, name in enumerate(nodes):
                worst = max(worst, abs(p[name] - v[i]) / max(abs(v).max(), 1e-300))
        check(worst <= 1e-9, f"random circuit {c}: node voltages against numpy to 1e-9 (worst {worst:.2g})")
        against_solves(path, "k", pts, nodes, (0, 5, 16))
    print("ok   random circuits: once = per point = numpy")


def fallbacks():
    # a let picking a word: every point elaborated afresh (a switch closed
    # shorts the lower resistor of a 10 V divider of two 1k: 0 V; open: 5 V)
    sw = circuit("switch_let.stack", """\
ground gnd
let pump_on = 0
voltage v1 gnd -> top 10 V
resistor r1 top -> mid 1k
resistor r2 mid -> gnd 1k
switch s1 mid -> gnd state=pump_on
""")
    (ra, oa, ea), (rb, ob, eb) = sweep_pair(sw, "pump_on", 0, 1, ["mid"], steps=2)
    check(ra == 0 and oa == ob and ea == eb, f"switch state from a let: the same both ways\n{ea}{eb}")
    pts = points(oa) or [{"mid": None}, {"mid": None}]
    close(pts[0]["mid"], 5.0, rel=1e-12, what="switch open: the divider's half of 10 V")
    close(pts[1]["mid"], 0.0, abs_=1e-9, what="switch closed: the node shorted to ground")
    # the word-valued let is structural: one load per point and the first
    rc, out, err = run(["sweep", sw, "pump_on", "0", "1", "mid", "--steps", "2", "--quiet"],
                       env={"LOADSTACK_TIMING": "1"})
    check(err.count("timing: parse") == 3, f"a let that picks a word: three loads for two points\n{err}")

    # a resistance that goes to zero and below: those points are null, with
    # the elaborator's reason; the others are the divider rule
    div = circuit("div_let.stack", """\
ground gnd
let k = 1
voltage v1 gnd -> top 12 V
resistor r1 top -> mid 1k
resistor r2 mid -> gnd k * 1k
""")
    (ra, oa, ea), (rb, ob, eb) = sweep_pair(div, "k", -1, 3, ["mid"], steps=5)
    check(ra == 0 and oa == ob and ea == eb, f"a value refused at some points: the same both ways\n{ea}\n{eb}")
    check("greater than zero" in ea, f"the refused points say why\n{ea}")
    for p in points(oa) or []:
        k = p["k"]
        if k <= 0:
            check(p["mid"] is None, f"k={k}: a resistance of {k}k is refused, the point is null")
        else:
            close(p["mid"], 12 * k / (1 + k), rel=1e-12, what=f"divider at k={k}")
    rc, out, err = run(["sweep", div, "k", "1", "3", "mid", "--steps", "5", "--quiet"],
                       env={"LOADSTACK_TIMING": "1"})
    check(err.count("timing: parse") == 1 and err.count("timing: elaborate") == 1,
          f"a let that reaches only values: the circuit is read and elaborated once\n{err}")

    # a junction's rbulk= from 0 to positive adds a branch unknown: the
    # point is solved afresh, and agrees with a separate solve
    d = circuit("diode_rbulk.stack", """\
ground gnd
let rb = 0
voltage v1 gnd -> a 5 V
resistor r1 a -> k 1k
diode d1 k -> gnd isat=1n ideality=1.8 rbulk=rb
""")
    rc, out, err = run(["solve", d])
    if rc == 2 and "diode" in err:
        print("skip rbulk: no diode part in this build")
        return
    (ra, oa, ea), (rb, ob, eb) = sweep_pair(d, "rb", 0, 20, ["k", "d1.current"], steps=9)
    check(ra == 0 and oa == ob, f"rbulk= through zero: the same both ways\n{ea}\n{eb}")
    pts = points(oa)
    if pts:
        against_solves(d, "rb", pts, ["k"], range(len(pts)))
        # Ohm's law on r1 ties the two columns together at every point
        for p in pts:
            close(p["d1.current"], (5 - p["k"]) / 1e3, rel=1e-9, what=f"rbulk={p['rb']}: I(d1) = (5 V - V(k)) / 1k")


examples()
random_circuits()
fallbacks()
finish()
