#!/usr/bin/python3
"""Reference test: loadstack's operating point against an independent MNA in numpy.

Usage: random_mna.py LOADSTACK_BINARY [--count 60] [--seed 1] [--keep-failures DIR]
                     [--solver auto|dense|sparse] [--verbose]

Generates COUNT random, well-posed DC networks (fixed seed, so every run sees the
same networks), writes each as a .stack file in a temporary directory, solves it
here with a modified-nodal-analysis matrix built from the sign conventions of
shared/spec/language.md and numpy.linalg.solve, runs
`LOADSTACK solve FILE --format json` and compares every node voltage, every part's
current, voltage and power, and every op-amp's output voltage and current.

Tolerance: |loadstack - numpy| <= 1e-9 * |numpy| + 1e-9 * (largest |value| of the
same quantity in that network, the independent sources' values included).
Exit 0 when every network matches, 1 otherwise (2 on bad usage).

Well-posedness by construction:
  * a random spanning tree of resistors rooted at ground, so every node has a DC path;
  * op-amps only in inverting / non-inverting stages with their own feedback node
    (negative feedback through rf);
  * no loop of voltage-defined branches (sources without rs, vcvs, ccvs, ideal op-amp
    outputs, which are branches from ground to `out`): a union-find over those
    branches rejects any that would close a loop;
  * the assembled matrix is rejected (and the network regenerated) when numpy's
    2-norm condition number exceeds 1e10, or when a plain double-precision solve
    of it already misses the tolerance against the refined reference.
The reference is itself checked against Kirchhoff's current law and each part's
own equation (verify_reference) before loadstack is compared with it.
"""

import argparse
import json
import math
import os
import random
import shutil
import subprocess
import sys
import tempfile

import numpy as np

COND_MAX = 1e10
RTOL = 1e-9
FLOOR = 1e-9


# ----------------------------------------------------------------------------
# number formatting: every value is written as text and read back exactly the
# way the language defines it, so the reference solves the same circuit.

PREFIX = {"": 1.0, "m": 1e-3, "u": 1e-6, "k": 1e3, "M": 1e6}


def sig3(rng, lo_exp, hi_exp):
    """Return (mantissa text, decimal exponent) of a 3-significant-digit value
    drawn log-uniformly between 10^lo_exp and 10^hi_exp."""
    e = rng.randint(lo_exp, hi_exp - 1)
    m = rng.randint(100, 999) / 100.0
    return "%.2f" % m, e


def eng(mant, e, unit, rng, allow_iec=False):
    """Text and float value of mant*10^e with an SI prefix and optional unit."""
    # choose a prefix so that the mantissa is 1..999
    pre_exp = 3 * math.floor(e / 3)
    prefix = {-6: "u", -3: "m", 0: "", 3: "k", 6: "M"}[pre_exp]
    shift = e - pre_exp
    m = float(mant) * (10 ** shift)
    mtxt = ("%.6f" % m).rstrip("0").rstrip(".")
    value = float(mtxt) * PREFIX[prefix]
    style = rng.random()
    if allow_iec and prefix in ("k", "M") and "." in mtxt and style < 0.2:
        # IEC 60062 letter-and-digit code: 4k7, 2M2
        a, b = mtxt.split(".")
        return a + prefix + b, value
    if allow_iec and prefix == "" and style < 0.1 and "." in mtxt:
        a, b = mtxt.split(".")
        return a + "R" + b, value
    if unit and style > 0.6:
        return mtxt + " " + prefix + unit, value
    if unit and style > 0.4:
        return mtxt + prefix + unit, value
    return mtxt + prefix, value


def resistance(rng, lo=1, hi=5):
    mant, e = sig3(rng, lo, hi)
    return eng(mant, e, "ohm", rng, allow_iec=True)


def signed(rng, text, value):
    if rng.random() < 0.35:
        return "-" + text, -value
    return text, value


# ----------------------------------------------------------------------------
# network generation

class Dsu:
    def __init__(self):
        self.p = {}

    def find(self, x):
        self.p.setdefault(x, x)
        while self.p[x] != x:
            self.p[x] = self.p[self.p[x]]
            x = self.p[x]
        return x

    def union(self, a, b):
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.p[ra] = rb
        return True


class Net:
    """A generated network: a list of part dicts plus the .stack text."""

    def __init__(self, ground):
        self.ground = ground
        self.nodes = [ground]
        self.parts = []       # dicts with 'kind', 'name', ... (see stamp())
        self.lines = []
        self.vdef = Dsu()     # components joined by voltage-defined branches
        self.counter = {}

    def name(self, prefix):
        self.counter[prefix] = self.counter.get(prefix, 0) + 1
        return "%s%d" % (prefix, self.counter[prefix])

    def node(self, name):
        if name not in self.nodes:
            self.nodes.append(name)
        return name

    def add(self, part, line):
        self.parts.append(part)
        self.lines.append(line)


def pick2(rng, pool):
    a, b = rng.sample(pool, 2)
    return a, b


def generate(rng, n_target, index):
    g = rng.choice(["gnd", "gnd", "common", "zero_v"])
    net = Net(g)
    n_stages = max(1, n_target // 25) if n_target >= 6 else 1
    n_stages = min(n_stages, 8)
    n_tree = max(2, n_target - 1 - 2 * n_stages)
    tree = ["n%d" % (i + 1) for i in range(n_tree)]

    # random spanning tree of resistors rooted at ground
    placed = [g]
    for nd in tree:
        other = rng.choice(placed)
        net.node(nd)
        txt, val = resistance(rng)
        nm = net.name("r")
        a, b = (other, nd) if rng.random() < 0.5 else (nd, other)
        net.add({"kind": "resistor", "name": nm, "a": a, "b": b, "r": val},
                "resistor %s %s -> %s %s" % (nm, a, b, txt))
        placed.append(nd)

    public = [g] + tree          # nodes other parts may attach to

    # op-amp stages, each with a private feedback node fbK and an output yK
    for s in range(n_stages):
        fb = net.node(net.name("fb"))
        y = net.node(net.name("y"))
        inp = rng.choice(public)
        ideal = rng.random() < 0.5
        inverting = rng.random() < 0.5
        un = net.name("u")
        ra_txt, ra = resistance(rng, 3, 5)
        rf_txt, rf = resistance(rng, 3, 6)
        r1 = net.name("r")
        r2 = net.name("r")
        if inverting:
            plus = rng.choice([g, g] + public)
            net.add({"kind": "resistor", "name": r1, "a": inp, "b": fb, "r": ra},
                    "resistor %s %s -> %s %s" % (r1, inp, fb, ra_txt))
        else:
            plus = inp
            ref = rng.choice([g, g, g] + public)
            net.add({"kind": "resistor", "name": r1, "a": fb, "b": ref, "r": ra},
                    "resistor %s %s -> %s %s" % (r1, fb, ref, ra_txt))
        net.add({"kind": "resistor", "name": r2, "a": fb, "b": y, "r": rf},
                "resistor %s %s -> %s %s" % (r2, fb, y, rf_txt))
        if ideal:
            net.vdef.union(g, y)
            net.add({"kind": "opamp", "name": un, "plus": plus, "minus": fb,
                     "out": y, "ideal": True},
                    "opamp %s plus=%s minus=%s out=%s" % (un, plus, fb, y))
        else:
            gm_, ge = sig3(rng, 3, 6)
            gain_txt, gain = eng(gm_, ge, "", rng)
            rin_txt, rin = resistance(rng, 5, 8)
            rout_txt, rout = resistance(rng, 0, 3)
            net.add({"kind": "opamp", "name": un, "plus": plus, "minus": fb,
                     "out": y, "ideal": False, "gain": gain, "rin": rin,
                     "rout": rout},
                    "opamp %s plus=%s minus=%s out=%s gain=%s rin=%s rout=%s"
                    % (un, plus, fb, y, gain_txt, rin_txt, rout_txt))
        public.append(y)

    n = len(public)
    # extra resistors (meshes)
    for _ in range(rng.randint(n // 4, n // 2 + 1)):
        a, b = pick2(rng, public)
        txt, val = resistance(rng)
        nm = net.name("r")
        net.add({"kind": "resistor", "name": nm, "a": a, "b": b, "r": val},
                "resistor %s %s -> %s %s" % (nm, a, b, txt))

    vsrc = []   # names usable as via= (resistors and voltage sources)
    resistors = [p["name"] for p in net.parts if p["kind"] == "resistor"]

    # independent voltage sources, some with rs
    for _ in range(rng.randint(1, max(1, n // 8))):
        a, b = pick2(rng, public)
        if rng.random() < 0.5:
            a = g if b != g else a
        has_rs = rng.random() < 0.4
        if not has_rs and net.vdef.find(a) == net.vdef.find(b):
            has_rs = True
        mant, e = sig3(rng, 0, 2)
        vtxt, v = eng(mant, e, "V", rng)
        vtxt, v = signed(rng, vtxt, v)
        if "V" not in vtxt:
            vtxt += " V"
        nm = net.name("vs")
        part = {"kind": "voltage", "name": nm, "a": a, "b": b, "v": v, "rs": 0.0}
        line = "voltage %s %s -> %s %s" % (nm, a, b, vtxt)
        if has_rs:
            rtxt, r = resistance(rng, 0, 3)
            part["rs"] = r
            line += " rint=%s" % rtxt
        else:
            net.vdef.union(a, b)
        net.add(part, line)
        vsrc.append(nm)

    # independent current sources
    for _ in range(rng.randint(1, max(1, n // 8))):
        a, b = pick2(rng, public)
        mant, e = sig3(rng, -5, -2)
        itxt, i = eng(mant, e, "A", rng)
        itxt, i = signed(rng, itxt, i)
        nm = net.name("is")
        net.add({"kind": "current", "name": nm, "a": a, "b": b, "i": i},
                "current %s %s -> %s %s" % (nm, a, b, itxt))

    def ctl():
        cp, cm = pick2(rng, public)
        return cp, cm

    n_ctl = max(1, n // 20)
    # vccs
    for _ in range(rng.randint(1, n_ctl)):
        a, b = pick2(rng, public)
        cp, cm = ctl()
        mant, e = sig3(rng, -5, -2)
        gtxt, gm = eng(mant, e, "S", rng)
        gtxt, gm = signed(rng, gtxt, gm)
        nm = net.name("g")
        net.add({"kind": "vccs", "name": nm, "a": a, "b": b, "gm": gm,
                 "cp": cp, "cm": cm},
                "vccs %s %s -> %s gm=%s cplus=%s cminus=%s"
                % (nm, a, b, gtxt, cp, cm))

    # vcvs (voltage-defined)
    for _ in range(rng.randint(1, n_ctl)):
        for _try in range(20):
            a, b = pick2(rng, public)
            if net.vdef.find(a) != net.vdef.find(b):
                break
        else:
            continue
        net.vdef.union(a, b)
        cp, cm = ctl()
        mant, e = sig3(rng, -1, 1)
        ktxt, k = eng(mant, e, "", rng)
        ktxt, k = signed(rng, ktxt, k)
        nm = net.name("e")
        net.add({"kind": "vcvs", "name": nm, "a": a, "b": b, "gain": k,
                 "cp": cp, "cm": cm},
                "vcvs %s %s -> %s gain=%s cplus=%s cminus=%s"
                % (nm, a, b, ktxt, cp, cm))

    # cccs, controlled by a resistor or an independent voltage source
    for _ in range(rng.randint(1, n_ctl)):
        a, b = pick2(rng, public)
        via = rng.choice(resistors + vsrc)
        mant, e = sig3(rng, -1, 1)
        ktxt, k = eng(mant, e, "", rng)
        ktxt, k = signed(rng, ktxt, k)
        nm = net.name("f")
        net.add({"kind": "cccs", "name": nm, "a": a, "b": b, "gain": k,
                 "via": via},
                "cccs %s %s -> %s gain=%s via=%s" % (nm, a, b, ktxt, via))

    # ccvs (voltage-defined)
    for _ in range(rng.randint(1, n_ctl)):
        for _try in range(20):
            a, b = pick2(rng, public)
            if net.vdef.find(a) != net.vdef.find(b):
                break
        else:
            continue
        net.vdef.union(a, b)
        via = rng.choice(resistors + vsrc)
        mant, e = sig3(rng, 1, 4)
        mtxt, rm = eng(mant, e, "ohm", rng)
        mtxt, rm = signed(rng, mtxt, rm)
        nm = net.name("h")
        net.add({"kind": "ccvs", "name": nm, "a": a, "b": b, "rm": rm,
                 "via": via},
                "ccvs %s %s -> %s rm=%s via=%s" % (nm, a, b, mtxt, via))

    header = ["# random network %d for the numpy reference test (generated)" % index,
              'title "random network %d"' % index,
              "ground %s" % g]
    net.text = "\n".join(header + net.lines) + "\n"
    return net


# ----------------------------------------------------------------------------
# independent MNA

def solve_mna(net, refine=True, opamp_branch=True, cond_max=COND_MAX):
    """Return (nodes {name: V}, {"parts": ..., "opamps": ...}, condition number)
    for the network, or (None, None, cond) when the matrix is ill-conditioned.

    refine: iterative refinement with extended-precision residuals.
    opamp_branch: give each finite-gain op-amp's output current its own unknown
    (accurate); without it the current is computed afterwards from node voltages
    as (gain*(V+ - V-) - V(out))/rout, the way a node-only formulation would."""
    g = net.ground
    idx = {}
    for nd in net.nodes:
        if nd != g:
            idx[nd] = len(idx)
    nn = len(idx)
    branch = {}   # part name -> index of its current unknown
    for p in net.parts:
        if p["kind"] in ("voltage", "vcvs", "ccvs") or (
                p["kind"] == "opamp" and (p["ideal"] or opamp_branch)):
            branch[p["name"]] = nn + len(branch)
    size = nn + len(branch)
    A = np.zeros((size, size))
    z = np.zeros(size)
    by_name = {p["name"]: p for p in net.parts}

    def vi(nd):
        return idx.get(nd, -1)

    def add(r, c, val):
        if r >= 0 and c >= 0:
            A[r, c] += val

    def vdiff(a, b):
        """Linear form {unknown: coeff} of V(a) - V(b)."""
        f = {}
        if vi(a) >= 0:
            f[vi(a)] = f.get(vi(a), 0.0) + 1.0
        if vi(b) >= 0:
            f[vi(b)] = f.get(vi(b), 0.0) - 1.0
        return f

    def icur(name):
        """Linear form of the current through a part FROM -> TO (via=)."""
        p = by_name[name]
        if p["kind"] == "resistor":
            return {k: c / p["r"] for k, c in vdiff(p["a"], p["b"]).items()}
        return {branch[name]: 1.0}

    def leave(node, form, scale=1.0):
        """Add `scale*form` as a current leaving `node` through a part."""
        r = vi(node)
        if r < 0:
            return
        for k, c in form.items():
            A[r, k] += scale * c

    for p in net.parts:
        k = p["kind"]
        if k == "resistor":
            gval = 1.0 / p["r"]
            a, b = vi(p["a"]), vi(p["b"])
            add(a, a, gval); add(b, b, gval)
            add(a, b, -gval); add(b, a, -gval)
        elif k == "current":
            # the part carries i from a to b: it takes i out of a, puts it into b
            if vi(p["a"]) >= 0:
                z[vi(p["a"])] -= p["i"]
            if vi(p["b"]) >= 0:
                z[vi(p["b"])] += p["i"]
        elif k == "vccs":
            form = {c: p["gm"] * v for c, v in vdiff(p["cp"], p["cm"]).items()}
            leave(p["a"], form, 1.0)
            leave(p["b"], form, -1.0)
        elif k == "cccs":
            form = {c: p["gain"] * v for c, v in icur(p["via"]).items()}
            leave(p["a"], form, 1.0)
            leave(p["b"], form, -1.0)
        elif k in ("voltage", "vcvs", "ccvs"):
            j = branch[p["name"]]
            leave(p["a"], {j: 1.0}, 1.0)
            leave(p["b"], {j: 1.0}, -1.0)
            # row j: V(b) - V(a) [+ rs*I] [- control] = value
            for c, v in vdiff(p["b"], p["a"]).items():
                A[j, c] += v
            if k == "voltage":
                A[j, j] += p["rs"]
                z[j] = p["v"]
            elif k == "vcvs":
                for c, v in vdiff(p["cp"], p["cm"]).items():
                    A[j, c] -= p["gain"] * v
            else:
                for c, v in icur(p["via"]).items():
                    A[j, c] -= p["rm"] * v
        elif k == "opamp":
            if p["ideal"]:
                j = branch[p["name"]]
                # output current j flows from ground into out
                leave(p["out"], {j: 1.0}, -1.0)
                for c, v in vdiff(p["plus"], p["minus"]).items():
                    A[j, c] += v
            else:
                # rin between the inputs
                gval = 1.0 / p["rin"]
                a, b = vi(p["plus"]), vi(p["minus"])
                add(a, a, gval); add(b, b, gval)
                add(a, b, -gval); add(b, a, -gval)
            if not p["ideal"] and opamp_branch:
                # output current j from ground into out:
                # (V(out) + rout*j)/gain - (V+ - V-) = 0, divided by the gain
                # so the row is scaled like the ideal op-amp's
                j = branch[p["name"]]
                leave(p["out"], {j: 1.0}, -1.0)
                o = vi(p["out"])
                if o >= 0:
                    A[j, o] += 1.0 / p["gain"]
                A[j, j] += p["rout"] / p["gain"]
                for c, v in vdiff(p["plus"], p["minus"]).items():
                    A[j, c] -= v
            elif not p["ideal"]:
                # output current into out = (gain*(V+ - V-) - V(out)) / rout
                form = {c: p["gain"] * v / p["rout"]
                        for c, v in vdiff(p["plus"], p["minus"]).items()}
                o = vi(p["out"])
                form[o] = form.get(o, 0.0) - 1.0 / p["rout"]
                leave(p["out"], form, -1.0)
        else:
            raise ValueError(k)

    cond = np.linalg.cond(A)
    if not np.isfinite(cond) or (cond_max is not None and cond > cond_max):
        return None, None, cond
    x = np.linalg.solve(A, z)
    if refine:
        # iterative refinement with residuals in extended precision, so the
        # reference is as close to the exact solution as the data allow
        Al = A.astype(np.longdouble)
        zl = z.astype(np.longdouble)
        for _ in range(4):
            r = (zl - Al @ x.astype(np.longdouble)).astype(np.float64)
            x = x + np.linalg.solve(A, r)

    def V(nd):
        return 0.0 if nd == g else float(x[idx[nd]])

    nodes = {nd: V(nd) for nd in net.nodes}

    def I(name):
        p = by_name[name]
        if p["kind"] == "resistor":
            return (V(p["a"]) - V(p["b"])) / p["r"]
        return float(x[branch[name]])

    parts = {}
    opamps = {}
    for p in net.parts:
        k = p["kind"]
        nm = p["name"]
        if k == "opamp":
            if nm in branch:
                cur = float(x[branch[nm]])
            else:
                cur = (p["gain"] * (V(p["plus"]) - V(p["minus"])) - V(p["out"])) / p["rout"]
            opamps[nm] = {"out": V(p["out"]), "current": cur}
            continue
        if k == "resistor":
            cur = I(nm)
        elif k == "current":
            cur = p["i"]
        elif k == "vccs":
            cur = p["gm"] * (V(p["cp"]) - V(p["cm"]))
        elif k == "cccs":
            cur = p["gain"] * I(p["via"])
        else:
            cur = float(x[branch[nm]])
        drop = V(p["a"]) - V(p["b"])
        volt = drop if k == "resistor" else -drop
        parts[nm] = {"kind": k, "current": cur, "voltage": volt,
                     "power": drop * cur}
    return nodes, {"parts": parts, "opamps": opamps}, cond


def verify_reference(net, nodes, ref):
    """Check the numpy solution against the laws directly, part by part, without
    the matrix: Kirchhoff's current law at every node and each part's own
    equation. Returns a list of violations (empty when the reference is sound)."""
    V = nodes
    parts = ref["parts"]
    ops = ref["opamps"]
    by_name = {p["name"]: p for p in net.parts}
    err = []
    leaving = {nd: 0.0 for nd in net.nodes}
    sc = problem_scales(net, nodes, ref)
    vscale = sc["voltage"] or 1e-300
    iscale = sc["current"] or 1e-300

    def cur(name):
        return parts[name]["current"]

    for p in net.parts:
        k, nm = p["kind"], p["name"]
        if k == "opamp":
            o = ops[nm]
            leaving[p["out"]] -= o["current"]
            if p["ideal"]:
                lhs, rhs = V[p["plus"]], V[p["minus"]]
            else:
                irin = (V[p["plus"]] - V[p["minus"]]) / p["rin"]
                leaving[p["plus"]] += irin
                leaving[p["minus"]] -= irin
                lhs = V[p["out"]] + o["current"] * p["rout"]
                rhs = p["gain"] * (V[p["plus"]] - V[p["minus"]])
            if abs(lhs - rhs) > 1e-9 * vscale:
                err.append("opamp %s equation off by %g" % (nm, lhs - rhs))
            continue
        i = cur(nm)
        leaving[p["a"]] += i
        leaving[p["b"]] -= i
        rise = V[p["b"]] - V[p["a"]]
        if k == "resistor":
            res = (V[p["a"]] - V[p["b"]]) - p["r"] * i
            sc = vscale
        elif k == "voltage":
            res = rise - (p["v"] - p["rs"] * i)
            sc = vscale
        elif k == "current":
            res, sc = i - p["i"], iscale
        elif k == "vccs":
            res, sc = i - p["gm"] * (V[p["cp"]] - V[p["cm"]]), iscale
        elif k == "cccs":
            res, sc = i - p["gain"] * cur(p["via"]), iscale
        elif k == "vcvs":
            res, sc = rise - p["gain"] * (V[p["cp"]] - V[p["cm"]]), vscale
        elif k == "ccvs":
            res, sc = rise - p["rm"] * cur(p["via"]), vscale
        if abs(res) > 1e-9 * sc:
            err.append("part %s equation off by %g" % (nm, res))
    for nd, s in leaving.items():
        if nd != net.ground and abs(s) > 1e-9 * iscale:
            err.append("KCL at %s off by %g A" % (nd, s))
    return err


# ----------------------------------------------------------------------------
# comparison

def close(got, ref, scale):
    if got is None or not isinstance(got, (int, float)):
        return False
    return abs(got - ref) <= RTOL * abs(ref) + FLOOR * scale


def problem_scales(net, nodes, ref):
    """Largest voltage, current and power in the problem: node voltages, part
    voltages, currents and powers, op-amp outputs, and the independent sources'
    own values (so a network whose response nearly cancels still gets a floor
    on the scale of its excitation)."""
    parts = ref["parts"].values()
    ops = ref["opamps"].values()
    v = [abs(x) for x in nodes.values()] + [abs(p["voltage"]) for p in parts]
    v += [abs(o["out"]) for o in ops]
    v += [abs(p["v"]) for p in net.parts if p["kind"] == "voltage"]
    i = [abs(p["current"]) for p in parts] + [abs(o["current"]) for o in ops]
    i += [abs(p["i"]) for p in net.parts if p["kind"] == "current"]
    vs, is_ = max(v + [0.0]), max(i + [0.0])
    ps = max([abs(p["power"]) for p in parts] + [vs * is_])
    return {"voltage": vs, "current": is_, "power": ps}


def compare(net, nodes, ref, out):
    """Compare loadstack's JSON text `out` with the reference; return a list of
    mismatch descriptions (empty when everything agrees)."""
    bad = []
    try:
        data = json.loads(out)
    except ValueError as e:
        return ["output is not JSON: %s" % e]
    if not isinstance(data, dict):
        return ["output is not a JSON object"]
    jn = data.get("nodes")
    jp = data.get("parts")
    jo = data.get("opamps")
    if not isinstance(jn, dict) or not isinstance(jp, dict):
        return ["JSON lacks 'nodes' or 'parts' objects"]
    sc = problem_scales(net, nodes, ref)
    for nd, v in nodes.items():
        if nd not in jn:
            bad.append("node %s missing" % nd)
        elif not close(jn[nd], v, sc["voltage"]):
            bad.append("node %s: loadstack %r, numpy %r" % (nd, jn[nd], v))
    for nm, p in ref["parts"].items():
        q = jp.get(nm)
        if not isinstance(q, dict):
            bad.append("part %s missing" % nm)
            continue
        if q.get("kind") != p["kind"]:
            bad.append("part %s: kind %r, expected %r" % (nm, q.get("kind"), p["kind"]))
        for f in ("current", "voltage", "power"):
            if not close(q.get(f), p[f], sc[f]):
                bad.append("part %s.%s: loadstack %r, numpy %r"
                           % (nm, f, q.get(f), p[f]))
    if ref["opamps"]:
        if not isinstance(jo, dict):
            return bad + ["JSON lacks 'opamps'"]
        for nm, o in ref["opamps"].items():
            q = jo.get(nm)
            if not isinstance(q, dict):
                bad.append("opamp %s missing" % nm)
                continue
            if not close(q.get("out"), o["out"], sc["voltage"]):
                bad.append("opamp %s.out: loadstack %r, numpy %r"
                           % (nm, q.get("out"), o["out"]))
            if not close(q.get("current"), o["current"], sc["current"]):
                bad.append("opamp %s.current: loadstack %r, numpy %r"
                           % (nm, q.get("current"), o["current"]))
            if q.get("limited") != "none":
                bad.append("opamp %s.limited: %r, expected 'none'"
                           % (nm, q.get("limited")))
    return bad


def plain_json(nodes, ref):
    """The reference in loadstack's JSON shape (used to test the test)."""
    ops = {k: dict(v, limited="none") for k, v in ref["opamps"].items()}
    return json.dumps({"nodes": nodes, "parts": ref["parts"], "opamps": ops})


def too_sensitive(net, nodes, ref):
    """True when a plain float64 solve of this network already misses the
    tolerance against the refined reference (either formulation of the finite
    op-amp, with or without refinement): such a network cannot fairly hold a
    1e-9 check in double precision, so it is regenerated."""
    for refine, opamp_branch in ((False, True), (False, False), (True, False)):
        # the node-only form has large gain/rout entries; only its accuracy counts
        n2, r2, _ = solve_mna(net, refine=refine, opamp_branch=opamp_branch,
                              cond_max=None if not opamp_branch else COND_MAX)
        if n2 is None or compare(net, nodes, ref, plain_json(n2, r2)):
            return True
    return False


def sizes(count, rng):
    """Node counts from a few up to 200: a log-spaced spread, the last at 200."""
    out = []
    for i in range(count):
        t = i / max(1, count - 1)
        out.append(int(round(math.exp(math.log(3) + t * (math.log(200) - math.log(3))))))
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("--count", type=int, default=60)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--keep-failures", metavar="DIR",
                    help="copy the .stack file of every failing network here")
    ap.add_argument("--solver", choices=("auto", "dense", "sparse"),
                    help="pass --solver to loadstack (default: its own default)")
    ap.add_argument("--verbose", action="store_true",
                    help="print every mismatch, not just the first five")
    args = ap.parse_args()
    if args.count < 1:
        ap.error("--count must be at least 1")
    if not os.access(args.binary, os.X_OK):
        print("random_mna: %s is not an executable" % args.binary, file=sys.stderr)
        return 2

    rng = random.Random(args.seed)
    tmp = tempfile.mkdtemp(prefix="loadstack_ref_")
    failures = 0
    rejected = 0
    checked = 0
    totals = {"unknowns": 0, "values": 0}
    try:
        for i, n_target in enumerate(sizes(args.count, rng), 1):
            for _attempt in range(100):
                net = generate(rng, n_target, i)
                nodes, ref, cond = solve_mna(net)
                if nodes is not None and not too_sensitive(net, nodes, ref):
                    break
                rejected += 1
            else:
                print("net %3d: could not generate a well-conditioned network" % i)
                failures += 1
                continue
            own = verify_reference(net, nodes, ref)
            if own:
                print("net %3d: REFERENCE FAULT (test defect): %s" % (i, "; ".join(own[:3])))
                failures += 1
                continue
            path = os.path.join(tmp, "net%03d.stack" % i)
            with open(path, "w", encoding="utf-8") as f:
                f.write(net.text)
            kinds = {}
            for p in net.parts:
                key = p["kind"] if p["kind"] != "opamp" else (
                    "opamp" if p["ideal"] else "opamp_fin")
                kinds[key] = kinds.get(key, 0) + 1
            desc = " ".join("%s=%d" % kv for kv in sorted(kinds.items()))
            try:
                cmd = [args.binary, "solve", path, "--format", "json"]
                if args.solver:
                    cmd += ["--solver", args.solver]
                proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
            except subprocess.TimeoutExpired:
                proc = None
            if proc is None:
                bad = ["loadstack timed out"]
            elif proc.returncode != 0:
                bad = ["loadstack exited %d: %s" % (proc.returncode,
                                                      proc.stderr.strip()[:600])]
            else:
                bad = compare(net, nodes, ref, proc.stdout)
            nvals = len(nodes) + 3 * len(ref["parts"]) + 2 * len(ref["opamps"])
            checked += nvals
            status = "ok  " if not bad else "FAIL"
            print("net %3d: %s nodes=%3d parts=%3d cond=%.1e checked=%4d  %s"
                  % (i, status, len(net.nodes), len(net.parts), cond, nvals, desc))
            if bad:
                failures += 1
                for b in bad if args.verbose else bad[:5]:
                    print("         " + b)
                if len(bad) > 5 and not args.verbose:
                    print("         ... and %d more" % (len(bad) - 5))
                if args.keep_failures:
                    os.makedirs(args.keep_failures, exist_ok=True)
                    shutil.copy(path, os.path.join(args.keep_failures,
                                                   "random_net%03d_seed%d.stack"
                                                   % (i, args.seed)))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    print("random_mna: %d networks, %d failed, %d values compared, "
          "%d ill-conditioned or too sensitive candidates regenerated (seed %d)"
          % (args.count, failures, checked, rejected, args.seed))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
