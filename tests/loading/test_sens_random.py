#!/usr/bin/python3
"""Adjoint sensitivities and port reports of random networks against numpy.

Usage: test_sens_random.py LOADSTACK_BINARY [--count 24] [--seed 3] [--verbose]

Networks come from the generator of tests/ref/random_mna.py (resistor spanning
tree, sources, controlled sources, op-amp stages; fixed seed), with two of
their resistors split by a `port` so every network has ports.  This file then
solves each network with its own modified nodal analysis in numpy (written
here from the sign conventions of shared/spec/language.md, independent of the
program and of random_mna.py's solver), including the system with one port
opened (its branch row replaced by I = 0).  From it:

  * the port report: open = V(driver) with the port open, zout/zin = the
    diagonal entries of the opened system's inverse (unit current injected,
    independent sources zeroed), ratio, sag, sag_rel, loaded and current
    (definitions of the language spec); compared with `solve --format json`;
  * sensitivities: central finite differences (relative steps 1e-3 and 1e-4) of node
    voltages, part currents and every port field with respect to every part's
    main value, compared with `influence QUANTITY --format json` (the adjoint).

Tolerances: port fields 1e-8 relative plus 1e-10 of the network's largest
voltage (current) for voltages (currents), 1e-10 of the value for impedances;
derivatives compared as p*dQ/dp, 2e-5 relative plus 2e-6 of the largest
p*dQ/dp of that quantity plus 1e-9 of the quantity's scale (for a sag, the
open voltage it is the difference of), plus twice the spread between the
two finite-difference steps; at most 5% of the comparisons may have a
spread above 1e-3 (else the reference is too weak and the test fails).  Ports with a stiff end (zout or zin
below 1e-9 of the other) are left to the closed-form tests.  Networks whose (opened) matrices have a condition
number above 1e9 are skipped for that quantity (numpy: numpy.linalg.cond).
Source: numpy/LAPACK (Debian /usr/bin/python3).
"""

import argparse
import json
import os
import random
import subprocess
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "ref"))
import random_mna  # noqa: E402  (the network generator only)

COND_MAX = 1e9
MAIN = {"resistor": "r", "voltage": "v", "current": "i", "vccs": "gm", "vcvs": "gain",
        "cccs": "gain", "ccvs": "rm"}


def main_key(p):
    if p["kind"] == "opamp":
        return None if p["ideal"] else "gain"
    return MAIN.get(p["kind"])


# ---------------------------------------------------------------------------
# the independent MNA

class Mna:
    """Modified nodal analysis of a part list; `opened` names ports whose
    branch row is I = 0 instead of V(from) = V(to)."""

    def __init__(self, nodes, ground, parts, opened=()):
        self.g = ground
        self.idx = {nd: i for i, nd in enumerate(n for n in nodes if n != ground)}
        nn = len(self.idx)
        self.br = {}
        for p in parts:
            if p["kind"] in ("voltage", "vcvs", "ccvs", "port", "opamp"):
                self.br[p["name"]] = nn + len(self.br)
        n = nn + len(self.br)
        self.n = n
        A = np.zeros((n, n))
        b = np.zeros(n)
        by = {p["name"]: p for p in parts}

        def vi(nd):
            return self.idx.get(nd, -1)

        def put(r, c, v):
            if r >= 0 and c >= 0:
                A[r, c] += v

        def diff(a, c):
            f = {}
            if vi(a) >= 0:
                f[vi(a)] = f.get(vi(a), 0.0) + 1.0
            if vi(c) >= 0:
                f[vi(c)] = f.get(vi(c), 0.0) - 1.0
            return f

        def cur(name):
            q = by[name]
            if q["kind"] == "resistor":
                return {k: v / q["r"] for k, v in diff(q["a"], q["b"]).items()}
            return {self.br[name]: 1.0}

        def leave(nd, form, s):
            r = vi(nd)
            if r >= 0:
                for k, v in form.items():
                    A[r, k] += s * v

        for p in parts:
            k = p["kind"]
            if k == "resistor":
                gv = 1.0 / p["r"]
                a, c = vi(p["a"]), vi(p["b"])
                put(a, a, gv); put(c, c, gv); put(a, c, -gv); put(c, a, -gv)
            elif k == "current":
                if vi(p["a"]) >= 0:
                    b[vi(p["a"])] -= p["i"]
                if vi(p["b"]) >= 0:
                    b[vi(p["b"])] += p["i"]
            elif k == "vccs":
                form = {c: p["gm"] * v for c, v in diff(p["cp"], p["cm"]).items()}
                leave(p["a"], form, 1.0); leave(p["b"], form, -1.0)
            elif k == "cccs":
                form = {c: p["gain"] * v for c, v in cur(p["via"]).items()}
                leave(p["a"], form, 1.0); leave(p["b"], form, -1.0)
            elif k in ("voltage", "vcvs", "ccvs", "port"):
                j = self.br[p["name"]]
                leave(p["a"], {j: 1.0}, 1.0); leave(p["b"], {j: 1.0}, -1.0)
                if k == "port":
                    if p["name"] in opened:
                        A[j, j] = 1.0                       # I = 0
                    else:
                        for c, v in diff(p["a"], p["b"]).items():
                            A[j, c] += v                    # V(from) - V(to) = 0
                    continue
                for c, v in diff(p["b"], p["a"]).items():  # the rise V(to) - V(from)
                    A[j, c] += v
                if k == "voltage":
                    A[j, j] += p["rs"]
                    b[j] = p["v"]
                elif k == "vcvs":
                    for c, v in diff(p["cp"], p["cm"]).items():
                        A[j, c] -= p["gain"] * v
                else:
                    for c, v in cur(p["via"]).items():
                        A[j, c] -= p["rm"] * v
            elif k == "opamp":
                j = self.br[p["name"]]
                leave(p["out"], {j: 1.0}, -1.0)             # sources j into out
                if p["ideal"]:
                    for c, v in diff(p["plus"], p["minus"]).items():
                        A[j, c] += v
                else:
                    gv = 1.0 / p["rin"]
                    a, c = vi(p["plus"]), vi(p["minus"])
                    put(a, a, gv); put(c, c, gv); put(a, c, -gv); put(c, a, -gv)
                    # V(out) = gain*(V+ - V-) - rout*I, divided by the gain
                    o = vi(p["out"])
                    if o >= 0:
                        A[j, o] += 1.0 / p["gain"]
                    A[j, j] += p["rout"] / p["gain"]
                    for c, v in diff(p["plus"], p["minus"]).items():
                        A[j, c] -= v
        self.A, self.b = A, b
        self.cond = np.linalg.cond(A) if n else 1.0

    def ok(self):
        return np.isfinite(self.cond) and self.cond < COND_MAX

    def refined(self, rhs):
        """A^-1 rhs, refined with residuals in extended precision (so the
        reference is as exact as the data allow)."""
        x = np.linalg.solve(self.A, rhs)
        Al, bl = self.A.astype(np.longdouble), rhs.astype(np.longdouble)
        for _ in range(3):
            r = (bl - Al @ x.astype(np.longdouble)).astype(np.float64)
            x = x + np.linalg.solve(self.A, r)
        return x

    def solve(self):
        return self.refined(self.b)

    def v(self, x, nd):
        return 0.0 if nd == self.g else float(x[self.idx[nd]])

    def z(self, nd):
        """Driving-point resistance at nd: (A^-1)_{nd,nd}."""
        if nd == self.g:
            return 0.0
        e = np.zeros(self.n)
        e[self.idx[nd]] = 1.0
        return float(self.refined(e)[self.idx[nd]])


def port_fields(net, parts, port):
    """The port report of `port` by the spec's definitions, or None when the
    opened system is too ill-conditioned to be a fair reference."""
    base = Mna(net.nodes, net.ground, parts)
    opn = Mna(net.nodes, net.ground, parts, opened=(port["name"],))
    if not base.ok() or not opn.ok():
        return None
    xb = base.solve()
    vmax = max([abs(base.v(xb, nd)) for nd in net.nodes] + [1e-300])
    if abs(opn.v(opn.solve(), port["a"])) < 1e-3 * vmax:
        return None                                  # open ~ 0: sag_rel is cancellation
    x, xo = base.solve(), opn.solve()
    f = {"open": opn.v(xo, port["a"]), "loaded": base.v(x, port["a"]),
         "zout": opn.z(port["a"]), "zin": opn.z(port["b"]),
         "current": float(x[base.br[port["name"]]])}
    if abs(f["zout"]) < 1e-9 * max(abs(f["zin"]), 1.0) or abs(f["zin"]) < 1e-9 * max(abs(f["zout"]), 1.0):
        return None                                  # a stiff end: zero up to numpy's round-off
    f["sag"] = f["open"] - f["loaded"]
    f["sag_rel"] = f["sag"] / f["open"]
    f["ratio"] = f["zin"] / f["zout"]
    return f


def quantities(net, parts, qlist):
    """Values of the quantities in qlist (("node", nd) | ("current", part) |
    ("port", port, field)) for the network with these part values."""
    base = Mna(net.nodes, net.ground, parts)
    x = base.solve()
    by = {p["name"]: p for p in parts}
    out, cache = [], {}
    for q in qlist:
        if q[0] == "node":
            out.append(base.v(x, q[1]))
        elif q[0] == "current":
            p = by[q[1]]
            if p["kind"] == "resistor":
                out.append((base.v(x, p["a"]) - base.v(x, p["b"])) / p["r"])
            else:
                out.append(float(x[base.br[q[1]]]))
        else:
            if q[1] not in cache:
                cache[q[1]] = port_fields(net, parts, by[q[1]])
            out.append(cache[q[1]][q[2]] if cache[q[1]] else float("nan"))
    return out


# ---------------------------------------------------------------------------
# networks with ports

def add_ports(net, rng, count=2):
    """Split `count` resistors with both ends off ground by a port at their
    FROM end: `resistor r a -> b` becomes `port pK a -> pK_l` and
    `resistor r pK_l -> b` (same current, so via= references still hold)."""
    cands = [i for i, p in enumerate(net.parts) if p["kind"] == "resistor"
             and p["a"] != net.ground and p["b"] != net.ground]
    rng.shuffle(cands)
    made = []
    for k, i in enumerate(sorted(cands[:count], reverse=True)):
        p = net.parts[i]
        name = "pt%d" % (k + 1)
        load = net.node(name + "_l")
        port = {"kind": "port", "name": name, "a": p["a"], "b": load}
        old = net.lines[i].split()
        # resistor NAME A -> B VALUE...
        value = " ".join(old[5:])
        net.lines[i] = "resistor %s %s -> %s %s" % (p["name"], load, p["b"], value)
        p["a"] = load
        net.parts.insert(i, port)
        net.lines.insert(i, "port %s %s -> %s" % (name, port["a"], load))
        made.append(port)
    head = net.text.split("\n")[:3]
    net.text = "\n".join(head + net.lines) + "\n"
    return made


def fd_derivatives(net, qlist, steps=(1e-3, 1e-4)):
    """p * dQ/dp for every quantity and every part with a main value, by
    central differences of the numpy reference at two relative steps: returns
    {part: [(value at the smaller step, spread between the two steps)]}.  The
    spread is the difference's own error estimate (truncation at the large
    step, round-off at the small one)."""
    res = {}
    for i, p in enumerate(net.parts):
        key = main_key(p)
        if key is None:
            continue
        p0 = p[key]
        per_step = []
        for rel in steps:
            h = rel * abs(p0)
            vals = []
            for s in (1, -1):
                parts = [dict(q) for q in net.parts]
                parts[i][key] = p0 + s * h
                vals.append(quantities(net, parts, qlist))
            per_step.append([p0 * (a - b) / (2 * h) for a, b in zip(*vals)])
        res[p["name"]] = [(b, abs(a - b)) for a, b in zip(*per_step)]
    return res


def qtext(q):
    if q[0] == "node":
        return q[1]
    if q[0] == "current":
        return q[1] + ".current"
    return "%s.%s" % (q[1], q[2])


def run_json(binary, args):
    p = subprocess.run([binary] + args + ["--format", "json"], capture_output=True, text=True, timeout=120)
    if p.returncode != 0:
        return None, "exit %d: %s" % (p.returncode, p.stderr.strip()[:300])
    try:
        return json.loads(p.stdout), None
    except ValueError:
        return None, "not JSON"


def check_network(binary, net, ports, rng, path, verbose, stats):
    bad = []
    checked = 0
    # --- the port report
    x0 = Mna(net.nodes, net.ground, net.parts)
    xs = x0.solve()
    iscale = max([abs(x0.v(xs, p["a"]) - x0.v(xs, p["b"])) / p["r"] for p in net.parts
                  if p["kind"] == "resistor"] + [1e-300])
    vscale = max([abs(x0.v(xs, nd)) for nd in net.nodes] + [1e-300])
    d, err = run_json(binary, ["solve", path])
    if err:
        return ["solve: " + err], 0
    for port in ports:
        ref = port_fields(net, net.parts, port)
        if ref is None:
            continue
        got = d["ports"].get(port["name"], {})
        scale = {"open": vscale, "loaded": vscale, "sag": vscale, "zout": abs(ref["zout"]),
                 "zin": abs(ref["zin"]), "ratio": abs(ref["ratio"]), "current": abs(ref["current"]),
                 "sag_rel": abs(ref["sag_rel"])}
        for k, v in ref.items():
            g = got.get(k)
            checked += 1
            tol = 1e-8 * abs(v) + 1e-10 * scale[k] + 1e-300
            if k == "current":
                tol += 1e-10 * iscale
            if k == "sag_rel":
                tol = 1e-8 * abs(v) + 1e-10 * vscale / abs(ref["open"])
            if not isinstance(g, (int, float)) or abs(g - v) > tol:
                bad.append("port %s.%s: loadstack %r, numpy %r" % (port["name"], k, g, v))
    # --- sensitivities; the network's own scales give the floors
    x0 = Mna(net.nodes, net.ground, net.parts)
    xs = x0.solve()
    vscale = max([abs(x0.v(xs, nd)) for nd in net.nodes] + [1e-300])
    iscale = max([abs(x0.v(xs, p["a"]) - x0.v(xs, p["b"])) / p["r"] for p in net.parts
                  if p["kind"] == "resistor"] + [1e-300])
    nodes = [nd for nd in net.nodes if nd != net.ground and not nd.endswith("_l")]
    resistors = [p["name"] for p in net.parts if p["kind"] == "resistor"]
    qlist = [("node", rng.choice(nodes)), ("current", rng.choice(resistors))]
    for port in ports:
        if port_fields(net, net.parts, port) is not None:
            qlist += [("port", port["name"], f) for f in ("open", "zout", "zin", "ratio", "sag", "sag_rel",
                                                          "loaded")]
    fd = fd_derivatives(net, qlist)
    for qi, q in enumerate(qlist):
        d, err = run_json(binary, ["influence", path, qtext(q)])
        if err:
            bad.append("influence %s: %s" % (qtext(q), err))
            continue
        got = {it["part"]: it for it in d["items"]}
        big = max([abs(v[qi][0]) for v in fd.values()] + [0.0])
        # the quantity's own scale: a sag is a difference of two voltages of
        # the size of open, and finite differences resolve it no finer
        qs = abs(d["value"]) if isinstance(d["value"], (int, float)) else 0.0
        if q[0] == "node":
            qs = max(qs, vscale)
        elif q[0] == "current" or (q[0] == "port" and q[2] == "current"):
            qs = max(qs, iscale)
        if q[0] == "port" and q[2] in ("sag", "sag_rel"):
            pf = port_fields(net, net.parts, {p["name"]: p for p in net.parts}[q[1]])
            qs = max(abs(pf["open"]), abs(pf["loaded"])) / (abs(pf["open"]) if q[2] == "sag_rel" else 1.0)
        for name, vals in fd.items():
            want, spread = vals[qi]
            it = got.get(name)
            checked += 1
            floor = 2e-6 * big + 1e-9 * qs
            stats["compared"] += 1
            if spread > 1e-3 * abs(want) + floor:
                stats["unresolved"] += 1
            if it is None or not isinstance(it.get("per_unit"), (int, float)):
                bad.append("influence %s / %s: missing or null" % (qtext(q), name))
                continue
            have = it["part_value"] * it["per_unit"]
            if abs(have - want) > 2e-5 * abs(want) + floor + 2 * spread:
                bad.append("influence %s / %s: p*dQ/dp adjoint %.9g, numpy FD %.9g" % (qtext(q), name, have, want))
    return bad, checked


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("--count", type=int, default=24)
    ap.add_argument("--seed", type=int, default=3)
    ap.add_argument("--verbose", action="store_true")
    ap.add_argument("--only", type=int, default=0, help="check only network N (debugging)")
    args = ap.parse_args()
    rng = random.Random(args.seed)
    fails, total, done = 0, 0, 0
    stats = {"compared": 0, "unresolved": 0}
    with tempfile.TemporaryDirectory(prefix="loadstack_sens_") as tmp:
        i = 0
        attempts = 0
        while done < args.count and attempts < 50 * args.count:
            attempts += 1
            i += 1
            size = rng.randint(4, 30)
            net = random_mna.generate(rng, size, i)
            ports = add_ports(net, rng)
            base = Mna(net.nodes, net.ground, net.parts)
            usable = [p for p in ports if port_fields(net, net.parts, p) is not None]
            if len(ports) < 2 or not base.ok() or not usable:
                continue
            xb = base.solve()
            if max(abs(base.v(xb, p["a"])) for p in ports) < 1e-6:
                continue                     # the ports sit where nothing excites the network
            if args.only and i != args.only:
                done += 1
                continue
            path = os.path.join(tmp, "net%03d.stack" % i)
            with open(path, "w", encoding="utf-8") as f:
                f.write(net.text)
            qrng = random.Random(args.seed * 100003 + i)   # the quantities of network i
            bad, checked = check_network(args.binary, net, ports, qrng, path, args.verbose, stats)
            done += 1
            total += checked
            print("net %3d: %s nodes=%3d parts=%3d ports used=%d checked=%4d"
                  % (i, "ok  " if not bad else "FAIL", len(net.nodes), len(net.parts), len(usable), checked))
            if bad:
                fails += 1
                for b in bad if args.verbose else bad[:6]:
                    print("         " + b)
                if args.verbose:
                    print(net.text)
    print("%d networks, %d values checked, %d networks failed" % (done, total, fails))
    share = stats["unresolved"] / max(1, stats["compared"])
    print("%d derivatives compared, %d (%.1f%%) where finite differences could not resolve 1e-3"
          % (stats["compared"], stats["unresolved"], 100 * share))
    if share > 0.05:
        print("too many unresolved comparisons: the reference lost its power")
        return 1
    if done < args.count:
        print("could only generate %d usable networks" % done)
        return 1
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
