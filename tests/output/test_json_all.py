#!/usr/bin/python3
"""Machine output of every command over every example circuit.

Outside references:
  - Python's json module (the standard library's RFC 8259 reader) with NaN and
    Infinity refused (parse_constant raises): every JSON report must be strict
    JSON;
  - Python's repr of a float, the shortest text that reads back to the same
    double (Python docs, "Floating Point Arithmetic"; David Gay's algorithm):
    every number must have the same decimal value as repr's text, i.e. be the
    shortest exact text, and read back to the double it came from;
  - the program's own text report, read with a small parser of engineering
    notation: every number the text shows agrees with the JSON value within
    the text's 4 printed significant digits, and "unbounded"/"undefined" in
    the text is a null in JSON whose "why" says the same word;
  - Python's csv module (RFC 4180): the solve CSV holds the same values (the
    same shortest text), verdicts, op-amp limits, ADC verdicts and warnings
    as the JSON, and check's CSV uses the same pass/fail words as solve's.
"""
import csv
import glob
import io
import json
import math
import os
import re
import subprocess
import sys
from decimal import Decimal

LOADSTACK = os.path.abspath(os.environ.get("LOADSTACK") or sys.argv[1])
ROOT = os.environ.get("SOURCE_ROOT") or os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
WHY_WORDS = {"unbounded", "undefined", "unsolved", "none"}
failures = []
passes = [0]


def fail(msg):
    failures.append(msg)
    print("FAIL:", msg)


def check(cond, msg):
    if cond:
        passes[0] += 1
    else:
        fail(msg)
    return cond


def run(args, cwd):
    p = subprocess.run([LOADSTACK] + args, capture_output=True, cwd=cwd, timeout=120)
    return p.returncode, p.stdout.decode("utf-8"), p.stderr.decode("utf-8", "replace")


# ---- strict JSON with every number's text kept ------------------------------------------

def refuse(name):
    raise ValueError(f"non-standard JSON constant {name}")


def load_json(text, what):
    """Parse strictly; check every number's text; returns the object or None."""
    texts = []

    def num(t):
        texts.append(t)
        return float(t) if any(c in t for c in ".eE") else int(t)

    try:
        obj = json.loads(text, parse_constant=refuse, parse_float=num, parse_int=num)
    except ValueError as ex:
        fail(f"{what}: not strict JSON ({ex})")
        return None
    bad = []
    for t in texts:
        v = float(t)
        if not math.isfinite(v) or Decimal(t) != Decimal(repr(v)) or t.startswith("-0") and v == 0:
            bad.append(t)
        elif t.startswith("-0") and not t.startswith("-0."):
            bad.append(t)
    check(not bad, f"{what}: {len(texts)} numbers, each the shortest exact text (as Python's repr); not: {bad[:5]}")
    return obj


def walk_why(o, path, what):
    """Every null has a why with a known word; every why names a null."""
    if isinstance(o, dict):
        why = o.get("why", {})
        for k, v in o.items():
            if v is None:
                check(isinstance(why, dict) and why.get(k) in WHY_WORDS,
                      f"{what}: {path}.{k} is null, why says {why.get(k) if isinstance(why, dict) else why!r}")
            elif k != "why":
                walk_why(v, f"{path}.{k}", what)
        if isinstance(why, dict):
            for k in why:
                check(k in o and o[k] is None, f"{what}: {path}.why.{k} names no null")
    elif isinstance(o, list):
        for i, v in enumerate(o):
            check(v is not None, f"{what}: {path}[{i}] is a bare null in an array")
            walk_why(v, f"{path}[{i}]", what)


def meta_ok(o, command, file, what):
    m = o.get("meta") if isinstance(o, dict) else None
    check(isinstance(m, dict) and m.get("program") == "loadstack" and m.get("command") == command
          and isinstance(m.get("version"), str) and m.get("file") == file and isinstance(m.get("set"), dict),
          f"{what}: meta is {m}")
    check(list(o)[0] == "meta", f"{what}: the report starts with meta")


# ---- engineering notation of the text report --------------------------------------------

PREFIX = {"f": -15, "p": -12, "n": -9, "u": -6, "\u00b5": -6, "m": -3, "": 0, "k": 3, "M": 6, "G": 9, "T": 12}
ENG = re.compile(r"^(-?\d+(?:\.\d+)?(?:e[+-]?\d+)?)(?: ?([fpnu\u00b5mkMGT]?)(?:V|A|W|\u03a9|ohm|F|degC)?)?$")


def eng(text):
    """(value, digits) of an engineering-notation cell, or the word."""
    text = text.strip()
    if text in ("unbounded", "-unbounded", "undefined"):
        return text.lstrip("-"), None
    m = ENG.match(text)
    if not m:
        return None, None
    mant = m.group(1)
    digits = len(mant.replace("-", "").replace(".", "").split("e")[0].lstrip("0")) or 1
    return float(mant) * 10.0 ** PREFIX[m.group(2) or ""], digits


def agrees(json_value, why, cell, what):
    v, digits = eng(cell)
    if isinstance(v, str):
        return check(json_value is None and why == v, f"{what}: text says {v}, JSON has {json_value} (why {why})")
    if v is None:
        return check(False, f"{what}: cannot read the text cell {cell!r}")
    if json_value is None:
        return check(False, f"{what}: text shows {cell!r}, JSON has null ({why})")
    if v == 0:
        return check(abs(json_value) < 1e-300 or cell.strip().startswith("0"), f"{what}: {cell!r} vs {json_value}")
    # half a unit in the last printed digit (of the larger of the two decades: rounding may carry)
    e = math.floor(math.log10(max(abs(v), abs(json_value)))) if json_value else math.floor(math.log10(abs(v)))
    tol = 0.5 * 10.0 ** (e - digits + 1) * (1 + 1e-9)
    return check(abs(json_value - v) <= tol, f"{what}: text {cell!r} vs JSON {json_value!r} (tolerance {tol:g})")


def table(text, heading):
    """Rows (lists of cells) of the aligned table under a heading line."""
    lines = text.splitlines()
    for i, line in enumerate(lines):
        if line.startswith(heading):
            rows = []
            for row in lines[i + 2:]:
                if not row.startswith("  ") or row.startswith("  ->") or row.startswith("  note:"):
                    break
                rows.append(re.split(r"\s{2,}", row.strip()))
            return rows
    return []


# ---- the commands ------------------------------------------------------------------------

def solve_checks(path, cwd, name):
    what = f"solve {name}"
    rc, out, err = run(["solve", name, "--format", "json"], cwd)
    if rc != 0:
        return None
    j = load_json(out, what)
    if j is None:
        return None
    meta_ok(j, "solve", name, what)
    walk_why(j, "solve", what)
    for k in ("title", "solver", "nodes", "parts", "ports", "opamps", "adcs", "checks", "passed", "failed", "warnings"):
        check(k in j, f"{what}: key {k}")
    check(j["passed"] + j["failed"] == len(j["checks"]) and j["passed"] == sum(c["pass"] for c in j["checks"]),
          f"{what}: passed/failed count the checks")
    for w in j["warnings"]:
        check(w["level"] in ("warning", "caution") and ("column" in w) and ("line" in w), f"{what}: warning {w}")
        check((w["level"] == "caution") == w["message"].startswith("caution"), f"{what}: level of {w['code']}")
    rc, text, err = run(["solve", name], cwd)
    check(len(table(text, "Nodes")) == len(j["nodes"]) and len(table(text, "Ports")) == len(j["ports"]) and
          len(table(text, "Op-amps")) == len(j["opamps"]) and len(table(text, "ADC inputs")) == len(j["adcs"]),
          f"{what}: the text shows as many nodes, ports, op-amps and ADCs as the JSON")
    for row in table(text, "Nodes"):
        agrees(j["nodes"].get(row[0]), None, row[1], f"{what}: node {row[0]}")
    for row in table(text, "Parts"):
        p = j["parts"].get(row[0], {})
        for col, key in ((2, "current"), (3, "voltage"), (4, "power")):
            agrees(p.get(key), p.get("why", {}).get(key), row[col], f"{what}: {row[0]}.{key}")
    for row in table(text, "Ports"):
        p = j["ports"].get(row[0], {})
        why = p.get("why", {})
        for col, key in ((2, "open"), (3, "loaded"), (6, "zout"), (7, "zin"), (8, "ratio"), (9, "current")):
            agrees(p.get(key), why.get(key), row[col], f"{what}: {row[0]}.{key}")
        if row[5] == "-":
            check(p.get("budget") is None and why.get("budget") == "none", f"{what}: {row[0]} has no budget")
        else:
            agrees(p.get("budget"), why.get("budget"), row[5].split(" (")[0], f"{what}: {row[0]}.budget")
        verdict = row[10].split(" ")[0]
        by = row[10].split("(")[-1].rstrip(")")
        check(p.get("verdict") == verdict and p.get("by") == by,
              f"{what}: {row[0]} verdict text {row[10]} JSON {p.get('verdict')} by {p.get('by')}")
        # the "To meet it" line under the table and the port's "fix"
        fix = p.get("fix")
        if fix and "ratio_min" in fix:  # by a budget: the ratio it needs, then zout and zin
            adv = re.search(r"-> " + re.escape(row[0]) + r": .*?To meet it: zin/zout of at least (\S+),"
                            r".*?zout at most (\S+ \S+).*?zin at least (\S+ [^\s.,]+)", text, re.M)
            check(adv is not None, f"{what}: {row[0]} budget advice in text with fix in JSON")
            if adv:
                for g, key in ((1, "ratio_min"), (2, "zout_max"), (3, "zin_min")):
                    agrees(fix[key], None, adv.group(g), f"{what}: {row[0]} fix {key}")
            continue
        adv = re.search(r"-> " + re.escape(row[0]) + r": .*?at most (.+?), or .*?at least (.+?)[,.]( or|$)", text, re.M)
        check((adv is None) == (fix is None), f"{what}: {row[0]} advice in text and fix in JSON go together")
        if adv and fix:
            first, second = list(fix.values())
            agrees(first, None, adv.group(1), f"{what}: {row[0]} fix {list(fix)[0]}")
            agrees(second, None, adv.group(2), f"{what}: {row[0]} fix {list(fix)[1]}")
    for row in table(text, "Op-amps"):
        o = j["opamps"].get(row[0], {})
        agrees(o.get("out"), None, row[1], f"{what}: {row[0]}.out")
        check(row[-1].split(" ")[0] == o.get("limited"), f"{what}: {row[0]} limit {row[-1]} vs {o.get('limited')}")
    for row in table(text, "ADC inputs"):
        a = j["adcs"].get(row[0], {})
        agrees(a.get("input"), None, row[1], f"{what}: {row[0]}.input")
        check(str(a.get("code")) == row[2], f"{what}: {row[0]} code")
        check(row[7].split(":")[0] == a.get("verdict"), f"{what}: {row[0]} verdict {row[7]} vs {a.get('verdict')}")
        check(("source too high" in row[7]) == a.get("source_too_high"), f"{what}: {row[0]} source_too_high")
    csv_checks(j, cwd, name)
    return j


def csv_checks(j, cwd, name):
    what = f"solve {name} --format csv"
    rc, out, err = run(["solve", name, "--format", "csv"], cwd)
    rows = list(csv.reader(io.StringIO(out)))
    check(rows and rows[0] == ["section", "name", "field", "value"], f"{what}: header {rows[:1]}")
    cell = {(r[0], r[1], r[2]): r[3] for r in rows[1:]}

    def same(section, nm, field, v):
        got = cell.get((section, nm, field))
        want = "" if v is None else v if isinstance(v, str) else repr(float(v))
        ok = got is not None and (got == want if isinstance(v, str) or v is None else float(got) == float(want))
        check(ok, f"{what}: {section},{nm},{field} is {got!r}, JSON {v!r}")

    for n, v in j["nodes"].items():
        same("node", n, "voltage", v)
    for n, p in j["parts"].items():
        for f in ("kind", "current", "voltage", "power"):
            same("part", n, f, p[f])
    for n, p in j["ports"].items():
        for f in ("open", "loaded", "sag", "zout", "zin", "ratio", "current", "budget", "by", "verdict", "mode"):
            same("port", n, f, p[f])
    for n, o in j["opamps"].items():
        for f in ("out", "limited", "dissipation"):
            same("opamp", n, f, o[f])
    for n, a in j["adcs"].items():
        for f in ("input", "code", "unloaded", "error_lsb", "budget_lsb", "source", "verdict"):
            same("adc", n, f, a[f])
        same("adc", n, "source_too_high", "true" if a["source_too_high"] else "false")
    for c in j["checks"]:
        same("check", c["text"], "result", "pass" if c["pass"] else "fail")
    same("checks", "all", "passed", j["passed"])
    same("checks", "all", "failed", j["failed"])
    for k, w in enumerate(j["warnings"], 1):
        for f in ("code", "level", "message", "file", "line", "column"):
            same("warning", str(k), f, w[f] if isinstance(w[f], str) or w[f] is None else str(w[f]))
    check(len({r[1] for r in rows[1:] if r[0] == "warning"}) == len(j["warnings"]), f"{what}: one row set per warning")
    # check's CSV says pass/fail with the same words
    rc, out, err = run(["check", name, "--format", "csv"], cwd)
    crow = list(csv.DictReader(io.StringIO(out)))
    check(all(r["result"] in ("pass", "fail") for r in crow), f"check {name} --format csv: pass/fail words")
    for r in crow:
        if ("check", r["text"], "result") in cell:
            check(cell[("check", r["text"], "result")] == r["result"], f"check vs solve CSV: {r['text']}")


def let_of(path):
    with open(path, encoding="utf-8") as f:
        for line in f:
            m = re.match(r"\s*let\s+(\w+)\s*=\s*([-0-9.eE]+)\s*([a-zA-Z]*)", line)
            if m:
                return m.group(1), float(m.group(2)), m.group(3)
    return None


def other_commands(path, cwd, name, j):
    node = next((n for n in j["nodes"] if n != "gnd" and not n.startswith("gnd")), None)
    if not node:
        return
    cases = [
        (["thevenin", name, node, "--load", "10k", "--meter", "1M"], "thevenin"),
        (["sag", name, node], "sag"),
        (["influence", name, node], "influence"),
        (["tol", name, node, "--trials", "300"], "tol"),
        (["check", name], "check"),
        (["formula", name, node], "formula"),
        (["chain", name], "chain"),
    ]
    lt = let_of(path)
    if lt:
        let, v, unit = lt
        cases.append((["sweep", name, let, repr(v * 0.9) + unit, repr(v * 1.1) + unit, node, "--steps", "5",
                       "--set", f"{let}={v!r}{unit}"], "sweep"))
    for args, command in cases:
        what = " ".join(args)
        rc, out, err = run(args + ["--format", "json"], cwd)
        if command == "formula" and rc != 0:
            continue  # a circuit too large or with parts formula does not take: refused with a message
        if rc not in (0, 1):
            check(False, f"{what}: exit {rc}\n{err}")
            continue
        o = load_json(out, what)
        if o is None:
            continue
        meta_ok(o, command, name, what)
        walk_why(o, command, what)
        if command == "sweep":
            check(o["meta"]["set"].get(lt[0]) is not None, f"{what}: meta.set holds the --set")
        rc, text, err = run(args, cwd)
        if command == "thevenin":
            m = re.search(r"vth\s+(.+)", text)
            agrees(o["vth"], None, m.group(1) if m else "?", f"{what}: vth")
            m = re.search(r"rth\s+(.+)", text)
            agrees(o["rth"], o.get("why", {}).get("rth"), m.group(1) if m else "?", f"{what}: rth")
            mt = o["meter"]
            if o["vth"] == 0:
                check(mt["error_rel"] is None and mt["why"]["error_rel"] == "undefined", f"{what}: error_rel of 0 V")
            else:
                check(abs(mt["error_rel"] * o["vth"] - mt["error"]) <= 1e-12 * abs(o["vth"]),
                      f"{what}: error (V) and error_rel (fraction of vth)")
        elif command == "chain":
            for c in o["connections"]:
                p = j["ports"].get(c["port"], {})
                check(c["verdict"] == p.get("verdict") and c["by"] == p.get("by"),
                      f"{what}: connection {c['port']} has solve's verdict")
                for k in ("zout", "zin", "ratio", "sag", "budget"):
                    check(c[k] == p.get(k), f"{what}: connection {c['port']} {k} as in solve")
        elif command == "influence":
            m = re.search(r" = (.+)$", text.splitlines()[0])
            agrees(o["value"], None, m.group(1) if m else "?", f"{what}: value")
        elif command == "sweep":
            rows = [re.split(r"\s{2,}", ln.strip()) for ln in text.splitlines()[3:] if ln.strip()]
            check(len(rows) == len(o["points"]) == 5, f"{what}: 5 rows in text and JSON")
            for row, pt in zip(rows, o["points"]):
                agrees(pt[lt[0]], None, row[0], f"{what}: the let")
                agrees(pt[node], pt.get("why", {}).get(node), row[1], f"{what}: {node}")
        elif command == "tol":
            m = re.search(r"nominal ([^)]+)\)", text)
            agrees(o["nominal"], None, m.group(1) if m else "?", f"{what}: nominal")
            check(o["monte_carlo"]["dist"] == "uniform", f"{what}: dist")
            lines = text.splitlines()
            for p in o["worst_case"]["parts"]:
                row = next((ln.split() for ln in lines if ln.split()[:2] == [p["part"], p["kind"]]), None)
                if not check(row is not None, f"{what}: part {p['part']} in the text table"):
                    continue
                check(abs(float(row[-3].rstrip("%")) - 100 * p["tol"]) <= 1e-9 * 100 + 5e-4 * 100 * p["tol"],
                      f"{what}: {p['part']} tol {row[-3]} vs {p['tol']}")
                if o["worst_case"]["method"] == "corners" and p["at_min"] is not None:
                    check(row[-2].startswith("+" if p["at_min"] > 0 else "-") and
                          row[-1].startswith("+" if p["at_max"] > 0 else "-"),
                          f"{what}: {p['part']} corners {row[-2:]} vs {p['at_min']}, {p['at_max']}")
            for c in o["checks"]:
                ln = next((ln for ln in lines if ln.strip().startswith(c["text"])), "")
                check(ln.rstrip().endswith({"inside": "inside", "outside": "OUTSIDE", None: "unknown"}[c["worst_case"]]),
                      f"{what}: {c['text']} worst case {c['worst_case']} vs text {ln!r}")


def main():
    paths = sorted(glob.glob(os.path.join(ROOT, "circuits", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "docs", "examples", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "tests", "loading", "closed", "*.stack")) +
                   glob.glob(os.path.join(ROOT, "tests", "loading", "failing", "*.stack")))
    check(len(paths) >= 6, f"example circuits found: {len(paths)}")
    for path in paths:
        cwd, name = os.path.dirname(path), os.path.basename(path)
        j = solve_checks(path, cwd, name)
        if j is not None:
            other_commands(path, cwd, name, j)
            print(f"ok   {name}")
    rc, out, err = run(["demo", "--format", "json"], ROOT)
    o = load_json(out, "demo")
    if o:
        meta_ok(o, "demo", "demo.stack", "demo")
        walk_why(o, "demo", "demo")
    rc, out, err = run(["pick", "ratio", "0.33", "--format", "json"], ROOT)
    o = load_json(out, "pick")
    if o:
        meta_ok(o, "pick", None, "pick")
        walk_why(o, "pick", "pick")
        rc, text, err = run(["pick", "ratio", "0.33"], ROOT)
        rows = [ln.split() for ln in text.splitlines() if re.match(r"\s+\d+\s", ln)]
        check(len(rows) == len(o["items"]) > 0, "pick: as many pairs in text as in JSON")
        for row, it in zip(rows, o["items"]):
            # rank, rtop (2 cells), rbot (2), ratio (%.6f), error (%+.3f%%), zout (2)
            agrees(it["rtop"], None, " ".join(row[1:3]), "pick: rtop")
            agrees(it["rbot"], None, " ".join(row[3:5]), "pick: rbot")
            check(abs(float(row[5]) - it["ratio"]) <= 5e-7, f"pick: ratio {row[5]} vs {it['ratio']}")
            check(abs(float(row[6].rstrip("%")) - 100 * it["error_rel"]) <= 5e-4, f"pick: error {row[6]} vs {it}")
            agrees(it["zout"], None, " ".join(row[7:9]), "pick: zout")
        for it in o["items"]:
            check(abs(it["error"] - (it["ratio"] - 0.33)) < 1e-15 and abs(it["error_rel"] * 0.33 - it["error"]) < 1e-15,
                  f"pick: error is ratio - R, error_rel is that over R: {it}")
    print(f"{passes[0]} checks passed, {len(failures)} failed")
    sys.exit(1 if failures else 0)


main()
