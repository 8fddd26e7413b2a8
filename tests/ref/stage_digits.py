#!/usr/bin/python3
"""Well-conditioned op-amp stages and a port-loaded divider: every digit trusted, and right.

Usage: stage_digits.py LOADSTACK_BINARY

A plain follower once came out with error bounds "none" and every value marked
"~" although 1.818 V is exact to its digits: the extra-precise refinement judged
its convergence by the relative correction of a zero unknown (the port's current
into the ideal input), which is rounding noise.  For each circuit below, on the
dense and the sparse path:

  * the text report marks nothing with "~" and says every value is right to its
    digits; the JSON has bounds (`accuracy.bounds` is not "none") and every node
    and part carries a finite error bound;
  * every node voltage and part current lies within its JSON bound of the closed
    form, computed exactly with Python's fractions, and the bound is below 1e-12 of
    the value (or of the largest of its kind, for a zero);
  * the port fields of the divider match their closed forms to 1e-12.

Closed forms (sources):
  * voltage divider, Vout = Vin R2 / (R1 + R2), and Thevenin's theorem for the
    port's open voltage and zout: any circuit-analysis text, e.g. Horowitz & Hill,
    The Art of Electronics, 3rd ed. (2015), sections 1.2.3 and 1.2.5;
  * ideal op-amp stages from the two "golden rules" (no input current, the
    inputs at one voltage): follower Vout = Vin, inverting Vout = -Rf/Rin Vin,
    non-inverting Vout = (1 + Rf/Rg) Vin: the same book, section 4.2;
  * a finite-gain non-inverting stage, Vout = Vin A / (1 + A beta) with
    beta = Rg / (Rf + Rg): Black's feedback formula (same book, section 2.5.3).
Exit 0 when every check passes, 1 otherwise.
"""

import json
import os
import subprocess
import sys
import tempfile
from fractions import Fraction as F

K = F(1000)

# name: (circuit text, exact node voltages, exact part currents FROM -> TO,
#        exact port fields or None)
CASES = {
    # the circuit of the accuracy issue: a source with 1k inside, 10k to ground,
    # a port into an ideal follower loaded by 1k
    "follower_port": ("""
ground gnd
voltage v1 gnd -> a 2 V rint=1k
resistor r1 a -> gnd 10k
port p a -> b
opamp u1 plus=b minus=o out=o
resistor rl o -> gnd 1k
""", lambda: (lambda va: ({"a": va, "b": va, "o": va},
                          {"v1": va / (10 * K), "r1": va / (10 * K), "rl": va / K, "u1": va / K}, None))(
        F(2) * 10 * K / (11 * K))),
    "follower": ("""
ground gnd
voltage vs gnd -> in 1.5 V
opamp u1 plus=in minus=out out=out
resistor rl out -> gnd 2k2
""", lambda: ({"in": F(3, 2), "out": F(3, 2)},
              {"vs": F(0), "rl": F(3, 2) / (F(22, 10) * K), "u1": F(3, 2) / (F(22, 10) * K)}, None)),
    "inverting": ("""
ground gnd
voltage vs gnd -> in 0.5 V
resistor rin in -> m 10k
resistor rf m -> out 47k
opamp u1 plus=gnd minus=m out=out
resistor rl out -> gnd 10k
""", lambda: (lambda vo: ({"in": F(1, 2), "m": F(0), "out": vo},
                          {"vs": F(1, 2) / (10 * K), "rin": F(1, 2) / (10 * K), "rf": F(1, 2) / (10 * K),
                           "rl": vo / (10 * K), "u1": vo / (10 * K) - F(1, 2) / (10 * K)}, None))(
        -F(47, 10) * F(1, 2))),
    "noninverting": ("""
ground gnd
voltage vs gnd -> in 0.3 V
opamp u1 plus=in minus=fb out=out
resistor rf out -> fb 33k
resistor rg fb -> gnd 10k
resistor rl out -> gnd 4k7
""", lambda: (lambda vo: ({"in": F(3, 10), "fb": F(3, 10), "out": vo},
                          {"vs": F(0), "rf": (vo - F(3, 10)) / (33 * K), "rg": F(3, 10) / (10 * K),
                           "rl": vo / (F(47, 10) * K), "u1": vo / (F(47, 10) * K) + F(3, 10) / (10 * K)},
                          None))((1 + F(33, 10)) * F(3, 10))),
    "finite_gain": ("""
ground gnd
voltage vs gnd -> in 0.25 V
opamp u1 plus=in minus=fb out=out gain=100k
resistor rf out -> fb 10k
resistor rg fb -> gnd 10k
""", lambda: (lambda vo: ({"in": F(1, 4), "fb": vo / 2, "out": vo},
                          {"vs": F(0), "rf": vo / (20 * K), "rg": vo / (20 * K), "u1": vo / (20 * K)}, None))(
        F(1, 4) * 100 * K / (1 + 100 * K / 2))),
    # a divider loaded through a port: open = 2.5 V, zout = 10k || 10k = 5k, zin = 100k
    "divider_port": ("""
ground gnd
voltage vs gnd -> top 5 V
resistor rt top -> mid 10k
resistor rb mid -> gnd 10k
port p mid -> load
resistor rl load -> gnd 100k
""", lambda: (lambda rpar: (lambda vm: ({"top": F(5), "mid": vm, "load": vm},
                                        {"vs": (5 - vm) / (10 * K), "rt": (5 - vm) / (10 * K),
                                         "rb": vm / (10 * K), "rl": vm / (100 * K)},
                                        {"open": F(5, 2), "loaded": vm, "sag": F(5, 2) - vm, "zout": 5 * K,
                                         "zin": 100 * K, "current": vm / (100 * K)}))(
        F(5) * rpar / (10 * K + rpar)))(F(10 * K * 100 * K) / (110 * K))),
}


def run(args):
    p = subprocess.run(args, capture_output=True, text=True, timeout=60)
    return p.returncode, p.stdout, p.stderr


def main():
    if len(sys.argv) != 2:
        print("usage: stage_digits.py LOADSTACK_BINARY", file=sys.stderr)
        return 2
    exe = sys.argv[1]
    failures, checks = [], 0
    with tempfile.TemporaryDirectory() as tmp:
        for name, (text, forms) in CASES.items():
            nodes, parts, port = forms()
            path = os.path.join(tmp, name + ".stack")
            with open(path, "w") as f:
                f.write(text.lstrip())
            for solver in ("dense", "sparse"):
                tag = "%s (%s)" % (name, solver)
                rc, out, err = run([exe, "solve", path, "--solver", solver])
                if rc != 0:
                    failures.append("%s: solve exited %d: %s" % (tag, rc, err.strip()))
                    continue
                if "~" in out or "untrusted-digits" in err:
                    failures.append("%s: values marked ~ in a well-conditioned circuit:\n%s%s" % (tag, out, err))
                if "every voltage and current is right to the digits printed" not in out:
                    failures.append("%s: the accuracy line does not vouch for the digits" % tag)
                rc, out, err = run([exe, "solve", path, "--solver", solver, "--format", "json"])
                rep = json.loads(out, parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c)))
                acc = rep["accuracy"]
                if acc.get("bounds") in (None, "none"):
                    failures.append("%s: no error bounds (accuracy.bounds = %r)" % (tag, acc.get("bounds")))
                    continue
                vmax = max(abs(v) for v in nodes.values())
                for node, exact in nodes.items():
                    got, bound = rep["nodes"][node], acc["nodes"][node]
                    checks += 1
                    if bound is None or abs(F(got) - exact) > F(bound):
                        failures.append("%s: V(%s) = %r, exact %s, bound %r" % (tag, node, got, float(exact), bound))
                    elif bound > 1e-12 * max(abs(float(exact)), float(vmax)):
                        failures.append("%s: V(%s) bound %r is loose for a well-conditioned stage" % (tag, node, bound))
                imax = max(abs(v) for v in parts.values())
                for part, exact in parts.items():
                    rec = rep["parts"][part]
                    got, bound = rec["current"], rec.get("error_bound")
                    checks += 1
                    if bound is None or abs(F(got) - exact) > F(bound):
                        failures.append("%s: I(%s) = %r, exact %s, bound %r" % (tag, part, got, float(exact), bound))
                    elif bound > 1e-12 * max(abs(float(exact)), float(imax)):
                        failures.append("%s: I(%s) bound %r is loose for a well-conditioned stage" % (tag, part, bound))
                for field, exact in (port or {}).items():
                    got = rep["ports"]["p"][field]
                    checks += 1
                    if got is None or abs(F(got) - exact) > F(1e-12) * max(abs(exact), 1):
                        failures.append("%s: port p %s = %r, exact %s" % (tag, field, got, float(exact)))
    for f in failures:
        print("FAIL " + f)
    print("%d values checked against closed forms; %d failures" % (checks, len(failures)))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
