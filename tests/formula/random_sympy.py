"""`loadstack formula` against sympy on random small networks.

Each network (3 to 8 nodes: resistors, voltage sources with and without an
internal resistance, current sources, op-amps with a finite gain, some with an
output or input resistance, sometimes a port into a load of its own) is written
as a circuit file; loadstack gives a
quantity as a formula of some of the parts' values.  The same nodal equations,
written here independently from Kirchhoff's current law and each part's
branch equation, are solved by sympy (Debian's python3-sympy) with the same
symbols; the difference of the two rational functions must cancel to zero.

usage: random_sympy.py LOADSTACK [--count N] [--seed S]"""
import argparse
import json
import os
import random
import subprocess
import sys
import tempfile

import sympy as sp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import lsexpr  # noqa: E402


def network(rng):
    """A random solvable network: (parts, nodes).  A part is a dict with kind,
    name, pins and value text."""
    nn = rng.randint(3, 8)                      # nodes, ground included
    nodes = ["gnd"] + ["n%d" % i for i in range(1, nn)]
    parts = []
    fixed = set()                               # nodes a voltage-defined branch sets against ground

    def val(lo, hi):
        # an exact decimal: a standard mantissa times a power of ten
        m = rng.choice(["1", "1.5", "2.2", "3.3", "4.7", "6.8", "8.2"])
        return m + "e" + str(rng.randint(lo, hi))

    # a spanning tree of resistors keeps every node on a DC path to ground
    for i in range(1, nn):
        j = rng.randrange(0, i)
        parts.append(dict(kind="resistor", pins=(nodes[j], nodes[i]), value=val(2, 4)))
    for _ in range(rng.randint(0, nn)):
        a, b = rng.sample(nodes, 2)
        parts.append(dict(kind="resistor", pins=(a, b), value=val(2, 4)))
    free = [n for n in nodes[1:]]
    rng.shuffle(free)
    # one or two voltage sources from ground, on nodes of their own unless they have rint
    for _ in range(rng.randint(1, 2)):
        node = free.pop() if free else None
        if node is None:
            break
        rint = rng.random() < 0.3
        parts.append(dict(kind="voltage", pins=("gnd", node), value=val(0, 1) + " V",
                          opts=" rint=%s" % val(0, 2) if rint else ""))
        if not rint:
            fixed.add(node)
    if rng.random() < 0.5:
        a, b = rng.sample(nodes, 2)
        parts.append(dict(kind="current", pins=(a, b), value=val(-4, -3)))
    # op-amps with a finite gain, outputs on nodes no source sets
    for _ in range(rng.randint(0, 2)):
        outs = [n for n in free]
        if not outs:
            break
        out = outs[0]
        free.remove(out)
        fixed.add(out)
        plus, minus = rng.sample(nodes, 2)
        extra = ""
        if rng.random() < 0.3:
            extra += " rout=%s" % val(1, 2)
        if rng.random() < 0.3:
            extra += " rin=%s" % val(5, 6)
        parts.append(dict(kind="opamp", pins=(plus, minus, out), value=val(3, 5), opts=extra))
    if rng.random() < 0.4:
        # a port from a node into a load of its own (a resistor to ground)
        drv = rng.choice(nodes[1:])
        nodes.append("ld")
        parts.append(dict(kind="port", pins=(drv, "ld"), value=""))
        parts.append(dict(kind="resistor", pins=("ld", "gnd"), value=val(3, 5)))
    for k, p in enumerate(parts):
        p["name"] = {"resistor": "r", "voltage": "v", "current": "i", "opamp": "u", "port": "p"}[p["kind"]] + str(k)
        p.setdefault("opts", "")
    return parts, nodes


def circuit_text(parts):
    lines = ["ground gnd"]
    for p in parts:
        if p["kind"] == "port":
            lines.append("port %s %s -> %s" % ((p["name"],) + p["pins"]))
        elif p["kind"] == "opamp":
            lines.append("opamp %s plus=%s minus=%s out=%s gain=%s%s" % ((p["name"],) + p["pins"] + (p["value"], p["opts"])))
        else:
            lines.append("%s %s %s -> %s %s%s" % (p["kind"], p["name"], p["pins"][0], p["pins"][1], p["value"], p["opts"]))
    return "\n".join(lines) + "\n"


def num(text):
    return sp.Rational(text.split()[0])


def opt(p, name):
    for w in p["opts"].split():
        if w.startswith(name + "="):
            return sp.Rational(w.split("=")[1])
    return sp.Integer(0)


def reference(parts, nodes, symbols, quantity):
    """The quantity as a rational function, from sympy's solutions of the nodal equations."""
    kind, what = quantity
    if kind == "port":
        port, field = what
        drv, ld = next(p["pins"] for p in parts if p["name"] == port)
        loaded = solve_nodes(parts, nodes, symbols, ("node", drv))
        opened = solve_nodes(parts, nodes, symbols, ("node", drv), opened=port)
        if field == "loaded":
            return loaded
        if field == "open":
            return opened
        if field == "sag":
            return sp.cancel(sp.together(opened - loaded))
        node = drv if field == "zout" else ld
        return solve_nodes(parts, nodes, symbols, ("node", node), opened=port, inject=node)
    return solve_nodes(parts, nodes, symbols, quantity)


def solve_nodes(parts, nodes, symbols, quantity, opened=None, inject=None):
    """Solve the nodal equations with sympy, the port `opened` left out; with
    `inject`, independent sources zeroed and 1 A driven into that node (the
    driving-point resistance there)."""
    v = {n: (sp.Integer(0) if n == "gnd" else sp.Symbol("V_" + n)) for n in nodes}
    value = {p["name"]: (sp.Symbol(p["name"]) if p["name"] in symbols else num(p["value"]))
             for p in parts if p["kind"] != "port"}
    leaving = {n: sp.Integer(0) for n in nodes}          # current leaving each node into the parts
    eqs, unknowns = [], [v[n] for n in nodes[1:]]
    current = {}
    if inject:
        leaving[inject] -= 1
    for p in parts:
        a = p["pins"][0]
        src = sp.Integer(0) if inject else value.get(p["name"], 0)
        if p["kind"] == "port":
            if p["name"] != opened:                  # a zero-volt branch, current from a to b
                b = p["pins"][1]
                i = sp.Symbol("I_" + p["name"])
                unknowns.append(i)
                leaving[a] += i
                leaving[b] -= i
                eqs.append(sp.Eq(v[b] - v[a], 0))
        elif p["kind"] == "resistor":
            b = p["pins"][1]
            i = (v[a] - v[b]) / value[p["name"]]
            leaving[a] += i
            leaving[b] -= i
            current[p["name"]] = i
        elif p["kind"] == "current":
            b = p["pins"][1]
            leaving[a] += src
            leaving[b] -= src
        elif p["kind"] == "voltage":
            b = p["pins"][1]
            i = sp.Symbol("I_" + p["name"])          # through the source, from a to b
            unknowns.append(i)
            leaving[a] += i
            leaving[b] -= i
            eqs.append(sp.Eq(v[b] - v[a], src - opt(p, "rint") * i))
        else:                                        # op-amp: V(out) = A (V+ - V-) - rout * I(out)
            plus, minus, out = p["pins"]
            i = sp.Symbol("I_" + p["name"])          # delivered into out
            unknowns.append(i)
            leaving[out] -= i
            eqs.append(sp.Eq(v[out], value[p["name"]] * (v[plus] - v[minus]) - opt(p, "rout") * i))
            rin = opt(p, "rin")
            if rin != 0:
                ii = (v[plus] - v[minus]) / rin
                leaving[plus] += ii
                leaving[minus] -= ii
    eqs += [sp.Eq(leaving[n], 0) for n in nodes[1:]]
    A, b = sp.linear_eq_to_matrix(eqs, unknowns)
    # exact elimination over the field of rational functions of the symbols
    from sympy.polys.matrices import DomainMatrix
    syms = sorted((s for s in A.free_symbols | b.free_symbols), key=str)
    dom = sp.QQ.frac_field(*syms) if syms else sp.QQ
    Ad = DomainMatrix.from_list_sympy(A.rows, A.cols, A.tolist()).convert_to(dom)
    bd = DomainMatrix.from_list_sympy(b.rows, 1, b.tolist()).convert_to(dom)
    xd = Ad.lu_solve(bd).to_Matrix()
    sol = dict(zip(unknowns, xd))
    kind, what = quantity
    if kind == "node":
        return sp.cancel(sp.together(sol.get(v[what], 0) if what != "gnd" else 0))
    if kind == "diff":
        x, y = what
        return sp.cancel(sp.together(v[x].subs(sol) - v[y].subs(sol)))
    return sp.cancel(sp.together(current[what].subs(sol)))


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("prog")
    ap.add_argument("--count", type=int, default=30)
    ap.add_argument("--seed", type=int, default=1)
    a = ap.parse_args()
    rng = random.Random(a.seed)
    bad = done = solver_off = 0
    kinds = {}
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "net.stack")
        while done < a.count:
            parts, nodes = network(rng)
            names = [p["name"] for p in parts if p["kind"] != "port"]
            k = rng.randint(2, min(5, len(names)))
            symbols = rng.sample(names, k)
            gains = [p["name"] for p in parts if p["kind"] == "opamp"]
            if gains and not any(g in symbols for g in gains):
                symbols[0] = gains[0]
            r = rng.random()
            resistors = [p["name"] for p in parts if p["kind"] == "resistor"]
            ports = [p["name"] for p in parts if p["kind"] == "port"]
            if ports and r < 0.7:
                field = rng.choice(["open", "loaded", "sag", "zout", "zin"])
                quantity = ("port", (ports[0], field))
                qtext = "%s.%s" % (ports[0], field)
            elif r < 0.6:
                quantity = ("node", rng.choice(nodes[1:]))
                qtext = quantity[1]
            elif r < 0.8:
                x, y = rng.sample(nodes[1:], 2) if len(nodes) > 2 else (nodes[1], "gnd")
                quantity = ("diff", (x, y))
                qtext = "%s - %s" % (x, y)
            else:
                quantity = ("current", rng.choice(resistors))
                qtext = quantity[1] + ".current"
            with open(path, "w") as f:
                f.write(circuit_text(parts))
            args = [a.prog, "formula", path, qtext, "--format", "json", "--symbols", ",".join(symbols)]
            p = subprocess.run(args, capture_output=True, text=True, timeout=60)
            if p.returncode == 2 and "no finite formula" in p.stderr:
                continue                           # a port field that is unbounded there: draw another
            if p.returncode == 3 and ("singular" in p.stderr or "cannot be solved" in p.stderr
                                      or "no convergence" in p.stderr or "self-check" not in p.stderr
                                      and "loop" in p.stderr):
                continue                           # a network the solver rightly refuses: draw another
            if p.returncode == 3 and "within the solver's own error bound" in p.stderr:
                solver_off += 1                    # an ill-conditioned network: the solver, not the formula
                continue
            done += 1
            kinds[quantity[0]] = kinds.get(quantity[0], 0) + 1
            if p.returncode != 0:
                print("FAIL %d: exit %d\n%s%s" % (done, p.returncode, circuit_text(parts), p.stderr))
                bad += 1
                continue
            got = lsexpr.parse(json.loads(p.stdout)["expression"])
            want = reference(parts, nodes, set(symbols), quantity)
            if sp.cancel(sp.together(got - want)) != 0:
                print("FAIL %d: %s\n%sloadstack: %s\nsympy:     %s" % (done, qtext, circuit_text(parts), got, want))
                bad += 1
    print("%d of %d random networks: loadstack's formula equals sympy's solution" % (a.count - bad, a.count))
    print("quantities: %s" % ", ".join("%d %s" % (n, k) for k, n in sorted(kinds.items())))
    print("%d more were set aside: the solver's own error bound exceeded 1e-12 there" % solver_off)
    if solver_off > a.count // 8:
        print("FAIL: too many networks set aside (%d)" % solver_off)
        bad += 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
