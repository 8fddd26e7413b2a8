#!/usr/bin/python3
"""What the chain costs on top of the solve: a ladder of N stages joined by
N-1 ports (circuits.long_chain), timed as `solve --format json`, `chain
--format json` and `chain --plot FILE.svg`; best of R runs, wall seconds and
peak resident memory from /usr/bin/time.  Not a test: a benchmark to run by
hand (docs/chain.md quotes one run).

usage: tests/chain/bench_chain.py LOADSTACK [N=3000] [R=3]
"""
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(__file__))
from circuits import long_chain  # noqa: E402

exe = os.path.abspath(sys.argv[1])
n = int(sys.argv[2]) if len(sys.argv) > 2 else 3000
reps = int(sys.argv[3]) if len(sys.argv) > 3 else 3
tmp = tempfile.mkdtemp(prefix="ls_chain_bench_")
path = os.path.join(tmp, "ladder.stack")
with open(path, "w") as f:
    f.write(long_chain(n))
rows = [("solve --format json", ["solve", path, "--format", "json"]),
        ("chain --format json", ["chain", path, "--format", "json"]),
        ("chain --plot ladder.svg", ["chain", path, "--plot", os.path.join(tmp, "ladder.svg")])]
print(f"| {n} stages, {n - 1} ports | wall s (best of {reps}) | peak MB |\n| --- | --- | --- |")
for name, args in rows:
    best = None
    for _ in range(reps):
        p = subprocess.run(["/usr/bin/time", "-f", "%e %M", exe] + args, capture_output=True, text=True)
        wall, kb = p.stderr.strip().splitlines()[-1].split()
        if best is None or float(wall) < best[0]:
            best = (float(wall), int(kb) / 1024)
    print(f"| `{name}` | {best[0]:.2f} | {best[1]:.0f} |")
