#!/usr/bin/python3
"""One report, three formats: the JSON and CSV of the writer's reports agree.

usage: formats.py LOADSTACK SOURCE_ROOT

The reports of thevenin, sag, influence, tol and sweep are each described once
through the report writer (src/report/writer.h), which writes the format asked
for.  This test reads both machine formats of each with Python's own readers —
json (RFC 8259) and csv (RFC 4180) — and checks that they carry the same
values: every CSV field is the JSON member it names (the same double, or the
same text; an empty CSV cell where the JSON has null), every JSON null names
its reason in the object's "why", and every CSV row has the heading's number
of cells.  The circuits are the tree's own (circuits/demo.stack,
tests/tol/vent_sender.stack).
"""
import csv
import io
import json
import os
import subprocess
import sys

FAILS = []
COMPARED = [0]


def run(exe, root, args):
    """(stdout) of a run that must succeed."""
    env = {k: v for k, v in os.environ.items() if not k.startswith("LOADSTACK_")}
    env["LC_ALL"] = "C.UTF-8"
    p = subprocess.run([exe] + args + ["--quiet"], cwd=root, env=env, capture_output=True, timeout=120,
                       stdin=subprocess.DEVNULL)
    if p.returncode not in (0, 1):
        FAILS.append("%s: exit %d: %s" % (" ".join(args), p.returncode, p.stderr.decode()[-300:]))
    return p.stdout.decode()


def both(exe, root, args):
    """The JSON object and the CSV rows (lists) of one report."""
    doc = json.loads(run(exe, root, args + ["--format", "json"]))
    rows = list(csv.reader(io.StringIO(run(exe, root, args + ["--format", "csv"]))))
    width = len(rows[0])
    for r in rows:
        check(len(r) == width, args, "CSV row of %d cells under a heading of %d: %r" % (len(r), width, r))
    check_whys(doc, args)
    return doc, rows


def check(ok, args, what):
    if not ok:
        FAILS.append("%s: %s" % (" ".join(args), what))


def check_whys(node, args, path="$"):
    """Every null member of an object is explained in its "why" (a string
    at top level and in arrays is allowed to be null only with a reason too)."""
    if isinstance(node, dict):
        why = node.get("why", {})
        for k, v in node.items():
            if v is None and k not in why:
                check(False, args, "%s.%s is null without a reason" % (path, k))
            check_whys(v, args, path + "." + k)
    elif isinstance(node, list):
        for i, v in enumerate(node):
            check_whys(v, args, "%s[%d]" % (path, i))


def same(json_value, cell, args, name):
    """A CSV cell is the JSON value: numbers as the same double, null as empty."""
    COMPARED[0] += 1
    if json_value is None:
        ok = cell == ""
    elif isinstance(json_value, bool):
        ok = cell == ("true" if json_value else "false")
    elif isinstance(json_value, (int, float)):
        ok = cell != "" and float(cell) == float(json_value)
    else:
        ok = cell == str(json_value)
    check(ok, args, "%s: CSV %r, JSON %r" % (name, cell, json_value))


def flatten(node, sep, prefix=""):
    """{path: value} of the scalar members of nested objects (no arrays)."""
    out = {}
    for k, v in node.items():
        if k in ("meta", "why", "warnings"):
            continue
        if isinstance(v, dict):
            out.update(flatten(v, sep, prefix + k + sep))
        elif not isinstance(v, list):
            out[prefix + k] = v
    return out


def fields(exe, root, args, sep, json_only):
    """A FIELD,VALUE report: each field is the JSON member of that path."""
    doc, rows = both(exe, root, args)
    check(rows[0] == ["field", "value"], args, "heading %r" % rows[0])
    flat = flatten(doc, sep)
    csv_fields = {r[0]: r[1] for r in rows[1:]}
    for name, cell in csv_fields.items():
        if name in flat:
            same(flat[name], cell, args, name)
    for name in flat:
        if name.split(sep)[-1] not in json_only:
            check(name in csv_fields, args, "JSON %s has no CSV row" % name)
    return doc, csv_fields


def table(exe, root, args, key, rows_of):
    """A table report: CSV row i is JSON item i of doc[key] (rows_of picks the
    CSV rows of that table)."""
    doc, rows = both(exe, root, args)
    head = rows[0]
    items = doc[key]
    body = rows_of(rows[1:])
    check(len(body) == len(items), args, "%d CSV rows, %d JSON items" % (len(body), len(items)))
    for item, row in zip(items, body):
        cells = dict(zip(head, row))
        for k, v in item.items():
            if k in cells:
                same(v, cells[k], args, "%s.%s" % (key, k))
    return doc, rows


def main():
    exe, root = os.path.abspath(sys.argv[1]), sys.argv[2]
    demo, vent = "circuits/demo.stack", "tests/tol/vent_sender.stack"
    # thevenin: driver_load_r is driver.load.r
    doc, _ = fields(exe, root, ["thevenin", demo, "p_adc", "--load", "10k", "--meter", "1M"], "_", ("node", "port"))
    check("driver" in doc and "load" in doc, ["thevenin"], "no driver and load sides")
    fields(exe, root, ["thevenin", vent, "adc", "--meter", "10M"], "_", ("node",))
    # tol: monte_carlo.mean is monte_carlo.mean; the parts by name
    for args in (["tol", vent, "adc", "--trials", "200"], ["tol", demo, "probe", "--trials", "100"]):
        doc, cf = fields(exe, root, args, ".", ())
        for p in doc["worst_case"]["parts"]:
            for k in ("tol", "at_min", "at_max", "share"):
                name = "worst_case.parts.%s.%s" % (p["part"], k)
                if k in p and (p[k] is not None or name in cf):
                    same(p[k], cf.get(name, "<missing>"), args, name)
        for c in doc["checks"]:
            same(c["worst_case"], cf.get("check.%s.worst_case" % c["text"], "<missing>"), args, "check")
    # sag: the ports' rows, then the what-if rows
    args = ["sag", demo, "adc_in", "--what-if"]
    doc, rows = table(exe, root, args, "ports", lambda b: [r for r in b if r[0] == "ports"])
    table(exe, root, args, "what_if", lambda b: [r for r in b if r[0] == "what_if"])
    # influence and sweep: one row per item / point
    table(exe, root, ["influence", demo, "probe"], "items", lambda b: b)
    table(exe, root, ["sweep", vent, "track", "33", "470", "adc", "r_pull.power", "--steps", "6"], "points",
          lambda b: b)
    # (a reader that found nothing to compare would pass vacuously)
    check(COMPARED[0] >= 200, ["all"], "only %d values compared" % COMPARED[0])
    for f in FAILS:
        print("FAIL", f)
    print("%d values compared, %d disagreements" % (COMPARED[0], len(FAILS)))
    return 1 if FAILS else 0


if __name__ == "__main__":
    sys.exit(main())
