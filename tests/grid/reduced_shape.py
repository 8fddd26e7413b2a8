#!/usr/bin/python3
"""Which matrices the reduced nodal form takes, and the answers either way, against numpy.

Usage: reduced_shape.py LOADSTACK_BINARY [--count 40] [--seed 11]

The reduced form (src/mna.c) accepts an MNA matrix only when it is that of
resistors, current sources and voltage sources: node block symmetric, every
branch column holding +-1 KCL entries mirrored by its row with the opposite
sign, no other coupling.  Each random network here is a resistor mesh fed by
grounded voltage sources without rs (they fix their node), sometimes sources
with rs and current sources, plus at most one part that breaks that shape
while looking like a source from its column: a vcvs or ccvs with one terminal
grounded (one KCL partner, like a grounded source; half of the vcvs have gain
+-1, so their control entries have a source's values), a vccs, a cccs, or a
finite-gain op-amp, all controlled from other nodes of the mesh.

Checked, with --solver sparse:
  * a network without such a part is solved by the reduced form
    (solver.library "cholmod-reduced"), and one with it is not;
  * every node voltage and part current equals numpy.linalg.solve of an
    independent MNA of the same network (tests/ref/random_mna.py, written from
    the sign conventions of shared/spec/language.md and refined in extended
    precision) to 1e-9 relative to the largest value of its kind.
Exit 0 when all networks pass, 1 otherwise (2 on bad usage).
"""

import json
import os
import random
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "ref"))
import random_mna as rm  # noqa: E402  (the independent numpy MNA of ref-random-mna)

SPOILERS = ("none", "vcvs", "ccvs", "vccs", "cccs", "opamp")


def num(x):
    return repr(float(x))


def make(rng, index, spoiler):
    """A network (random_mna.Net) of the kind described above."""
    net = rm.Net("gnd")
    nn = rng.randint(5, 40)
    mesh = ["m%d" % i for i in range(1, nn)]
    placed = ["gnd"]
    for nd in mesh:
        net.node(nd)
        other = rng.choice(placed)
        r = round(rng.uniform(10, 10000), 3)
        nm = net.name("r")
        net.add({"kind": "resistor", "name": nm, "a": other, "b": nd, "r": r},
                "resistor %s %s -> %s %s" % (nm, other, nd, num(r)))
        placed.append(nd)
    for _ in range(rng.randint(0, nn)):
        a, b = rng.sample(placed, 2)
        r = round(rng.uniform(1, 1e5), 3)
        nm = net.name("r")
        net.add({"kind": "resistor", "name": nm, "a": a, "b": b, "r": r},
                "resistor %s %s -> %s %s" % (nm, a, b, num(r)))
    fixed = rng.sample(mesh, min(len(mesh) - 3, rng.randint(1, 3)))
    for nd in fixed:  # grounded, no rs: each fixes its node
        v = round(rng.uniform(-12, 12), 3)
        a, b = ("gnd", nd) if rng.random() < 0.5 else (nd, "gnd")
        nm = net.name("v")
        net.add({"kind": "voltage", "name": nm, "a": a, "b": b, "v": v, "rs": 0.0},
                "voltage %s %s -> %s %s V" % (nm, a, b, num(v)))
    for _ in range(rng.randint(0, 2)):  # with rs, anywhere
        a, b = rng.sample(placed, 2)
        v, rs = round(rng.uniform(-5, 5), 3), round(rng.uniform(0.1, 50), 3)
        nm = net.name("v")
        net.add({"kind": "voltage", "name": nm, "a": a, "b": b, "v": v, "rs": rs},
                "voltage %s %s -> %s %s V rint=%s" % (nm, a, b, num(v), num(rs)))
    for _ in range(rng.randint(0, 2)):
        a, b = rng.sample(placed, 2)
        i = round(rng.uniform(-0.01, 0.01), 6)
        nm = net.name("i")
        net.add({"kind": "current", "name": nm, "a": a, "b": b, "i": i},
                "current %s %s -> %s %s A" % (nm, a, b, num(i)))
    free = [nd for nd in mesh if nd not in fixed]
    resistors = [p for p in net.parts if p["kind"] == "resistor" and "gnd" not in (p["a"], p["b"])]
    if spoiler in ("vcvs", "ccvs"):
        # a new node driven from ground: one KCL partner, as a grounded source has
        out = net.node("drv")
        r = round(rng.uniform(100, 10000), 3)
        nm = net.name("r")
        to = rng.choice(mesh)
        net.add({"kind": "resistor", "name": nm, "a": out, "b": to, "r": r},
                "resistor %s %s -> %s %s" % (nm, out, to, num(r)))
        a, b = ("gnd", out) if rng.random() < 0.5 else (out, "gnd")
        if spoiler == "vcvs":
            cp, cm = rng.sample(free, 2)
            # half of them unity followers: their control entries are then +-1,
            # the values a grounded source's branch row holds
            k = (1.0 if rng.random() < 0.5 else round(rng.uniform(0.1, 2), 3)) * rng.choice((-1, 1))
            net.add({"kind": "vcvs", "name": "e1", "a": a, "b": b, "gain": k, "cp": cp, "cm": cm},
                    "vcvs e1 %s -> %s gain=%s cplus=%s cminus=%s" % (a, b, num(k), cp, cm))
        else:
            via = rng.choice(resistors)["name"]
            rmv = round(rng.uniform(10, 1000), 3) * rng.choice((-1, 1))
            net.add({"kind": "ccvs", "name": "h1", "a": a, "b": b, "rm": rmv, "via": via},
                    "ccvs h1 %s -> %s rm=%s via=%s" % (a, b, num(rmv), via))
    elif spoiler == "vccs":
        a, b = rng.sample(placed, 2)
        cp, cm = rng.sample(free, 2)
        gm = round(rng.uniform(1e-5, 1e-3), 8) * rng.choice((-1, 1))
        net.add({"kind": "vccs", "name": "g1", "a": a, "b": b, "gm": gm, "cp": cp, "cm": cm},
                "vccs g1 %s -> %s gm=%s cplus=%s cminus=%s" % (a, b, num(gm), cp, cm))
    elif spoiler == "cccs":
        a, b = rng.sample(placed, 2)
        via = rng.choice(resistors)["name"]
        k = round(rng.uniform(0.1, 2), 3) * rng.choice((-1, 1))
        net.add({"kind": "cccs", "name": "f1", "a": a, "b": b, "gain": k, "via": via},
                "cccs f1 %s -> %s gain=%s via=%s" % (a, b, num(k), via))
    elif spoiler == "opamp":
        plus, minus = rng.sample(free, 2)
        out = net.node("amp")
        rf = round(rng.uniform(1e3, 1e5), 3)
        net.add({"kind": "resistor", "name": "rf", "a": out, "b": minus, "r": rf},
                "resistor rf %s -> %s %s" % (out, minus, num(rf)))
        gain, rin, rout = 1e5, 1e7, round(rng.uniform(1, 100), 3)
        net.add({"kind": "opamp", "name": "u1", "plus": plus, "minus": minus, "out": out, "ideal": False,
                 "gain": gain, "rin": rin, "rout": rout},
                "opamp u1 plus=%s minus=%s out=%s gain=%s rin=%s rout=%s"
                % (plus, minus, out, num(gain), num(rin), num(rout)))
    net.text = "\n".join(['title "Heater mat shape test %d"' % index, "ground gnd"] + net.lines) + "\n"
    return net


def check(exe, net, spoiler, path):
    """Mismatch descriptions for one network (empty when it passes)."""
    nodes, ref, _cond = rm.solve_mna(net, cond_max=None)
    with open(path, "w", encoding="utf-8") as f:
        f.write(net.text)
    proc = subprocess.run([exe, "solve", path, "--solver", "sparse", "--format", "json"],
                          capture_output=True, text=True, timeout=120)
    if proc.returncode != 0:
        return ["loadstack exited %d: %s" % (proc.returncode, proc.stderr.strip()[:400])]
    out = json.loads(proc.stdout)
    lib = out["solver"]["library"]
    bad = []
    if (lib == "cholmod-reduced") != (spoiler == "none"):
        bad.append("solved by %s" % lib)
    sc = rm.problem_scales(net, nodes, ref)
    for nd, v in nodes.items():
        if not rm.close(out["nodes"].get(nd), v, sc["voltage"]):
            bad.append("node %s: loadstack %r, numpy %r" % (nd, out["nodes"].get(nd), v))
    for nm, p in ref["parts"].items():
        got = out["parts"].get(nm, {}).get("current")
        if not rm.close(got, p["current"], sc["current"]):
            bad.append("part %s current: loadstack %r, numpy %r" % (nm, got, p["current"]))
    return bad


def main():
    if len(sys.argv) < 2 or not os.access(sys.argv[1], os.X_OK):
        print(__doc__)
        return 2
    exe = sys.argv[1]
    count = int(sys.argv[sys.argv.index("--count") + 1]) if "--count" in sys.argv else 40
    seed = int(sys.argv[sys.argv.index("--seed") + 1]) if "--seed" in sys.argv else 11
    rng = random.Random(seed)
    failures = 0
    with tempfile.TemporaryDirectory() as tmp:
        for c in range(count):
            spoiler = SPOILERS[c % len(SPOILERS)]
            net = make(rng, c, spoiler)
            bad = check(exe, net, spoiler, os.path.join(tmp, "s%d.stack" % c))
            print("net %3d: %s %-5s nodes=%3d parts=%3d" % (c, "ok  " if not bad else "FAIL", spoiler,
                                                          len(net.nodes), len(net.parts)))
            for b in bad[:5]:
                print("         " + b)
            failures += bool(bad)
    print("reduced_shape: %d networks, %d failed (seed %d)" % (count, failures, seed))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
