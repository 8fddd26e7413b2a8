#!/usr/bin/python3
"""The limits and warning codes the documentation states are the program's.

Usage: docs_sync.py SOURCE_ROOT

- Every warning code given in the source (the third argument of an
  ls_warning(...) call in src/*.c) has its own section in docs/warnings.md, and
  every code documented there is still given somewhere in src/.
- Every limit #defined in src/*.h as LS_MAX_* (and the dense solver's
  LS_DENSE_MAX_UNKNOWNS) that docs/limits.md promises to state appears there
  with the value the code uses.
"""
import glob
import os
import re
import sys

# limit macro -> words that the line of docs/limits.md stating it contains
LIMITS = {
    "LS_MAX_INCLUDE_DEPTH": "include depth", "LS_MAX_BLOCK_DEPTH": "block nesting",
    "LS_MAX_INSTANCES": "block instances", "LS_MAX_EXPR_DEPTH": "expression depth",
    "LS_MAX_LINE_BYTES": "length of one line", "LS_MAX_NAME_BYTES": "length of a name",
    "LS_MAX_FILE_BYTES": "size of one circuit file", "LS_DENSE_MAX_UNKNOWNS": "dense LAPACK",
    "LS_MAX_NODES": "nodes after expansion", "LS_MAX_PARTS": "parts after expansion",
    "LS_MAX_VIA_CHAIN": "via=", "LS_MAX_SETS": "--set",
}


def c_value(expr):
    expr = expr.split("/*")[0].strip()
    expr = re.sub(r"(\d+)u\b", r"\1", expr)
    return int(eval(expr, {"__builtins__": {}}))


def main():
    root = sys.argv[1]
    bad = 0
    codes = set()
    for path in glob.glob(os.path.join(root, "src", "**", "*.c"), recursive=True):
        text = open(path, encoding="utf-8").read()
        for m in re.finditer(r"ls_warning\(\s*[^,]+,\s*[^,]+,\s*\"([a-z0-9-]+)\"", text):
            codes.add(m.group(1))
    doc = open(os.path.join(root, "docs", "warnings.md"), encoding="utf-8").read()
    documented = set(re.findall(r"^### `([a-z0-9-]+)`", doc, re.M))
    for c in sorted(codes - documented):
        bad += 1
        print("warning code '%s' is given in src/ but has no section in docs/warnings.md" % c)
    for c in sorted(documented - codes):
        bad += 1
        print("docs/warnings.md documents '%s', which no ls_warning call gives" % c)
    print("%d warning codes in src/, %d documented" % (len(codes), len(documented)))

    defines = {}
    for path in glob.glob(os.path.join(root, "src", "**", "*.h"), recursive=True):
        for m in re.finditer(r"^#define (LS_\w+) (.+)$", open(path, encoding="utf-8").read(), re.M):
            defines[m.group(1)] = m.group(2)
    limits = open(os.path.join(root, "docs", "limits.md"), encoding="utf-8").read()
    for name in LIMITS:
        if name not in defines:
            bad += 1
            print("limit %s is not #defined in src/*.h any more" % name)
            continue
        v = c_value(defines[name])
        rows = [l for l in limits.split("\n") if LIMITS[name] in l]
        if not any(re.search(r"(?<![\d.])%d(?![\d.])" % v, l) for l in rows):
            bad += 1
            print("limit %s = %d is not on a line of docs/limits.md about '%s'" % (name, v, LIMITS[name]))
        else:
            print("limit %s = %d is documented" % (name, v))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
