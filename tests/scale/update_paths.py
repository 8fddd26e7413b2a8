#!/usr/bin/python3
"""Sweeps and tol studies give the same answers by every re-solve path.

Usage: update_paths.py LOADSTACK_BINARY [--random 30] [--seed 23]

A sweep point or a tol trial of a linear circuit changes a few parts' values.
Three ways to re-solve it, chosen by two variables:

  plain    LOADSTACK_RESTAMP_ALL=1 LOADSTACK_LOWRANK=0: every part restamped,
           the matrix refactored (the simple path);
  patched  LOADSTACK_LOWRANK=0: only the changed parts' entries restamped
           (src/mna/patch.c), refactored;
  updated  LOADSTACK_LOWRANK=1: patched, and the factor kept and updated by
           the Woodbury identity wherever the update is safe
           (src/solve/update.c).

plain and patched do the same arithmetic on the same matrix, so their reports
must be identical byte for byte.  updated solves the same matrix another way
(refined against the true matrix): every number must agree with plain to
1e-12 of the largest magnitude of its column (a sweep's quantity over the
points, a tol statistic).  The reference is the simple path itself; the
simple path is checked against numpy by tests/ref (restamp_agree.py,
random_mna.py).

Circuits: every circuit in circuits/, docs/examples/ and docs/tutorial/ with
a let, swept over [x/2, 2x] for each let (quantities: up to 12 nodes from its
`solve` report); tol on the tree's circuits that have tol= parts; the random
networks of tests/ref/random_mna.py with a resistor made a let and swept; and
a 24 x 24 grid with one cell swept (where the update pays by itself).
"""

import argparse
import glob
import json
import os
import random
import re
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))
sys.path.insert(0, os.path.join(ROOT, "tests", "ref"))
import random_mna  # noqa: E402

REL = 1e-12
MODES = {
    "plain": {"LOADSTACK_RESTAMP_ALL": "1", "LOADSTACK_LOWRANK": "0"},
    "patched": {"LOADSTACK_LOWRANK": "0"},
    "updated": {"LOADSTACK_LOWRANK": "1"},
}


def run(binary, args, mode):
    env = dict(os.environ)
    env.pop("LOADSTACK_RESTAMP_ALL", None)
    env.pop("LOADSTACK_LOWRANK", None)
    env.update(MODES[mode])
    p = subprocess.run([binary] + args, env=env, capture_output=True, text=True, timeout=120)
    return p.returncode, p.stdout


def numbers(text):
    """The JSON report's numbers, path by path."""
    out = {}

    def walk(x, path):
        if isinstance(x, dict):
            for k, v in x.items():
                walk(v, path + (k,))
        elif isinstance(x, list):
            for i, v in enumerate(x):
                walk(v, path + (i,))
        else:
            out[path] = x
    walk(json.loads(text), ())
    return out


def column(path):
    """A number's column: its path without list indices (the points of a sweep)."""
    return tuple(p for p in path if not isinstance(p, int))


def agree(a_text, b_text):
    """Same keys and strings, numbers within REL of their column's largest magnitude."""
    a, b = numbers(a_text), numbers(b_text)
    if a.keys() != b.keys():
        return ["the reports have different fields"]
    scale = {}
    for path, v in a.items():
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            c = column(path)
            scale[c] = max(scale.get(c, 0.0), abs(v))
    bad = []
    for path, v in a.items():
        w = b[path]
        if isinstance(v, (int, float)) and not isinstance(v, bool) and isinstance(w, (int, float)):
            if abs(v - w) > REL * scale[column(path)]:
                bad.append("%s: %r against %r" % ("/".join(map(str, path)), v, w))
        elif v != w:
            bad.append("%s: %r against %r" % ("/".join(map(str, path)), v, w))
    return bad


def compare(binary, args, label, counts):
    out = {m: run(binary, args, m) for m in MODES}
    rc = {m: out[m][0] for m in MODES}
    if len(set(rc.values())) != 1:
        counts["fail"] += 1
        print("FAIL %s: exit codes differ %r" % (label, rc))
        return
    if rc["plain"] not in (0, 1):   # 1: an expect failed, the report is still written
        counts["skip"] += 1
        return
    problems = []
    if out["plain"][1] != out["patched"][1]:
        problems.append("patched report differs from the plain one")
    problems += agree(out["plain"][1], out["updated"][1])
    counts["runs"] += 1
    if problems:
        counts["fail"] += 1
        print("FAIL %s" % label)
        for p in problems[:5]:
            print("     " + p)


def lets(text):
    """(name, value) of each let with a plain number value."""
    found = []
    for m in re.finditer(r"^let\s+(\w+)\s*=\s*([-+0-9.eE]+)\s*([a-zA-Z]*)", text, re.M):
        try:
            v = float(m.group(2))
        except ValueError:
            continue
        prefix = {"k": 1e3, "M": 1e6, "m": 1e-3, "u": 1e-6, "n": 1e-9}.get(m.group(3)[:1], 1)
        if m.group(3) in ("V", "ohm", "A", "W", "mA", "uA", "mV", "k", "M", "m", "u", "n", "kohm", ""):
            found.append((m.group(1), v * (prefix if m.group(3) not in ("V", "ohm", "A", "W") else 1)))
    return found


def nodes_of(binary, path):
    rc, out = run(binary, ["solve", path, "--format", "json", "--quiet"], "plain")
    if rc not in (0, 1):
        return []
    try:
        rep = json.loads(out)
    except json.JSONDecodeError:
        return []
    names = list(rep.get("nodes", {}).keys()) if isinstance(rep.get("nodes"), dict) else \
        [n.get("name") for n in rep.get("nodes", []) if isinstance(n, dict)]
    return [n for n in names if n][:12]


def sweep_args(path, let, value, qs):
    lo, hi = (value / 2, value * 2) if value != 0 else (-1.0, 1.0)
    return ["sweep", path, let, repr(lo), repr(hi)] + qs + ["--steps", "9", "--format", "json", "--quiet"]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("--random", type=int, default=30)
    ap.add_argument("--seed", type=int, default=23)
    a = ap.parse_args()
    counts = {"runs": 0, "fail": 0, "skip": 0}
    files = sorted(glob.glob(os.path.join(ROOT, "circuits", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "docs", "examples", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "docs", "tutorial", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "tests", "tol", "*.stack")))
    for path in files:
        with open(path, encoding="utf-8") as f:
            text = f.read()
        qs = nodes_of(a.binary, path)
        if not qs:
            continue
        name = os.path.relpath(path, ROOT)
        for let, value in lets(text):
            compare(a.binary, sweep_args(path, let, value, qs), "sweep %s %s" % (name, let), counts)
        if "tol=" in text:
            compare(a.binary, ["tol", path, qs[0], "--trials", "400", "--format", "json", "--quiet"],
                    "tol %s %s" % (name, qs[0]), counts)
    rng = random.Random(a.seed)
    with tempfile.TemporaryDirectory(prefix="loadstack_update_") as tmp:
        for i in range(1, a.random + 1):
            net = random_mna.generate(rng, rng.randint(4, 40), i)
            res = [p for p in net.parts if p["kind"] == "resistor"]
            if not res:
                continue
            part = rng.choice(res)
            lines = []
            for ln in net.text.splitlines():
                w = ln.split()
                if len(w) >= 5 and w[0] == "resistor" and w[1] == part["name"]:
                    ln = "resistor %s %s -> %s rsw" % (part["name"], part["a"], part["b"])
                lines.append(ln)
                if w[:1] == ["ground"]:
                    lines.append("let rsw = %r" % part["r"])
            path = os.path.join(tmp, "net%03d.stack" % i)
            with open(path, "w", encoding="utf-8") as f:
                f.write("\n".join(lines) + "\n")
            qs = [n for n in net.nodes if n != net.ground][:12]
            compare(a.binary, sweep_args(path, "rsw", part["r"], qs), "sweep random network %d" % i, counts)
        side = 24
        grid = ["title \"heated plate, %d x %d cells\"" % (side, side), "ground g", "let rk = 2",
                "voltage vin g -> n0_0 1 V"]
        for i in range(side):
            for j in range(side):
                if j + 1 < side:
                    val = "rk" if (i, j) == (side // 2, side // 2) else "1"
                    grid.append("resistor h%d_%d n%d_%d -> n%d_%d %s" % (i, j, i, j, i, j + 1, val))
                if i + 1 < side:
                    grid.append("resistor v%d_%d n%d_%d -> n%d_%d 1" % (i, j, i, j, i + 1, j))
        grid.append("resistor rload n%d_%d -> g 1" % (side - 1, side - 1))
        path = os.path.join(tmp, "grid.stack")
        with open(path, "w", encoding="utf-8") as f:
            f.write("\n".join(grid) + "\n")
        compare(a.binary, sweep_args(path, "rk", 2.0, ["n%d_%d" % (side // 2, side // 2), "n3_5"]),
                "sweep grid", counts)
    print("update_paths: %d comparisons, %d failed, %d skipped (no report)" %
          (counts["runs"], counts["fail"], counts["skip"]))
    return 1 if counts["fail"] or counts["runs"] < 20 else 0


if __name__ == "__main__":
    sys.exit(main())
