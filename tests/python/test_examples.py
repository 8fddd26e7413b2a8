#!/usr/bin/python3
"""The bench example (python/examples/bench_check.py): every reading it flags
is exactly one outside the worst case that `loadstack tol` reports for its node
(the program's JSON is the reference), it exits 1 when it flags any, and the
sweep example runs (its plot is optional).

Usage: test_examples.py LIBRARY SOURCE_ROOT   (the program is $LOADSTACK or build/src/loadstack)
"""
import csv
import json
import os
import subprocess
import sys

lib, root = (os.path.abspath(a) for a in sys.argv[1:3])
exe = os.environ.get("LOADSTACK") or os.path.join(os.path.dirname(lib), "loadstack")
env = dict(os.environ, LOADSTACK_LIBRARY=lib, PYTHONPATH=os.path.join(root, "python"))
ex = os.path.join(root, "python", "examples")
demo = os.path.join(root, "circuits", "demo.stack")
r = subprocess.run([sys.executable, os.path.join(ex, "bench_check.py"), demo], capture_output=True, text=True,
                   env=env, timeout=120)
print(r.stdout, r.stderr)
flagged = {ln.split()[0] for ln in r.stdout.splitlines() if ln.endswith("OUT OF SPREAD")}
want = set()
with open(os.path.join(ex, "bench_readings.csv"), newline="") as f:
    for row in csv.DictReader(f):
        t = json.loads(subprocess.run([exe, "tol", demo, row["node"], "--trials", "10", "--format", "json"],
                                      capture_output=True, text=True, timeout=60).stdout)
        m = float(row["measured_V"])
        if not (t["worst_case"]["min"] <= m <= t["worst_case"]["max"]):
            want.add(row["node"])
fail = []
if flagged != want:
    fail.append(f"flagged {sorted(flagged)}, the CLI's worst case puts {sorted(want)} outside")
if not want:
    fail.append("the shipped readings should hold at least one out-of-spread reading")
if r.returncode != (1 if want else 0):
    fail.append(f"exit {r.returncode}")
s = subprocess.run([sys.executable, os.path.join(ex, "sweep_plot.py"), demo, "--output",
                    os.path.join(os.environ.get("TMPDIR", "/tmp"), f"loadstack-sweep-{os.getpid()}.png")], capture_output=True, text=True, env=env,
                   timeout=120)
if s.returncode != 0 or s.stdout.count("\n") < 32:
    fail.append(f"sweep example: exit {s.returncode}: {s.stderr}")
for f in fail:
    print("FAIL", f)
sys.exit(1 if fail else 0)
