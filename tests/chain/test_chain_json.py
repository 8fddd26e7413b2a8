"""Every connection of `chain --format json` carries exactly the numbers and
the verdict of the solve report's port (same code path, so equal to the last
bit), for every example circuit and the chain tests' own circuits; the JSON
has the keys cli.md (version 2) gives for chain, and every null says why."""
import math
import os
import sys

sys.path.insert(0, os.path.dirname(__file__))
from chainlib import check, circuit, example_circuits, finish, run, run_json  # noqa: E402
import circuits  # noqa: E402

FIELDS = ["zout", "zin", "ratio", "sag", "verdict"]


def same(a, b):
    if isinstance(a, float) and isinstance(b, float):
        return a == b or (math.isnan(a) and math.isnan(b))
    return a == b


def one(path):
    chain = run_json(["chain", path])
    solve = run_json(["solve", path])
    ports = solve.get("ports", {})
    conns = chain.get("connections", [])
    check(sorted(c["port"] for c in conns) == sorted(ports), f"{path}: connections != solve's ports")
    for c in conns:
        p = ports.get(c["port"], {})
        for f in FIELDS:
            check(same(c.get(f), p.get(f)), f"{path}: {c['port']}.{f}: chain {c.get(f)!r} != solve {p.get(f)!r}")
        if "budget" in p:
            check(same(c.get("budget"), p["budget"]), f"{path}: {c['port']}.budget differs")
        for f in ("zout", "zin", "ratio", "sag"):
            if c.get(f) is None:
                check(c.get("why", {}).get(f) in ("unbounded", "undefined"), f"{path}: {c['port']}.{f} null without why")
        n = len(chain.get("stages", []))
        for end in ("from_stage", "to_stage"):
            v = c.get(end)
            check(v is None and c.get("why", {}).get(end) == "none" or isinstance(v, int) and 0 <= v < n,
                  f"{path}: {c['port']}.{end} = {v!r}")
    for key in ("meta", "stages", "connections"):
        check(key in chain, f"{path}: chain JSON lacks '{key}'")
    meta = chain.get("meta", {})
    check(meta.get("program") == "loadstack" and meta.get("command") == "chain" and meta.get("file") == path,
          f"{path}: meta {meta}")
    for s in chain.get("stages", []):
        check(isinstance(s.get("name"), str) and isinstance(s.get("parts"), list), f"{path}: stage {s}")


def csv_agrees(path):
    """The CSV rows carry the same numbers (full precision) as the JSON."""
    chain = run_json(["chain", path])
    rows = run(["chain", path, "--format", "csv"]).stdout.splitlines()
    check(rows and rows[0] == "port,from_stage,to_stage,from,to,zout,zin,ratio,sag,verdict", f"{path}: CSV header")
    for c, row in zip(chain.get("connections", []), rows[1:]):
        cells = row.split(",")
        check(cells[0] == c["port"] and cells[-1] == c["verdict"], f"{path}: CSV row {row}")
        for f, cell in zip(("zout", "zin", "ratio", "sag"), cells[5:9]):
            want = c.get(f)
            check((cell == "" and want is None) or (want is not None and float(cell) == want),
                  f"{path}: CSV {c['port']}.{f} {cell!r} != {want!r}")


paths = example_circuits() + [circuit("branches.stack", circuits.BRANCHES),
                              circuit("failing.stack", circuits.FAILING), circuit("loop.stack", circuits.LOOP)]
for p in paths:
    one(p)
    csv_agrees(p)
# bad usage: an unknown picture type, html for a command without it
bad = run(["chain", paths[0], "--plot", os.path.join(os.path.dirname(paths[-1]), "x.gif")], rc=2)
check("svg, .png or .pdf" in bad.stderr, f"--plot x.gif: {bad.stderr}")
bad = run(["check", paths[0], "--format", "html"], rc=2)
check("html" in bad.stderr, f"check --format html: {bad.stderr}")
finish("chain-json")
