#!/usr/bin/python3
"""The part-by-part residual of the extra-precise refinement against the assembled matrix.

Usage: resid_agree.py RESID_DUMP_BINARY

The refinement (src/accuracy.c) never multiplies the assembled matrix: it sums
b - A x part by part from each part's own stamp.  If a part's stamp through the
residual sink differed from what the assembly puts into the matrix (an entry one
of them adds and the other omits, a shunt, a tie, an opened or buffered port),
the refinement would chase a system the factorization does not solve and the
error bounds would be wrong.  So, for small circuits that together use every
kind of the part table (the dump lists the table; a kind no circuit uses fails
the test), in the solved system and in two variants (every port opened with a
tie on a node; every port buffered):

  * the matrix A and right-hand side b are exported exactly (C's %a);
  * x is solved independently with numpy.linalg.solve (Debian's python3-numpy;
    a variant that numpy finds singular uses only the random x below), and a
    random x is drawn as well, so an entry that matters only away from the
    solution is seen too;
  * b - A x is computed exactly with Python's fractions (every double is the
    rational it denotes), and the program's residual at the same x must agree
    with it to the rounding of summing the parts' entries in double:
        |r - (b - A x)| <= 8 eps (sum_j |A_ij x_j| + |b_i| + absr_i) + eps |r|.
    A missing 1e-12 S shunt at 1 V is 1e-12 A against a tolerance near 1e-18.

Exit 0 when every row of every system agrees, 1 otherwise.
"""

import os
import random
import subprocess
import sys
import tempfile
from fractions import Fraction

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import stage_digits  # noqa: E402  (its follower, the circuit of the accuracy issue)

EPS = 2.0 ** -52

# One statement per line, version 2 of the language; values of our own.
CIRCUITS = {
    # the follower of the accuracy issue: a port into an ideal op-amp's input
    "follower": stage_digits.CASES["follower_port"][0],
    # finite op-amp with rin and rout, a current source, a switch with ron
    "finite": """
ground gnd
voltage vs gnd -> in 0.4 V
current ib gnd -> in 2uA
opamp u1 plus=in minus=fb out=out gain=200k rin=2M rout=75
resistor rf out -> fb 10k
resistor rg fb -> gnd 10k
let closed = 1
switch s1 out -> load state=closed ron=0.05
resistor rl load -> gnd 2k
port p out -> load2
resistor rl2 load2 -> gnd 47k
""",
    # an op-amp with its limits and offsets, inside its rails; an open switch with roff
    "limited": """
ground gnd
voltage vpos gnd -> vcc 12 V
voltage vneg vee -> gnd 12 V
voltage vin gnd -> in 1 V rint=50
opamp u1 plus=in minus=fb out=out rails=vee..vcc headroom=0.5V imax=20mA cm=-10V..10V vos=1mV ib=10nA ios=1nA iq=1mA
resistor rf out -> fb 20k
resistor rg fb -> gnd 10k
resistor rl out -> gnd 1k
switch s2 out -> gnd state=open roff=10M
""",
    # the four controlled sources, one controlled through a port's current
    "controlled": """
ground gnd
voltage v1 gnd -> a 3 V rint=10
resistor ra a -> b 1k
resistor rb b -> gnd 2k
port pb b -> c
resistor rc c -> gnd 5k
vcvs e1 gnd -> d gain=2 cplus=b cminus=gnd
resistor rd d -> gnd 3k
vccs g1 gnd -> e gm=1m cplus=d cminus=gnd
resistor re e -> gnd 1k
cccs f1 gnd -> f gain=3 via=pb
resistor rf f -> gnd 500
ccvs h1 gnd -> g rm=100 via=ra
resistor rg g -> gnd 1k
""",
    # junctions at their operating point
    "junctions": """
ground gnd
voltage v5 gnd -> v 5 V
resistor r1 v -> a 1k
diode d1 a -> gnd isat=2n ideality=1.8 rbulk=0.5
resistor r2 v -> b 150
led d2 b -> gnd vf=2.0V at=20mA ideality=2 rbulk=5 imax=25mA
voltage v9 gnd -> w 9 V
resistor r3 w -> k 470
zener z1 gnd -> k vz=5.1V at=5mA rbulk=8
resistor r4 k -> gnd 10k
""",
    # a pot, a thermistor with self-heating, an ADC input
    "sensors": """
ground gnd
voltage vref gnd -> top 3.3 V
pot trim 10k a=top wiper=w b=gnd at=0.3
resistor rw w -> gnd 100k
current i1 gnd -> t 100uA
ntc th1 t -> gnd r25=10k beta=3950 celsius=40 dissipation=2mW
resistor rs top -> tap 10k
resistor rt tap -> gnd 22k
adc in1 in=tap ref=3.3V bits=12 rin=1M leak=100nA max_source=10k
""",
}


def run(args):
    p = subprocess.run(args, capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        raise RuntimeError("%s exited %d: %s" % (" ".join(args), p.returncode, p.stderr.strip()))
    return p.stdout


def parse(text):
    """kinds, present, {variant: (n, entries, b)}, {(variant, kind-of-x): residuals}."""
    kinds, present, systems, resid = [], [], {}, {}
    for line in text.splitlines():
        w = line.split()
        if not w:
            continue
        if w[0] == "kinds":
            kinds = w[1:]
        elif w[0] == "present":
            present = w[1:]
        elif w[0] == "variant":
            v = int(w[1])
            systems[v] = (int(w[3]), [], {})
        elif w[0] == "a":
            systems[v][1].append((int(w[1]), int(w[2]), float.fromhex(w[3])))
        elif w[0] == "b":
            systems[v][2][int(w[1])] = float.fromhex(w[2])
        elif w[0] == "r":
            resid.setdefault(int(w[1]), {})[int(w[2])] = (float.fromhex(w[3]), float.fromhex(w[4]))
    return kinds, present, systems, resid


def check_x(name, v, n, entries, b, x, r):
    """Rows where the program's residual at x disagrees with the exact b - A x."""
    exact = [Fraction(b.get(i, 0.0)) for i in range(n)]
    mag = [abs(b.get(i, 0.0)) for i in range(n)]
    for i, j, a in entries:
        exact[i] -= Fraction(a) * Fraction(x[j])
        mag[i] += abs(a * x[j])
    bad = []
    for i in range(n):
        got, absr = r[i]
        tol = 8 * EPS * (mag[i] + absr) + EPS * abs(got)
        if abs(Fraction(got) - exact[i]) > Fraction(tol):
            bad.append("%s variant %d row %d: residual %.17g, exact b - A x %.17g (tolerance %.3g)"
                       % (name, v, i, got, float(exact[i]), tol))
    return bad


def main():
    if len(sys.argv) != 2:
        print("usage: resid_agree.py RESID_DUMP_BINARY", file=sys.stderr)
        return 2
    dump = sys.argv[1]
    rng = random.Random(22)
    covered, table, failures, checked = set(), [], [], 0
    with tempfile.TemporaryDirectory() as tmp:
        for name, text in CIRCUITS.items():
            path = os.path.join(tmp, name + ".stack")
            with open(path, "w") as f:
                f.write(text.lstrip())
            kinds, present, systems, _ = parse(run([dump, path]))
            table = kinds
            covered.update(present)
            # two x per variant: numpy's solution and a random vector; the
            # dump takes one x per variant per run, so two runs
            for which in ("numpy", "random"):
                xs = {}
                lines = []
                for v, (n, entries, b) in systems.items():
                    if which == "numpy":
                        a = np.zeros((n, n))
                        for i, j, val in entries:
                            a[i, j] += val
                        rhs = np.array([b.get(i, 0.0) for i in range(n)])
                        try:
                            x = np.linalg.solve(a, rhs)
                        except np.linalg.LinAlgError:
                            continue
                        if not np.all(np.isfinite(x)):
                            continue
                    else:
                        x = np.array([rng.uniform(-2, 2) * 10 ** rng.randint(-6, 1) for _ in range(n)])
                    xs[v] = [float(t) for t in x]
                    lines += ["x %d %d %s" % (v, i, t.hex()) for i, t in enumerate(xs[v])]
                xpath = os.path.join(tmp, name + "." + which + ".x")
                with open(xpath, "w") as f:
                    f.write("\n".join(lines) + "\n")
                _, _, systems2, resid = parse(run([dump, path, xpath]))
                for v, x in xs.items():
                    n, entries, b = systems2[v]
                    if v not in resid or len(resid[v]) != n:
                        failures.append("%s variant %d (%s x): no residual printed" % (name, v, which))
                        continue
                    failures += check_x(name, v, n, entries, b, x, resid[v])
                    checked += 1
            print("%-10s kinds %s: %d systems" % (name, " ".join(present), len(systems)))
    missing = [k for k in table if k not in covered]
    if not table:
        failures.append("the dump listed no part kinds")
    if missing:
        failures.append("no circuit here uses the part kind(s) %s: add one" % ", ".join(missing))
    for f in failures:
        print("FAIL " + f)
    print("%d residuals checked over %d kinds; %d failures" % (checked, len(table), len(failures)))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
