#!/usr/bin/python3
"""Hold bench readings against the design.

Reads a CSV of measured node voltages (columns: node, measured_V, and an
optional note), solves the circuit, runs a tolerance study of every measured
node from the parts' tol= options, and prints one line per reading: the
design's nominal value, the worst-case spread, the Monte Carlo 0.1 %..99.9 %
spread, and a flag where the reading lies outside the worst case.

    bench_check.py [CIRCUIT [READINGS.csv]] [--seed N] [--trials N]

Defaults: the installed demo circuit and the readings shipped beside this
script.  Exit status 1 when a reading is out of spread.
"""
import argparse
import csv
import os
import sys

import loadstack

HERE = os.path.dirname(os.path.abspath(__file__))
DEMO = "/usr/share/loadstack/circuits/demo.stack"


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("circuit", nargs="?", default=DEMO)
    ap.add_argument("readings", nargs="?", default=os.path.join(HERE, "bench_readings.csv"))
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--trials", type=int, default=2000)
    a = ap.parse_args()

    try:
        circuit = loadstack.Circuit.from_file(a.circuit)
        circuit.solve()
    except loadstack.LoadstackError as e:
        print(f"{e}", file=sys.stderr)
        return 2
    with open(a.readings, newline="") as f:
        rows = [r for r in csv.DictReader(f) if r.get("node") and not r["node"].startswith("#")]

    print(f"{circuit.title}: {len(rows)} readings against the design "
          f"({a.trials} Monte Carlo trials, seed {a.seed})\n")
    print(f"{'node':<10} {'measured':>10} {'nominal':>10} {'worst case':>23} {'Monte Carlo 0.1..99.9 %':>25}  flag")
    flagged = 0
    for r in rows:
        node, measured = r["node"].strip(), float(r["measured_V"])
        try:
            t = circuit.tol(node, trials=a.trials, seed=a.seed)
        except (KeyError, loadstack.LoadstackError) as e:
            print(f"{node:<10} {measured:>10.4f}  (not a node of the circuit: {e})")
            flagged += 1
            continue
        lo, hi = t.worst_min, t.worst_max
        out = not (lo <= measured <= hi)
        flagged += out
        print(f"{node:<10} {measured:>10.4f} {t.nominal:>10.4f} {lo:>11.4f} .. {hi:<9.4f} "
              f"{t.percentiles['0.1']:>11.4f} .. {t.percentiles['99.9']:<10.4f}  "
              f"{'OUT OF SPREAD' if out else 'ok'}")
    print(f"\n{flagged} of {len(rows)} readings out of the worst-case spread")
    return 1 if flagged else 0


if __name__ == "__main__":
    sys.exit(main())
