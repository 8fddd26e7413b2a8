#!/usr/bin/python3
"""The scaling table of docs/performance.md: each command at four sizes and
the exponent fitted to its times, so that a regression to quadratic work shows.

Usage: scaling.py LOADSTACK [--small] [--reps R] [--only NAME]

Every row generates its circuits with tests/bench/gen.py (deterministic),
runs the command at each size R times (default 2; 1 with --small) and keeps
the fastest whole-process wall time.  The exponent is the least-squares slope
of log(time) against log(size), size being the circuit's part count; process
start-up (about 10 ms) flattens it at the small end, so the exponent is a
lower bound there: compare a row with itself between builds, not with 1.0.
Prints a markdown table.  --small runs tiny sizes for the test suite (does
every command run and exit as documented; the times mean nothing there).
Exit 0 when every run exited as expected, 1 otherwise.
"""

import argparse
import math
import os
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
GEN = os.path.join(HERE, "gen.py")


def gen(kind, size, path, *extra):
    subprocess.run([sys.executable, GEN, kind, str(size), "--out", path] + list(extra), check=True)


def grid_parts(n):
    return 2 * n * (n - 1) + 1


# name, generator kind, sizes (full, small), parts of a size, command line (after FILE), exit codes accepted
ROWS = [
    ("solve, grid N x N", "grid", ([100, 141, 200, 283], [8, 11, 16, 22]), grid_parts,
     lambda n: ["solve", "{f}", "--format", "json"], (0,)),
    ("influence, grid N x N", "grid", ([100, 141, 200, 283], [8, 11, 16, 22]), grid_parts,
     lambda n: ["influence", "{f}", "n%d_%d" % (n // 2, n // 2), "--format", "json"], (0,)),
    ("port report, M channels", "ports", ([1000, 2000, 4000, 8000], [10, 20, 40, 80]), lambda m: 3 * m + 1,
     lambda m: ["solve", "{f}", "--format", "json"], (0,)),
    ("sag NODE with ports, M channels", "ports", ([1000, 2000, 4000, 8000], [10, 20, 40, 80]), lambda m: 3 * m + 1,
     lambda m: ["sag", "{f}", "s0", "--format", "json"], (0,)),
    ("sag NODE --what-if without ports, grid N x N", "grid", ([57, 80, 113, 160], [5, 7, 10, 14]), grid_parts,
     lambda n: ["sag", "{f}", "n%d_%d" % (n // 2, n // 2), "--what-if", "--format", "json"], (0,)),
    ("tol, ladder of P parts, 1000 trials", "tol", ([250, 500, 1000, 2000], [10, 20, 40, 80]), lambda p: p,
     lambda p: ["tol", "{f}", "t3", "--trials", "1000", "--format", "json"], (0, 1)),
    ("sweep, ladder of P parts, 50 points", "tol", ([1000, 2000, 4000, 8000], [10, 20, 40, 80]), lambda p: p,
     lambda p: ["sweep", "{f}", "k", "1", "2", "t3", "--steps", "50", "--format", "csv"], (0,)),
]


def fit(xs, ys):
    lx = [math.log(x) for x in xs]
    ly = [math.log(max(y, 1e-6)) for y in ys]
    mx, my = sum(lx) / len(lx), sum(ly) / len(ly)
    sxx = sum((a - mx) ** 2 for a in lx)
    return sum((a - mx) * (b - my) for a, b in zip(lx, ly)) / sxx if sxx else float("nan")


def timed(binary, args, reps):
    best, rc, err = float("inf"), None, ""
    for _ in range(reps):
        t0 = time.perf_counter()
        p = subprocess.run([binary] + args, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        best = min(best, time.perf_counter() - t0)
        rc, err = p.returncode, p.stderr
    return best, rc, err


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("--small", action="store_true")
    ap.add_argument("--reps", type=int, default=0)
    ap.add_argument("--only", default="")
    a = ap.parse_args()
    reps = a.reps or (1 if a.small else 2)
    ok = True
    print("| command | sizes (parts) | times (s) | exponent |")
    print("|---|---|---|--:|")
    with tempfile.TemporaryDirectory(prefix="loadstack_scaling_") as tmp:
        for name, kind, sizes, parts, cmd, codes in ROWS:
            if a.only and a.only not in name:
                continue
            xs, ts = [], []
            for s in sizes[1 if a.small else 0]:
                path = os.path.join(tmp, "%s%d.stack" % (kind, s))
                if not os.path.exists(path):
                    gen(kind, s, path)
                if kind == "tol" and "sweep" in name:   # the swept let: the ladder's load, k times 100k
                    swept = path + ".sweep.stack"
                    with open(path, encoding="utf-8") as f:
                        text = f.read().replace("\nresistor rl ", "\nlet k = 1\nresistor rl ", 1)
                    text = text.replace(" 100k tol=1%\n", " k * 100k tol=1%\n", 1)
                    with open(swept, "w", encoding="utf-8") as f:
                        f.write(text)
                    path = swept
                args = [x.replace("{f}", path) for x in cmd(s)]
                t, rc, err = timed(a.binary, args, reps)
                if rc not in codes:
                    ok = False
                    print("%s at %d: exit %s: %s" % (name, s, rc, err.strip()[-300:]), file=sys.stderr)
                xs.append(parts(s))
                ts.append(t)
            print("| %s | %s | %s | %.2f |" % (name, " / ".join(str(x) for x in xs),
                                                " / ".join("%.3f" % t for t in ts), fit(xs, ts)))
            sys.stdout.flush()
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
