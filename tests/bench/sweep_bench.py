#!/usr/bin/python3
"""The sweep target of docs/performance.md: a 1,000-point sweep of a
100k-node circuit at no more than 0.3 of one `solve` of the same file per
point, both timed in one run.

Usage: sweep_bench.py LOADSTACK [--small] [--parts P] [--points N] [--reps R]

The circuit is tests/bench/gen.py's resistor ladder of P parts (default
200,000: 100,001 nodes) with its load written `k * 100k` and `let k = 1`;
the sweep steps k from 1 to 2 over N points (default 1,000) and tabulates
the far end's voltage.  Prints the whole-process wall times (best of R,
default 1) of `solve` and of the sweep, the time per point and its ratio to
the solve, and the time per point of the same sweep elaborating every point
afresh (LOADSTACK_SWEEP_REELABORATE=1, over 20 points so it stays short).
--small: 2,000 parts and 16 points, for the test suite, which only checks
that it runs and that both ways write the same table (not timed).
Exit 0 when every run succeeded and the two ways agree, 1 otherwise.
"""

import argparse
import os
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))


def timed(cmd, reps, env=None):
    """Best wall time of reps runs; (seconds, last completed process)."""
    best, p = None, None
    e = dict(os.environ)
    e.update(env or {})
    for _ in range(reps):
        t0 = time.perf_counter()
        p = subprocess.run(cmd, capture_output=True, text=True, env=e)
        t = time.perf_counter() - t0
        best = t if best is None or t < best else best
    return best, p


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("binary")
    ap.add_argument("--small", action="store_true")
    ap.add_argument("--parts", type=int)
    ap.add_argument("--points", type=int)
    ap.add_argument("--reps", type=int, default=1)
    a = ap.parse_args()
    parts = a.parts or (2000 if a.small else 200000)
    npts = a.points or (16 if a.small else 1000)
    ok = True
    with tempfile.TemporaryDirectory(prefix="loadstack_sweep_bench_") as tmp:
        path = os.path.join(tmp, "ladder.stack")
        subprocess.run([sys.executable, os.path.join(HERE, "gen.py"), "tol", str(parts), "--out", path], check=True)
        with open(path, encoding="utf-8") as f:
            text = f.read()
        text = text.replace("\nresistor rl ", "\nlet k = 1\nresistor rl ", 1).replace(" 100k tol=1%\n",
                                                                                     " k * 100k tol=1%\n", 1)
        with open(path, "w", encoding="utf-8") as f:
            f.write(text)
        t_solve, p = timed([a.binary, "solve", path, "--quiet"], a.reps)
        if p.returncode not in (0, 1):
            print("solve failed: %s" % p.stderr[-300:], file=sys.stderr)
            ok = False
        sweep = [a.binary, "sweep", path, "k", "1", "2", "t3", "--format", "csv", "--quiet"]
        t_sweep, p = timed(sweep + ["--steps", str(npts)], a.reps)
        if p.returncode != 0:
            print("sweep failed: %s" % p.stderr[-300:], file=sys.stderr)
            ok = False
        once = p.stdout
        few = min(npts, 20)
        t_reel, p = timed(sweep + ["--steps", str(few)], 1, {"LOADSTACK_SWEEP_REELABORATE": "1"})
        if p.returncode != 0:
            print("per-point sweep failed: %s" % p.stderr[-300:], file=sys.stderr)
            ok = False
        if few == npts and p.stdout != once:
            print("the once-elaborated sweep and the per-point one differ", file=sys.stderr)
            ok = False
        nodes = parts // 2 + 1
        print("| case | solve (s) | sweep (s) | per point (s) | per point / solve | per point, re-elaborating (s) |")
        print("|---|--:|--:|--:|--:|--:|")
        print("| ladder, %d parts (%d nodes), %d points | %.3f | %.2f | %.4f | %.3f | %.4f |" %
              (parts, nodes, npts, t_solve, t_sweep, t_sweep / npts, t_sweep / npts / t_solve, t_reel / few))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
