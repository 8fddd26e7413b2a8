#!/usr/bin/python3
"""The Python module's choice of the iterative solver: Circuit.solve(solver="iterative").

Usage: test_iterative.py LIBRARY SOURCE_ROOT yes|no   (yes: the library was built with -Dmpi=enabled)

In a library built without the iterative solver the choice must be refused
with SolverUnavailable, whose message says how to get it, and an unknown
solver name with ValueError; the circuit stays usable (solver="sparse" then
works).  In a library built with it, each check has an outside reference:
 1. A Wheatstone bridge in balance (R1/R3 = R2/R4) fed by a current source:
    its node voltages from the nodal equations solved exactly by sympy, and
    the sensitivities dV(a)/dR by sympy's derivative of that exact solution.
    The detector resistor carries no current in balance, so V(a) does not
    depend on it to first order (the bridge balance condition, any circuits
    text): the influence the iterative solver reports for it must be exactly
    0, not the 1e-19-sized rest of the stopping rule.
 2. A 10 x 10 x 10 lattice of one-ohm resistors with 1 A between two adjacent
    centre nodes: the voltage across them (the two-point resistance) from
    scipy.sparse.linalg.spsolve on a Laplacian built here, to 1e-9 relative.
Exit 0 when every check holds.
"""
import os
import sys

lib, root, built = sys.argv[1], sys.argv[2], sys.argv[3]
os.environ["LOADSTACK_LIBRARY"] = os.path.abspath(lib)
sys.path.insert(0, os.path.join(root, "python"))
import loadstack  # noqa: E402

failures = []


def check(ok, what):
    print(("ok   " if ok else "FAIL ") + what)
    if not ok:
        failures.append(what)


R1, R2, R3, R4, RG, I = 1000, 2000, 1500, 3000, 470, 1e-3
BRIDGE = f"""title "Balanced strain bridge"
ground g
current feed g -> a {I * 1000:g} mA
resistor r1 a -> b {R1}
resistor r2 a -> c {R2}
resistor r3 b -> g {R3}
resistor r4 c -> g {R4}
resistor r_gal b -> c {RG}
"""

c = loadstack.Circuit.from_text(BRIDGE, "bridge.stack")
try:
    c.solve(solver="newton")
    check(False, "an unknown solver name is refused")
except ValueError as e:
    check("iterative" in str(e), "an unknown solver name is refused with the list of names")

if built == "no":
    try:
        c.solve(solver="iterative")
        check(False, "solver='iterative' refused in a library built without it")
    except loadstack.SolverUnavailable as e:
        check("-Dmpi=enabled" in str(e) and isinstance(e, loadstack.LoadstackError),
              "solver='iterative' refused with SolverUnavailable saying how to get it: " + str(e))
    op = c.solve(solver="sparse")
    check(op.method.startswith("sparse") or op.method == "dense-lu", "the circuit still solves with another solver")
    sys.exit(1 if failures else 0)

import numpy as np  # noqa: E402
import scipy.sparse as sp  # noqa: E402
import scipy.sparse.linalg as spla  # noqa: E402
import sympy  # noqa: E402

# 1. the bridge against sympy's exact nodal solution
r1, r2, r3, r4, rg = sympy.symbols("r1 r2 r3 r4 rg", positive=True)
va, vb, vc = sympy.symbols("va vb vc")
eqs = [sympy.Eq((va - vb) / r1 + (va - vc) / r2, sympy.Rational(1, 1000)),
       sympy.Eq((vb - va) / r1 + vb / r3 + (vb - vc) / rg, 0),
       sympy.Eq((vc - va) / r2 + vc / r4 + (vc - vb) / rg, 0)]
sol = sympy.solve(eqs, [va, vb, vc], dict=True)[0]
vals = {r1: R1, r2: R2, r3: R3, r4: R4, rg: RG}
op = c.solve(solver="iterative")
check(op.method == "iterative-amg", f"the solve used the iterative solver ({op.method})")
for name, sym in (("a", va), ("b", vb), ("c", vc)):
    exact = float(sol[sym].subs(vals))
    check(abs(op.nodes[name] - exact) <= 1e-10 * abs(exact), f"V({name}) = {op.nodes[name]!r} against sympy {exact!r}")
rows = {r.part: r for r in c.influence("a")}
for part, sym in (("r1", r1), ("r2", r2), ("r3", r3), ("r4", r4), ("r_gal", rg)):
    exact = float(sympy.diff(sol[va], sym).subs(vals))
    got = rows[part].per_unit
    if exact == 0:
        check(got == 0.0, f"dV(a)/d{part} is exactly 0 in balance (got {got!r})")
    else:
        check(abs(got - exact) <= 1e-8 * abs(exact), f"dV(a)/d{part} = {got!r} against sympy {exact!r}")

# 2. a cubic lattice against scipy's sparse direct solve
n = 10
idx = {(x, y, z): (x * n + y) * n + z for x in range(n) for y in range(n) for z in range(n)}
m = n ** 3
gnd = (n // 2 + 1, n // 2, n // 2)
lines = ['title "Lattice 10^3"', "ground g"]
rows_, cols_, vals_ = [], [], []


def nm(p):
    return "g" if p == gnd else "n%d_%d_%d" % p


k = 0
for p in idx:
    for d in ((1, 0, 0), (0, 1, 0), (0, 0, 1)):
        q = (p[0] + d[0], p[1] + d[1], p[2] + d[2])
        if q in idx:
            lines.append(f"resistor r{k} {nm(p)} -> {nm(q)} 1")
            k += 1
            i, j = idx[p], idx[q]
            rows_ += [i, j, i, j]
            cols_ += [i, j, j, i]
            vals_ += [1.0, 1.0, -1.0, -1.0]
centre = (n // 2, n // 2, n // 2)
lines.append(f"current feed g -> {nm(centre)} 1 A")
lap = sp.csr_matrix((vals_, (rows_, cols_)), shape=(m, m))
keep = [i for i in range(m) if i != idx[gnd]]
b = np.zeros(m)
b[idx[centre]] = 1.0
ref = spla.spsolve(lap[keep][:, keep].tocsc(), b[keep])
ref_v = ref[keep.index(idx[centre])]
lat = loadstack.Circuit.from_text("\n".join(lines) + "\n", "lattice.stack")
got = lat.solve(solver="iterative").nodes[nm(centre)]
check(abs(got - ref_v) <= 1e-9 * ref_v, f"10^3 lattice two-point resistance {got!r} against scipy {ref_v!r}")
sys.exit(1 if failures else 0)
