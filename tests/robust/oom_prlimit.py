#!/usr/bin/python3
"""Out of memory is an error, never a crash or a hang: a legal large circuit
run under an address-space limit (util-linux's prlimit --as) at several sizes.

The circuit is made here: blocks that use each other twice at 18 levels, with
long instance names, so 524,287 block instances and 1,835,008 parts (under
every limit of docs/limits.md: 1,000,000 instances, 4,000,000 parts, names of
at most 1024 bytes) whose names alone would take about a gigabyte.  Under each
limit the run must end by itself with exit 2 or 3 and an "out of memory"
error that says what ran out and how much it asked for, never by a signal.
The smallest limits also reach the solve of a small circuit, where the linear
algebra library's work buffer cannot be had (it would otherwise wait forever).
The sanitizer build is skipped (its shadow memory needs terabytes of address
space, so it cannot run under these limits).
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile

LOADSTACK = os.environ.get("LOADSTACK") or sys.argv[1]
if not shutil.which("prlimit"):
    print("prlimit not found: skipped")
    sys.exit(77)
with open(LOADSTACK, "rb") as f:
    if b"__asan_init" in f.read():
        print("sanitizer build: skipped")
        sys.exit(77)

d = tempfile.mkdtemp(prefix="ls_oom_")
lines = ["# a legal, large circuit: 2^19 - 1 block instances", "ground gnd", "voltage vs gnd -> n0 5 V",
         "block c0 a b", "  resistor r1 a -> m 1k", "  resistor r2 m -> b 1k", "  resistor r3 m -> gnd 100k",
         "  resistor r4 a -> b 10k", "  resistor r5 b -> gnd 1M", "  resistor r6 m -> k 2k",
         "  resistor r7 k -> gnd 3k", "end"]
for level in range(1, 19):
    lines += [f"block c{level} a b", f"  use c{level - 1} {'x' * 48} a=a b=m",
              f"  use c{level - 1} {'y' * 48} a=m b=b", "end"]
lines.append("use c18 top a=n0 b=gnd")
big = os.path.join(d, "big.stack")
with open(big, "w") as f:
    f.write("\n".join(lines) + "\n")
small = os.path.join(d, "small.stack")
with open(small, "w") as f:
    f.write("ground gnd\nvoltage v1 gnd -> a 1 V\nresistor r1 a -> gnd 1k\n")

failures = []
for circuit, mb in ((small, 160), (small, 256), (small, 300), (big, 200), (big, 300), (big, 450)):
    args = ["prlimit", f"--as={mb * 1024 * 1024}", LOADSTACK, "check", circuit]
    try:
        p = subprocess.run(args, capture_output=True, text=True, timeout=120)
    except subprocess.TimeoutExpired:
        failures.append(f"{os.path.basename(circuit)} under {mb} MB: no end within 120 s")
        continue
    err = p.stderr
    name = f"{os.path.basename(circuit)} under {mb} MB"
    if p.returncode < 0:
        failures.append(f"{name}: killed by signal {-p.returncode}")
    elif p.returncode not in (2, 3):
        failures.append(f"{name}: exit {p.returncode}, expected 2 or 3")
    elif "out of memory" not in err or "error:" not in err:
        failures.append(f"{name}: no out-of-memory error: {err[-300:]}")
    elif not re.search(r"out of memory[^\n]*\d+\.\d MB", err) or " 0.0 MB" in err:
        failures.append(f"{name}: the message names no size: {err[-300:]}")
    else:
        print(f"ok: {name}: exit {p.returncode}: {err.strip().splitlines()[-1][:160]}")
# The memory-derived part limit (docs/limits.md): 1,835,009 parts (the source too) at the
# floor of 200 bytes a part (367 MB) cannot be held under 200 MB, so the
# circuit is refused before anything is expanded, at the use that crosses
# the limit (the last line, at the block's name), with exit 3 and the sizes.
p = subprocess.run(["prlimit", f"--as={200 * 1024 * 1024}", LOADSTACK, "check", big], capture_output=True,
                   text=True, timeout=120)
want = (f"big.stack:{len(lines)}:5: error: out of memory: with this statement the circuit expands to 1835009 parts, "
        "whose table and names alone would take about 367.0 MB, more than the 209.7 MB this process may hold")
if p.returncode != 3 or want not in p.stderr:
    failures.append(f"big.stack under 200 MB: not refused before expanding (exit {p.returncode}): {p.stderr[-300:]}")
else:
    print("ok: big.stack under 200 MB: refused before expanding, at the use that crosses the memory-derived limit")
for f in failures:
    print("FAIL:", f)
sys.exit(1 if failures else 0)
