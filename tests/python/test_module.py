#!/usr/bin/python3
"""The Python module against the program's own JSON (the reference: the CLI's
output contract, shared/spec/cli.md), on every example circuit:

- solve: every node voltage, every part's current/voltage/power and every
  port's numbers equal the CLI's JSON exactly (the JSON prints 17 significant
  digits, which round-trip a double);
- sag, thevenin, influence: the same numbers as the CLI's JSON, exactly;
- tol with the same seed: the same worst case and Monte Carlo statistics as
  `loadstack tol --seed`, exactly;
- formula: the same expression text as `loadstack formula`;
- sweep: the same points as `loadstack sweep`, exactly, and the same values
  to 1e-12 relative (the CLI continues each point from the last solution, the
  library solves each afresh: both are refined solves of the same system);
- the bad-input corpus (tests/bad/cases): a CircuitError whose first error is
  at the same file:line:col as the CLI's first `error:` line;
- the Python example of docs/python.md runs as written.

Usage: test_module.py LOADSTACK LIBRARY SOURCE_ROOT
"""
import glob
import json
import math
import os
import re
import subprocess
import sys

exe, lib, root = (os.path.abspath(a) for a in sys.argv[1:4])
os.environ["LOADSTACK_LIBRARY"] = lib
sys.path.insert(0, os.path.join(root, "python"))
import loadstack  # noqa: E402

failures = []


def cli(*args, cwd=None):
    r = subprocess.run([exe, *args, "--format", "json"], capture_output=True, text=True, cwd=cwd, timeout=120)
    if r.returncode not in (0, 1):
        raise RuntimeError(f"{args}: exit {r.returncode}: {r.stderr}")
    return json.loads(r.stdout)


def same(what, a, b):
    """Exact equality of two numbers (None in JSON is a non-finite value)."""
    if b is None:
        ok = not math.isfinite(a)
    else:
        ok = a == b
    if not ok:
        failures.append(f"{what}: module {a!r} != CLI {b!r}")


def close(what, a, b, rel=1e-12):
    if b is None:
        ok = not math.isfinite(a)
    else:
        ok = abs(a - b) <= rel * max(abs(a), abs(b), 1e-300)
    if not ok:
        failures.append(f"{what}: module {a!r} vs CLI {b!r}")


circuits = sorted(glob.glob(os.path.join(root, "circuits", "*.stack")))
assert circuits, "no example circuits"
for path in circuits:
    name = os.path.basename(path)
    ref = cli("solve", path)
    c = loadstack.Circuit.from_file(path)
    op = c.solve()
    for node, v in ref["nodes"].items():
        same(f"{name} node {node}", op.nodes[node], v)
    for part, r in ref["parts"].items():
        for key in ("current", "voltage", "power"):
            same(f"{name} part {part}.{key}", getattr(op.parts[part], key), r.get(key))
    for pname, r in ref.get("ports", {}).items():
        p = op.ports.by_name(pname)
        same(f"{name} port {pname} from", p.driver == r["from"], True)
        for key in ("open", "loaded", "sag", "sag_rel", "zout", "zin", "ratio", "current", "budget"):
            same(f"{name} port {pname}.{key}", getattr(p, key), r.get(key))
        same(f"{name} port {pname} verdict", p.verdict == r["verdict"], True)
        same(f"{name} port {pname} by", p.by == r["by"], True)
        same(f"{name} port {pname} load_held", p.load_held == r.get("load_held", False), True)
    if not op.nodes:
        continue
    # the node with the largest voltage that is not ground: sag, thevenin, influence there
    node = max((n for n in op.nodes if n != "gnd"), key=lambda n: abs(op.nodes[n]))
    if ref.get("ports"):
        s = c.sag(node)
        rs = cli("sag", path, node)
        for key in ("voltage", "alone", "sag", "interaction"):
            same(f"{name} sag {node}.{key}", getattr(s, key), rs.get(key))
        same(f"{name} sag culprit", s.culprit == rs.get("culprit"), True)
        for share in rs["ports"]:
            mine = next(x for x in s.shares if x.port == share["name"])
            for key in ("current", "transfer", "share", "share_rel"):
                same(f"{name} sag {share['name']}.{key}", getattr(mine, key), share.get(key))
    t = c.thevenin(node)
    rt = cli("thevenin", path, node)
    for key in ("vth", "rth", "norton"):
        same(f"{name} thevenin {node}.{key}", getattr(t, key), rt.get(key))
    for pname in ref.get("ports", {}):
        pt = c.thevenin(pname)
        rp = cli("thevenin", path, pname)
        for side in ("driver", "load"):
            mine = getattr(pt, side)
            same(f"{name} thevenin {pname} {side} node", mine.node == rp[side]["node"], True)
            for key in ("vth", "rth") + (("norton",) if side == "driver" else ()):
                same(f"{name} thevenin {pname} {side}.{key}", getattr(mine, key), rp[side].get(key))
    rows = {r.part: r for r in c.influence(node)}
    ri = cli("influence", path, node)
    for item in ri["items"]:
        for key in ("per_unit", "percent_per_percent"):
            same(f"{name} influence {item['part']}.{key}", getattr(rows[item["part"]], key), item.get(key))
    tr = c.tol(node, trials=500, seed=11)
    rt = cli("tol", path, node, "--trials", "500", "--seed", "11")
    same(f"{name} tol nominal", tr.nominal, rt["nominal"])
    same(f"{name} tol wc min", tr.worst_min, rt["worst_case"]["min"])
    same(f"{name} tol wc max", tr.worst_max, rt["worst_case"]["max"])
    for key in ("mean", "std", "min", "max"):
        same(f"{name} tol {key}", getattr(tr, key), rt["monte_carlo"][key])
    for k, v in rt["monte_carlo"]["percentiles"].items():
        same(f"{name} tol pct {k}", tr.percentiles[k], v)
    same(f"{name} tol yield", tr.yield_, rt["yield"])
    c.close()

# sweep on the demo, against the CLI
demo = os.path.join(root, "circuits", "demo.stack")
c = loadstack.Circuit.from_file(demo)
sw = c.sweep("moisture_r", 1e3, 1e5, ["adc_in", "p_adc.sag"], steps=7, log=True)
rs = cli("sweep", demo, "moisture_r", "1k", "100k", "adc_in", "p_adc.sag", "--steps", "7", "--log")
for i, pt in enumerate(rs["points"]):
    same(f"sweep x[{i}]", float(sw.x[i]), pt["moisture_r"])
    close(f"sweep adc_in[{i}]", float(sw.y["adc_in"][i]), pt["adc_in"])
    close(f"sweep p_adc.sag[{i}]", float(sw.y["p_adc.sag"][i]), pt["p_adc.sag"])
# fit on the level shifter, against `loadstack fit` (the same search, so the
# same candidates, values and margins exactly)
shifter = os.path.join(root, "circuits", "level_shifter.stack")
cf = loadstack.Circuit.from_file(shifter)
before = cf.solve().nodes["buf_out"]
fr = cf.fit(top=3)
rf = cli("fit", shifter, "--top", "3")
same("fit candidates", len(fr.candidates), len(rf["candidates"]))
for i, (mine, theirs) in enumerate(zip(fr.candidates, rf["candidates"])):
    same(f"fit[{i}] values", mine.values == {k: float(v) for k, v in theirs["values"].items()}, True)
    same(f"fit[{i}] meets", mine.meets, theirs["meets"])
    same(f"fit[{i}] failed", mine.failed, theirs["failed"])
    for key in ("margin", "current"):
        same(f"fit[{i}] {key}", getattr(mine, key), theirs.get(key))
same("fit chosen", fr.chosen is not None and fr.chosen.values == rf["chosen"]["values"], True)
same("fit leaves the written values", cf.solve().nodes["buf_out"], before)
cf.close()
# formula: the same text and value as `loadstack formula`
bridge = os.path.join(root, "circuits", "strain_bridge.stack")
f = loadstack.Circuit.from_file(bridge).formula("out", symbols=["vex", "strain"])
rf = cli("formula", bridge, "out", "--symbols", "vex,strain")
same("formula text", f.text == rf["expression"], True)
if "value" in rf:
    same("formula value", f.value, rf["value"])
# set(): a let re-reads the circuit as --set does: the same nodes as --set
c.set("vsupply", "3.3V")
ref = cli("solve", demo, "--set", "vsupply=3.3V")
op = c.solve()
for node, v in ref["nodes"].items():
    same(f"set vsupply node {node}", op.nodes[node], v)

# the bad-input corpus: same first error place as the CLI
cases = os.path.join(root, "tests", "bad", "cases")
checked = 0
for path in sorted(glob.glob(os.path.join(cases, "*.stack"))):
    head = open(path, "rb").read(2000).decode("utf-8", "replace")
    m = re.search(r"^# expect: (\d+) (\S+)", head, re.M)
    if not m or m.group(2) == "-" or "# args:" in head or "# file:" in head or int(m.group(1)) != 2:
        continue
    r = subprocess.run([exe, "check", os.path.basename(path)], capture_output=True, text=True, cwd=cases,
                       timeout=60)
    first = next((ln for ln in r.stderr.splitlines() if ": error: " in ln), None)
    if first is None:
        continue
    where = first.split(": error: ")[0]
    try:
        loadstack.Circuit.from_file(path).solve()
        failures.append(f"{os.path.basename(path)}: no exception (CLI: {first})")
    except loadstack.CircuitError as e:
        got = f"{os.path.basename(e.file) if e.file else '-'}:{e.line}:{e.column}"
        want_file, want_line, want_col = where.rsplit(":", 2)
        want = f"{os.path.basename(want_file)}:{want_line}:{want_col}"
        if got != want:
            failures.append(f"{os.path.basename(path)}: exception at {got}, CLI at {want}")
        checked += 1
if checked < 50:
    failures.append(f"only {checked} bad cases compared")

# the Python example of docs/python.md runs as written (on the build tree's demo)
doc = open(os.path.join(root, "docs", "python.md")).read()
block = re.search(r"^```python\n(.*?)^```", doc, re.S | re.M).group(1)
block = block.replace("/usr/share/loadstack/circuits/", os.path.join(root, "circuits") + "/")
try:
    exec(compile(block, "docs/python.md", "exec"), {"print": lambda *a, **k: None})
except Exception as e:  # noqa: BLE001 - any failure of the documented example is a failure
    failures.append(f"docs/python.md example: {type(e).__name__}: {e}")

for f in failures[:40]:
    print("FAIL", f)
print(f"{len(circuits)} circuits, {checked} bad cases; {len(failures)} failures")
sys.exit(1 if failures else 0)
