#!/usr/bin/python3
"""The report writer's JSON, parsed back by Python's json module (Debian's
/usr/bin/python3), strictly: RFC 8259 section 6 permits no NaN or Infinity,
so the parser is told to refuse them (parse_constant), and section 4's
names must be unique within an object (object_pairs_hook refuses a repeat).
The three documents are the reports of tests/unit/report/test_writer.c
(`--json`): one with every kind of piece, one of strings to escape, one of
numbers.  Each value read back is compared with what the C side wrote."""
import json
import math
import subprocess
import sys


def refuse(name):
    raise ValueError(f"{name} is not a JSON number (RFC 8259 section 6)")


def unique(pairs):
    names = [k for k, _ in pairs]
    if len(names) != len(set(names)):
        raise ValueError(f"a name repeats in one object: {names}")
    return dict(pairs)


def main():
    out = subprocess.run([sys.argv[1], "--json"], check=True, capture_output=True).stdout.decode("utf-8")
    dec = json.JSONDecoder(parse_constant=refuse, object_pairs_hook=unique)
    docs, at = [], 0
    while at < len(out):
        while at < len(out) and out[at].isspace():
            at += 1
        if at == len(out):
            break
        doc, at = dec.raw_decode(out, at)
        docs.append(doc)
    fails = []

    def check(ok, what):
        if not ok:
            fails.append(what)

    check(len(docs) == 3, f"three documents, got {len(docs)}")
    rep, strs, nums = docs
    for d in docs:
        check(d["meta"]["program"] == "loadstack" and d["meta"]["command"] == "test", "meta")
    check(rep["circuit"] == "tank sender" and rep["supply"] == 12 and rep["parts"] == 3 and rep["solved"] is True,
          "members")
    check(rep["limits"] == {"low": 0.5, "high": None, "why": {"high": "unbounded"}}, "nested object with why")
    check(rep["tags"] == ["float", "arm"], "array of strings")
    rows = rep["rows"]
    check([r["part"] for r in rows] == ["r_top", "float_sw", "µc"], "table rows")
    check(rows[0]["current"] == 2.5e-6 and rows[2]["current"] == -0.125, "table numbers")
    check(rows[1]["current"] is None and rows[1]["why"] == {"current": "undefined"}, "table null and why")
    check(rows[1]["note"] == 'open, "dry"' and rows[0]["note"] == "via 4.7 kΩ", "table strings")
    check(strs["quote"] == 'say "hi"' and strs["backslash"] == "C:\\tank", "quote and backslash")
    check(strs["controls"] == "a\nb\rc\td\x01e\x1f", "control characters")
    check(strs["solidus"] == "1/2" and strs["units"] == "4.7 kΩ, 3 µA", "solidus and non-ASCII")
    want = [0, -0.0, 1, -12, 0.1, 1 / 3, 1e21, 1e-7, 6.02214076e23, -2.5e-300, 4.9e-324, 1.7976931348623157e308,
            123456789012345680.0]
    check(len(nums["n"]) == len(want) and all(a == b for a, b in zip(nums["n"], want)), f"numbers {nums['n']}")
    check(nums["nan"] is None and nums["inf"] is None and nums["open"] is None, "non-finite as null")
    check(nums["why"] == {"nan": "undefined", "inf": "unbounded", "open": "unsolved"}, "their reasons")
    check(not any(isinstance(v, float) and not math.isfinite(v) for v in nums["n"]), "finite numbers only")
    for f in fails:
        print("FAIL:", f)
    print(f"{len(docs)} documents parsed, {len(fails)} failures")
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
