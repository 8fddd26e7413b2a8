#!/usr/bin/python3
"""The what-if rows of `sag` from the selected inverse give the general path's answers.

Usage: sag_fast.py LOADSTACK_BINARY [--random 40] [--seed 19]

Each what-if row is NODE's voltage with one part removed.  The general path
builds the modified system of every row (a low-rank update refined against
the whole modified matrix); in a linear circuit, from 2000 unknowns on, a row
whose removal leaves no node floating comes instead from NODE's row of A^-1
(one transposed solve for all rows) and the entries of A^-1 among the
removed part's own unknowns (src/solve/selinv.c), by the Woodbury identity
(src/analysis/lowrank.c, sag_row_fast).  LOADSTACK_SELINV_MIN_N moves the
line: -1 forces the general path, 0 the selected inverse from any size.

Both paths compute the same exact number, so the reference is the general
path itself (checked against closed forms and numpy by tests/loading).  For
every circuit in circuits/ and docs/examples/ (NODE: each one's first node
after ground), for random networks (tests/ref/random_mna.py) and for a grid,
`sag FILE NODE --what-if --format json` must agree row by row, the rows
from the selected inverse on the factor's pattern (Takahashi's recurrences,
the default; LOADSTACK_SELINV_PATTERN=0 turns it off) against the general
path and against the same rows with each entry by two triangular solves
(and, for random networks, at a node some removal cuts off from ground too:
every removal that leaves NODE without a DC path, by networkx's connectivity,
on an island no controlled source touches, gives a row without a number): `without` to
1e-12 of the circuit's largest node voltage, `delta` (a difference of two
voltages) the same, and every flag and word equal.  Where a random
network's two rows differ by more, the reference solver of tests/ref/random_mna.py
(numpy, refined in extended precision) on the network without that part
decides: the fast row must be within 1e-12 of it, or within 100 eps times
the modified matrix's condition number (numpy.linalg.cond) where that is
larger (the general path's refinement against an ill-conditioned modified
matrix can be the one off; the base system's rcond does not show it).  Where the system is
ill-conditioned (solver.rcond below 1e-6) the tolerance is 100 eps / rcond,
the forward-error bound of a backward-stable solve (Higham, Accuracy and
Stability of Numerical Algorithms, 2nd ed., sec. 7.1).  The order of rows
whose |delta| ties to rounding may differ: rows are matched by name.  The
grid's two reports must differ somewhere in the last digits, or the fast
path did not run and the test has lost its power.
"""

import argparse
import copy
import glob
import json
import os
import random
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))
sys.path.insert(0, os.path.join(ROOT, "tests", "ref"))
import random_mna  # noqa: E402
import networkx  # noqa: E402

# the DC paths each part kind of the random networks makes (a current source,
# a vccs and a cccs make none; an op-amp's output is driven from ground, and
# its input resistance joins its inputs)
def dc_edges(part):
    kind = part["kind"]
    if kind in ("resistor", "voltage", "vcvs", "ccvs"):
        return [(part["a"], part["b"])]
    if kind == "opamp":
        return [(None, part["out"])] + ([(part["plus"], part["minus"])] if part.get("rin", 0) > 0 else [])
    return []


def dc_graph(net, without=None):
    """The DC graph of net's parts less `without` (networkx multigraph)."""
    g = networkx.MultiGraph()
    g.add_node(net.ground)
    for other in net.parts:
        if other is not without:
            for a, b in dc_edges(other):
                g.add_edge(net.ground if a is None else a, net.ground if b is None else b)
    return g


def cut_off(net, part, node):
    g = dc_graph(net, part)
    return not (node in g and networkx.has_path(g, node, net.ground))


def floatable_node(net):
    """A node that some single removal cuts off from ground, or None."""
    for node in dc_graph(net).nodes:
        if node != net.ground and any(cut_off(net, part, node) for part in net.parts):
            return node
    return None


PINS = ("a", "b", "cplus", "cminus", "plus", "minus", "out")
SENSED = ("vcvs", "vccs", "cccs", "ccvs", "opamp")


def floating_rows(net, node, rows, bad, label):
    """Every part whose removal leaves NODE without a DC path to ground
    (networkx connectivity of the DC graph less that part), on an island
    that no controlled source or op-amp touches (one could still set its
    voltage through its equations: then the program solves it), must give a
    row with no number; returns how many such rows there were."""
    found = 0
    for part in net.parts:
        if not cut_off(net, part, node):
            continue
        g = dc_graph(net, part)
        island = networkx.node_connected_component(g, node) if node in g else {node}
        if any(q["kind"] in SENSED and island & {v for k, v in q.items() if k in PINS}
               for q in net.parts if q is not part):
            continue
        found += 1
        row = rows.get(part["name"])
        if row is None or row.get("without") is not None:
            bad.append("%s: removing %s floats %s (networkx), but the row says %r" % (label, part["name"], node, row))
    return found

REL = 1e-12


# the three ways to a what-if row: the general path; the selected inverse's
# entries by two triangular solves each; the same entries read from the
# selected inverse on the factor's pattern (one backward pass, the default)
GENERAL = {"LOADSTACK_SELINV_MIN_N": "-1"}
SOLVES = {"LOADSTACK_SELINV_MIN_N": "0", "LOADSTACK_SELINV_PATTERN": "0"}
PATTERN = {"LOADSTACK_SELINV_MIN_N": "0", "LOADSTACK_SELINV_PATTERN": "1"}


def run(binary, args, how):
    env = dict(os.environ, **how)
    p = subprocess.run([binary] + args + ["--format", "json", "--quiet"], env=env,
                       capture_output=True, text=True, timeout=120)
    try:
        return p.returncode, p.stdout, json.loads(p.stdout) if p.stdout.strip() else None
    except json.JSONDecodeError:
        return p.returncode, p.stdout, None


def first_node(binary, path):
    """The first node after ground in the solve report, its rcond and largest |V|; None when unsolvable."""
    rc, _, j = run(binary, ["solve", path], GENERAL)
    if j is None or rc > 1:
        return None
    nodes = [(k, v) for k, v in j.get("nodes", {}).items() if isinstance(v, (int, float)) and v != 0]
    if not nodes:
        return None
    vmax = max(abs(v) for _, v in nodes)
    return nodes[0][0], (j.get("solver") or {}).get("rcond") or 0, vmax


def numpy_without(net, part, node):
    """NODE's voltage with `part` removed, from the reference solver of
    tests/ref/random_mna.py (numpy, refined with extended-precision
    residuals; None when it declines, ill-conditioned), and the modified
    matrix's condition number (numpy.linalg.cond)."""
    cut = copy.deepcopy(net)
    cut.parts = [q for q in net.parts if q.get("name") != part]
    try:
        nodes, _, cond = random_mna.solve_mna(cut)
    except KeyError:    # the part is another's via=: the reference cannot remove it
        return None, 0
    return (None, cond) if nodes is None else (nodes.get(node), cond)


def compare(label, binary, path, bad, counts, net=None, node=None):
    """The pattern's rows against the general path's and against the two
    solves' entries, at NODE (default: the first node); True when the first
    pair's reports differ in text."""
    found = first_node(binary, path)
    if found is None:
        return None
    if node is not None:
        found = (node,) + found[1:]
    differs = compare_pair(label, binary, path, found, GENERAL, bad, counts, net)
    if differs is not None:
        compare_pair(label + " (entries by solves)", binary, path, found, SOLVES, bad, counts, net)
    return differs


def compare_pair(label, binary, path, found, how, bad, counts, net):
    node, rcond, vmax = found
    (rs, ts, slow), (rf, tf, fast) = run(binary, ["sag", path, node, "--what-if"], how), \
        run(binary, ["sag", path, node, "--what-if"], PATTERN)
    if rs != rf:
        bad.append("%s: exit %d against %d" % (label, rs, rf))
        return None
    if slow is None or fast is None:
        return None
    rel = REL if rcond >= 1e-6 else max(REL, 100 * 2.2e-16 / max(rcond, 1e-300))
    counts["loose" if rel > REL else "strict"] += 1
    a = {r["name"]: r for r in slow.get("what_if", [])}
    b = {r["name"]: r for r in fast.get("what_if", [])}
    if net is not None and how is GENERAL:
        counts["floating"] += floating_rows(net, node, b, bad, label)
    if a.keys() != b.keys():
        bad.append("%s: different rows" % label)
        return None
    for name, x in a.items():
        y = b[name]
        counts["rows"] += 1
        for key in x:
            u, v = x[key], y.get(key)
            if isinstance(u, float) or isinstance(v, float):
                if u is None or v is None or abs(u - v) > rel * max(abs(u), abs(v), vmax):
                    # The general path's refinement works on the modified
                    # matrix, whose condition can be far worse than the
                    # base system's rcond says: then the numpy reference
                    # decides, and the fast row must match it.
                    ref, cond = numpy_without(net, name, node) if net is not None and \
                        key in ("without", "delta") and u is not None and v is not None else (None, 0)
                    if ref is not None and key == "delta":
                        ref -= slow.get("voltage", 0)
                    tol = max(REL, 100 * 2.2e-16 * cond)   # the forward-error bound of the modified system
                    if ref is not None and abs(v - ref) <= tol * max(abs(ref), vmax):
                        counts["by_numpy"] += 1
                        continue
                    bad.append("%s: %s %s: %r against %r" % (label, name, key, u, v))
            elif u != v:
                bad.append("%s: %s %s: %r against %r" % (label, name, key, u, v))
    return ts != tf


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("--random", type=int, default=40)
    ap.add_argument("--seed", type=int, default=19)
    args = ap.parse_args()
    files = sorted(glob.glob(os.path.join(ROOT, "circuits", "**", "*.stack"), recursive=True) +
                   glob.glob(os.path.join(ROOT, "docs", "examples", "**", "*.stack"), recursive=True))
    bad, counts = [], {"strict": 0, "loose": 0, "rows": 0, "by_numpy": 0, "floating": 0}
    circuits = 0
    for path in files:
        if compare(os.path.relpath(path, ROOT), args.binary, path, bad, counts) is not None:
            circuits += 1
    rng = random.Random(args.seed)
    made = 0
    with tempfile.TemporaryDirectory(prefix="loadstack_sagfast_") as tmp:
        for i in range(1, 20 * args.random):
            if made >= args.random:
                break
            net = random_mna.generate(rng, rng.randint(4, 30), i)
            path = os.path.join(tmp, "net%03d.stack" % i)
            with open(path, "w", encoding="utf-8") as f:
                f.write(net.text)
            if compare("random net %d" % i, args.binary, path, bad, counts, net) is not None:
                made += 1
                leaf = floatable_node(net)   # a node some removal cuts off: the floating rows
                if leaf is not None:
                    compare("random net %d at %s" % (i, leaf), args.binary, path, bad, counts, net, node=leaf)
        ran = True
        for side in (9, 24):   # 24: past the selected inverse's default size
            grid = os.path.join(tmp, "grid%d.stack" % side)
            subprocess.run([sys.executable, os.path.join(ROOT, "tests", "bench", "gen.py"), "grid", str(side),
                            "--out", grid], check=True)
            ran = compare("grid %d x %d" % (side, side), args.binary, grid, bad, counts,
                          node="n%d_%d" % (side // 2, side // 2)) and ran
    print("%d circuits, %d random networks and two grids, %d what-if rows compared; %d reports to 1e-12, "
          "%d ill-conditioned ones to 100 eps / rcond; %d fields where the paths differ settled by numpy" %
          (circuits, made, counts["rows"], counts["strict"], counts["loose"], counts["by_numpy"]))
    for b in bad[:20]:
        print("  " + b)
    if not ran:
        print("the grid's two reports are identical: the selected-inverse rows did not run")
        return 1
    print("%d rows of random networks whose removal floats NODE (networkx), each without a number" %
          counts["floating"])
    if made < args.random // 2 or counts["rows"] < 500 or counts["floating"] < 10:
        print("too few comparisons: the test lost its power")
        return 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
