#!/usr/bin/python3
"""Property tests over random circuits, through `loadstack solve --format json`.

Usage: props.py LOADSTACK {kcl|linearity|superposition} [COUNT]

Every circuit is generated from a fixed seed (so a failure can be rerun) and
only from parts whose terminals the generator knows, so the checks use the
report's numbers alone and never the program's own idea of the topology:

kcl            Kirchhoff's current law at every node: the currents the report
               gives for the parts at a node sum to zero, to 1e-9 of the largest
               branch current (issue 7; the law as in any circuits textbook).
               Tellegen's theorem on the same solution: the absorbed powers sum
               to zero (to 1e-9 of the sum of their magnitudes), and each reported
               power equals (V(FROM) - V(TO)) * current from the reported node
               voltages (the definition in shared/spec/language.md).
linearity      A network of resistors, current sources and dimensionless
               controlled sources (cccs, vcvs, ideal op-amps): scaling every
               resistance by k scales every node voltage by k (the circuit
               equations are homogeneous of degree one in the resistances when
               only current sources drive it; linearity, textbook).
superposition  Two independent sources A and B in a linear network: the node
               voltages and part currents with both on equal the sum of those
               with only A on and only B on (the other set to zero: a voltage
               source shorted, a current source opened), to 1e-9 relative.
"""
import json
import math
import os
import random
import subprocess
import sys
import tempfile

SEED = 7007
REL = 1e-9


class Circuit:
    """A random circuit: its text and, for each part, its current terminals."""

    def __init__(self, rng):
        self.rng = rng
        self.lines = ["ground gnd"]
        self.terms = {}        # part name -> (FROM node, TO node) its reported current flows between
        self.nodes = ["gnd"]
        self.count = 0
        self.vdef_root = {"gnd": "gnd"}   # union-find over voltage-defined branches

    def name(self, prefix):
        self.count += 1
        return "%s%d" % (prefix, self.count)

    def node(self):
        n = self.name("n")
        self.nodes.append(n)
        return n

    def pick(self, k=1, ground=True):
        pool = self.nodes if ground else self.nodes[1:]
        return self.rng.sample(pool, k) if k > 1 else self.rng.choice(pool)

    def resistance(self):
        return 10 ** self.rng.uniform(1, 5)

    def resistor(self, a, b, r=None, scale=""):
        p = self.name("r")
        self.lines.append("resistor %s %s -> %s %.12g%s" % (p, a, b, r or self.resistance(), scale))
        self.terms[p] = (a, b)
        return p

    def find(self, n):
        while self.vdef_root.setdefault(n, n) != n:
            n = self.vdef_root[n]
        return n

    def vdef_ok(self, a, b):
        """Join a and b by a voltage-defined branch unless that closes a loop."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.vdef_root[ra] = rb
        return True

    def text(self):
        return "\n".join(self.lines) + "\n"


def resistive_net(c, n_nodes, extra, scale=""):
    """A connected resistor network over n_nodes new nodes and ground."""
    for _ in range(n_nodes):
        prev = c.pick()
        n = c.node()
        c.resistor(prev, n, scale=scale) if c.rng.random() < 0.5 else c.resistor(n, prev, scale=scale)
    for _ in range(extra):
        a, b = c.pick(2)
        c.resistor(a, b, scale=scale)


def add_current(c, value=None, name=None):
    a, b = c.pick(2)
    p = name or c.name("i")
    c.lines.append("current %s %s -> %s %s" % (p, a, b, value or "%.12g A" % (c.rng.choice([-1, 1]) * 10 ** c.rng.uniform(-6, -2))))
    c.terms[p] = (a, b)
    return p


def add_voltage(c, value=None, name=None):
    a, b = c.pick(2)
    p = name or c.name("v")
    if c.vdef_ok(a, b) and c.rng.random() < 0.5:
        rs = ""
    else:
        rs = " rint=%.6g" % c.resistance()
    c.lines.append("voltage %s %s -> %s %s%s" % (p, a, b, value or "%.6g V" % c.rng.uniform(-15, 15), rs))
    c.terms[p] = (a, b)
    return p


def add_vcvs(c, scale=""):
    x = c.node()
    cp, cm = c.pick(2)
    p = c.name("e")
    c.vdef_ok("gnd", x)
    c.lines.append("vcvs %s gnd -> %s gain=%.6g cplus=%s cminus=%s" % (p, x, c.rng.uniform(-5, 5), cp, cm))
    c.terms[p] = ("gnd", x)
    c.resistor(x, c.pick(), scale=scale)


def add_vccs(c):
    a, b = c.pick(2)
    cp, cm = c.pick(2)
    p = c.name("g")
    c.lines.append("vccs %s %s -> %s gm=%.6g cplus=%s cminus=%s" % (p, a, b, 10 ** c.rng.uniform(-7, -5), cp, cm))
    c.terms[p] = (a, b)


def add_cccs(c):
    via = c.rng.choice([p for p in c.terms if p.startswith("r")])
    a, b = c.pick(2)
    p = c.name("f")
    c.lines.append("cccs %s %s -> %s gain=%.6g via=%s" % (p, a, b, c.rng.uniform(-2, 2), via))
    c.terms[p] = (a, b)


def add_noninverting(c, scale=""):
    """An ideal op-amp with gain 1 + rf/rg from an existing node, loaded."""
    plus = c.pick(ground=False)
    fb, out = c.node(), c.node()
    p = c.name("u")
    c.vdef_ok("gnd", out)
    c.lines.append("opamp %s plus=%s minus=%s out=%s" % (p, plus, fb, out))
    c.terms[p] = ("gnd", out)   # its current flows from the supply (ground) into out
    c.resistor(out, fb, scale=scale)
    c.resistor(fb, "gnd", scale=scale)
    c.resistor(out, c.pick(), scale=scale)


def add_divider_block(c):
    """A block used once, so that hierarchical names are in the report."""
    top = c.pick(ground=False)
    c.lines += ["block divider top mid bottom rt=10k rb=10k",
                "  resistor up top -> mid rt", "  resistor lo mid -> bottom rb", "end",
                "use divider d1 top=%s mid=dmid bottom=gnd rb=4k7" % top]
    c.nodes.append("dmid")
    c.terms["d1.up"] = (top, "dmid")
    c.terms["d1.lo"] = ("dmid", "gnd")


def solve(exe, text, sets=()):
    with tempfile.NamedTemporaryFile("w", suffix=".stack", delete=False) as f:
        f.write(text)
        path = f.name
    try:
        args = [exe, "solve", path, "--format", "json"]
        for s in sets:
            args += ["--set", s]
        p = subprocess.run(args, capture_output=True, text=True, timeout=60)
    finally:
        os.unlink(path)
    if p.returncode != 0:
        return None, p.returncode, p.stderr
    return json.loads(p.stdout), 0, p.stderr


# ---- the properties -----------------------------------------------------------------

def check_kcl(rep, c):
    v, parts = rep["nodes"], rep["parts"]
    imax = max(abs(parts[p]["current"]) for p in c.terms)
    net = {n: 0.0 for n in v}
    for p, (a, b) in c.terms.items():
        i = parts[p]["current"]
        net[a] += i      # leaves FROM into the part
        net[b] -= i      # enters TO from the part
    for n, s in net.items():
        if abs(s) > REL * imax:
            return "KCL at node %s: net current %.3g A, largest branch %.3g A" % (n, s, imax)
    total, scale = 0.0, 0.0
    for p, (a, b) in c.terms.items():
        i, pw = parts[p]["current"], parts[p]["power"]
        mine = (v[a] - v[b]) * i
        if abs(pw - mine) > 1e-12 * (abs(v[a]) + abs(v[b])) * abs(i):   # a few roundings apart at most
            return "power of %s is %.17g W, (V(%s) - V(%s)) * I gives %.17g W" % (p, pw, a, b, mine)
        total += pw
        scale += abs(pw)
    if abs(total) > REL * scale:
        return "Tellegen: absorbed powers sum to %.3g W (sum of magnitudes %.3g W)" % (total, scale)
    return None


def close(a, b, ref):
    return abs(a - b) <= REL * ref


def run_kcl(exe, rng, count):
    bad, solved = 0, 0
    for k in range(count):
        c = Circuit(rng)
        resistive_net(c, rng.randint(2, 30), rng.randint(0, 20))
        for _ in range(rng.randint(1, 4)):
            add_voltage(c)
        for _ in range(rng.randint(0, 4)):
            add_current(c)
        for _ in range(rng.randint(0, 2)):
            add_vcvs(c)
        for _ in range(rng.randint(0, 2)):
            add_vccs(c)
        for _ in range(rng.randint(0, 2)):
            add_cccs(c)
        for _ in range(rng.randint(0, 2)):
            add_noninverting(c)
        if rng.random() < 0.3:
            add_divider_block(c)
        rep, code, err = solve(exe, c.text())
        if rep is None:
            print("circuit %d: exit %d (%s)" % (k, code, err.strip()[:200]))
            bad += code != 3   # a singular draw is possible with controlled sources; anything else is a failure
            continue
        solved += 1
        why = check_kcl(rep, c)
        if why:
            bad += 1
            print("FAIL circuit %d: %s\n%s" % (k, why, c.text()))
    return bad, solved


def run_linearity(exe, rng, count):
    bad, solved = 0, 0
    for k in range(count):
        c = Circuit(rng)
        c.lines.append("let kscale = 1")
        scale = " * kscale"
        resistive_net(c, rng.randint(2, 25), rng.randint(0, 15), scale=scale)
        for _ in range(rng.randint(1, 4)):
            add_current(c)
        for _ in range(rng.randint(0, 2)):
            add_vcvs(c, scale=scale)
        for _ in range(rng.randint(0, 2)):
            add_cccs(c)
        for _ in range(rng.randint(0, 1)):
            add_noninverting(c, scale=scale)
        kf = rng.choice([0.01, 0.5, 3.7, 1000.0])
        r1, c1, e1 = solve(exe, c.text())
        rk, ck, ek = solve(exe, c.text(), ["kscale=%r" % kf])
        if r1 is None or rk is None:
            print("circuit %d: exit %d/%d (%s)" % (k, c1, ck, (e1 + ek).strip()[:200]))
            bad += 1
            continue
        solved += 1
        vmax = max(abs(x) for x in r1["nodes"].values())
        for n, v in r1["nodes"].items():
            if not close(rk["nodes"][n], kf * v, kf * vmax):
                bad += 1
                print("FAIL circuit %d: V(%s) = %.17g with R*%g, expected %g * %.17g" % (k, n, rk["nodes"][n], kf, kf, v))
                break
        imax = max(abs(p["current"]) for p in r1["parts"].values())
        for p in c.terms:   # currents do not change (each is set by current sources and gains)
            if not close(rk["parts"][p]["current"], r1["parts"][p]["current"], imax):
                bad += 1
                print("FAIL circuit %d: I(%s) changed with the scale" % (k, p))
                break
    return bad, solved


def run_superposition(exe, rng, count):
    bad, solved = 0, 0
    for k in range(count):
        c = Circuit(rng)
        c.lines += ["let sa = 1", "let sb = 1"]
        resistive_net(c, rng.randint(2, 25), rng.randint(0, 15))
        kinds = [rng.choice(["voltage", "current"]) for _ in range(2)]
        for kind, s in zip(kinds, ["sa", "sb"]):
            if kind == "voltage":
                add_voltage(c, value="%.6g V * %s" % (rng.uniform(-12, 12), s), name="src_" + s)
            else:
                add_current(c, value="%.6g mA * %s" % (rng.uniform(-5, 5), s), name="src_" + s)
        for _ in range(rng.randint(0, 2)):
            add_vcvs(c)
        for _ in range(rng.randint(0, 2)):
            add_vccs(c)
        for _ in range(rng.randint(0, 2)):
            add_cccs(c)
        for _ in range(rng.randint(0, 1)):
            add_noninverting(c)
        both, cb, eb = solve(exe, c.text())
        only_a, ca, ea = solve(exe, c.text(), ["sb=0"])
        only_b, cc, ec = solve(exe, c.text(), ["sa=0"])
        if both is None or only_a is None or only_b is None:
            print("circuit %d: exit %d/%d/%d (%s)" % (k, cb, ca, cc, (eb + ea + ec).strip()[:200]))
            bad += (cb, ca, cc) != (3, 3, 3)
            continue
        solved += 1
        vmax = max(abs(x) for x in both["nodes"].values()) + max(abs(x) for x in only_a["nodes"].values())
        for n, v in both["nodes"].items():
            s = only_a["nodes"][n] + only_b["nodes"][n]
            if not close(v, s, vmax):
                bad += 1
                print("FAIL circuit %d: V(%s) = %.17g, A alone + B alone = %.17g\n%s" % (k, n, v, s, c.text()))
                break
        imax = max(abs(p["current"]) for p in both["parts"].values()) + \
            max(abs(p["current"]) for p in only_a["parts"].values())
        for p in c.terms:
            s = only_a["parts"][p]["current"] + only_b["parts"][p]["current"]
            if not close(both["parts"][p]["current"], s, imax):
                bad += 1
                print("FAIL circuit %d: I(%s) = %.17g, A alone + B alone = %.17g" % (k, p, both["parts"][p]["current"], s))
                break
    return bad, solved


def main():
    exe, which = os.path.abspath(sys.argv[1]), sys.argv[2]
    count = int(sys.argv[3]) if len(sys.argv) > 3 else 60
    rng = random.Random(SEED + ["kcl", "linearity", "superposition"].index(which))
    run = {"kcl": run_kcl, "linearity": run_linearity, "superposition": run_superposition}[which]
    bad, solved = run(exe, rng, count)
    print("%s: %d circuits, %d solved and checked, %d failed (seed %d)" % (which, count, solved, bad, SEED))
    if solved < count * 0.9:
        print("too few circuits solved for the property to mean much")
        return 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
