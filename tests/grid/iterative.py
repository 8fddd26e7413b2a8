#!/usr/bin/python3
"""The iterative solver (--solver iterative: hypre AMG-PCG, -Dmpi=enabled builds)
against published results, an independent numpy MNA and the direct solvers.

Usage: iterative.py LOADSTACK_BINARY [--sizes 8,16,24] [--count 12] [--seed 5]

Checks, each with its source:
 1. Cserti, "Application of the lattice Green's function for calculating the
    resistance of an infinite network of resistors", Am. J. Phys. 68, 896
    (2000): on the infinite d-dimensional hypercubic lattice of resistors R,
    adjacent nodes are R/d apart, R/3 on the cubic lattice.  An N x N x N
    lattice of one-ohm resistors (free boundary), measured between two
    adjacent nodes at its centre with a 1 A current source, must approach 1/3
    from above with the error shrinking at every step of the size sequence.
    The largest lattice is also solved by the direct path (--solver sparse):
    the two answers must agree to 1e-9 (relative).
 2. Random resistor networks fed by grounded voltage sources, sources with
    rint, current sources and at most one controlled source or op-amp
    (tests/grid/reduced_shape.py's generator), solved by numpy.linalg.solve on
    an independent MNA (tests/ref/random_mna.py): every node voltage and part
    current to 1e-9 relative to the largest of its kind.  A network whose
    resistances between nodes are not symmetric (a vccs or cccs couples two
    nodes one way) must instead be refused with exit 3 and the error that
    says so.
 3. Two cells stacked in series (a node that only sources touch) and a
    resistor loop hung from a floating source (tied to ground only through
    it): the iterative solver pins both and must agree with --solver sparse
    to 1e-9 on every number of the report.
 4. Every third network with a port added: sag, thevenin (of each side) and influence
    (transposed solves) agree with --solver sparse to 1e-9 (relative to the
    largest value of the report).
Exit 0 when every check holds, 1 otherwise.
"""

import json
import os
import random
import subprocess
import sys
import tempfile

here = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(here, "..", "ref"))
sys.path.insert(0, here)
import random_mna as rm  # noqa: E402
import reduced_shape  # noqa: E402


def run(exe, args, solver):
    return subprocess.run([exe] + args + ["--solver", solver, "--format", "json"],
                          capture_output=True, text=True, timeout=300)


def lattice(path, n):
    """N^3 one-ohm lattice; 1 A from the centre's neighbour (ground) into the centre."""
    c = n // 2

    def nm(x, y, z):
        return "g" if (x, y, z) == (c + 1, c, c) else "n%d_%d_%d" % (x, y, z)
    with open(path, "w") as f:
        f.write('title "Heater block %d^3"\nground g\ncurrent itest g -> %s 1 A\n' % (n, nm(c, c, c)))
        k = 0
        for x in range(n):
            for y in range(n):
                for z in range(n):
                    for dx, dy, dz in ((1, 0, 0), (0, 1, 0), (0, 0, 1)):
                        if x + dx < n and y + dy < n and z + dz < n:
                            f.write("resistor r%d %s -> %s 1\n" % (k, nm(x, y, z), nm(x + dx, y + dy, z + dz)))
                            k += 1
    return nm(c, c, c)


def check_lattice(exe, tmp, sizes):
    bad, prev = [], None
    for n in sizes:
        path = os.path.join(tmp, "lattice%d.stack" % n)
        node = lattice(path, n)
        p = run(exe, ["solve", path], "iterative")
        if p.returncode != 0:
            return ["lattice %d: exit %d: %s" % (n, p.returncode, p.stderr[-400:])]
        js = json.loads(p.stdout)
        r = js["nodes"][node]
        err = r - 1 / 3
        print("lattice %2d^3: R = %.9f ohm, R - R/3 = %.3e (%s, %d CG iterations)"
              % (n, r, err, js["solver"]["method"], js["solver"]["cg_iterations"]))
        if js["solver"]["method"] != "iterative-amg":
            bad.append("lattice %d solved by %s" % (n, js["solver"]["method"]))
        if not err > 0 or (prev is not None and not err < prev):
            bad.append("lattice %d: error %g does not shrink from %r" % (n, err, prev))
        prev = err
    p = run(exe, ["solve", path], "sparse")
    d = json.loads(p.stdout)["nodes"][node] if p.returncode == 0 else float("nan")
    if not abs(d - r) <= 1e-9 * abs(d):
        bad.append("lattice %d: iterative %r, direct %r" % (sizes[-1], r, d))
    return bad


STACKED = """title "Two cells in series into a logger divider"
ground gnd
voltage c1 gnd -> mid 3.6 V
voltage c2 mid -> top 3.6 V
resistor r1 top -> sense 10k
resistor r2 sense -> gnd 4.7k
port p1 sense -> adc
resistor radc adc -> gnd 100k
voltage fl sense -> island 1 V
resistor ra island -> ib 1k
resistor rb ib -> island 2k
current ib1 ib -> island 1 mA
"""


def check_stacked(exe, tmp):
    path = os.path.join(tmp, "stacked.stack")
    with open(path, "w") as f:
        f.write(STACKED)
    a, b = run(exe, ["solve", path], "iterative"), run(exe, ["solve", path], "sparse")
    if a.returncode or b.returncode:
        return ["stacked cells: exit %d / %d: %s" % (a.returncode, b.returncode, a.stderr[-300:])]
    ja, jb = json.loads(a.stdout), json.loads(b.stdout)
    for j in (ja, jb):  # the error bounds are each path's own estimates
        for p in j["parts"].values():
            p.pop("error_bound", None)
        j.pop("accuracy", None)
    print("stacked cells: %s, V(sense) %.12g" % (ja["solver"]["method"], ja["nodes"]["sense"]))
    return [] if ja["solver"]["method"] == "iterative-amg" and same_report(ja, jb) else ["stacked cells differ"]


def numbers(x, out):
    """Every number of a JSON report (for the scale and the comparison)."""
    if isinstance(x, dict):
        for k in sorted(x):
            if k not in ("meta", "solver", "why"):
                numbers(x[k], out)
    elif isinstance(x, list):
        # rows in name order: rows whose values tie (exact zeros from the
        # direct path, rounding noise from the iterative one) may sort apart
        key = lambda v: str(v.get("part", v.get("name", ""))) if isinstance(v, dict) else ""  # noqa: E731
        for v in sorted(x, key=key):
            numbers(v, out)
    elif isinstance(x, (int, float)) and not isinstance(x, bool):
        out.append(float(x))
    return out


def same_report(a, b):
    na, nb = numbers(a, []), numbers(b, [])
    if len(na) != len(nb):
        return False
    scale = max([abs(v) for v in na] + [1e-300])
    return all(abs(x - y) <= 1e-9 * scale for x, y in zip(na, nb))


def check_network(exe, tmp, rng, c, spoiler, with_port):
    net = reduced_shape.make(rng, c, spoiler)
    path = os.path.join(tmp, "net%d.stack" % c)
    with open(path, "w") as f:
        f.write(net.text)
    p = run(exe, ["solve", path], "iterative")
    if p.returncode != 0:
        if spoiler in ("vccs", "cccs") and p.returncode == 3 and "--solver iterative needs a symmetric" in p.stderr:
            return [], "refused"
        return ["exit %d: %s" % (p.returncode, p.stderr.strip()[:400])], "-"
    out = json.loads(p.stdout)
    nodes, ref, _cond = rm.solve_mna(net, cond_max=None)
    sc = rm.problem_scales(net, nodes, ref)
    bad = []
    for nd, v in nodes.items():
        if not rm.close(out["nodes"].get(nd), v, sc["voltage"]):
            bad.append("node %s: loadstack %r, numpy %r" % (nd, out["nodes"].get(nd), v))
    for nm, q in ref["parts"].items():
        got = out["parts"].get(nm, {}).get("current")
        if not rm.close(got, q["current"], sc["current"]):
            bad.append("part %s current: loadstack %r, numpy %r" % (nm, got, q["current"]))
    if not with_port:
        return bad, "ok"
    # a port from a mesh node into a load resistor, for sag, thevenin, influence
    drive = rng.choice([n for n in net.nodes if n.startswith("m")])
    with open(path, "a") as f:
        f.write("port p_out %s -> load\nresistor r_load load -> gnd 4700\n" % drive)
    for cmd in (["sag", path, "load"], ["thevenin", path, "p_out"], ["influence", path, "load"]):
        a, b = run(exe, cmd, "iterative"), run(exe, cmd, "sparse")
        if a.returncode != b.returncode:
            bad.append("%s: exit %d iterative, %d sparse: %s" % (cmd[0], a.returncode, b.returncode, a.stderr[-300:]))
        elif a.returncode == 0 and not same_report(json.loads(a.stdout), json.loads(b.stdout)):
            bad.append("%s: iterative and sparse differ" % cmd[0])
    return bad, "ok, with a port"


def main():
    if len(sys.argv) < 2 or not os.access(sys.argv[1], os.X_OK):
        print(__doc__)
        return 2
    exe = sys.argv[1]
    arg = lambda k, d: sys.argv[sys.argv.index(k) + 1] if k in sys.argv else d  # noqa: E731
    sizes = [int(s) for s in arg("--sizes", "8,16,24").split(",")]
    count, seed = int(arg("--count", "12")), int(arg("--seed", "5"))
    failures = 0
    with tempfile.TemporaryDirectory() as tmp:
        bad = check_lattice(exe, tmp, sizes) + check_stacked(exe, tmp)
        for b in bad:
            print("  FAIL " + b)
        failures += bool(bad)
        rng = random.Random(seed)
        for c in range(count):
            spoiler = reduced_shape.SPOILERS[c % len(reduced_shape.SPOILERS)]
            bad, how = check_network(exe, tmp, rng, c, spoiler, c % 3 == 0)
            print("net %2d: %-4s %-5s %s" % (c, "FAIL" if bad else "ok", spoiler, how))
            for b in bad[:5]:
                print("         " + b)
            failures += bool(bad)
    print("iterative: %d failed" % failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
