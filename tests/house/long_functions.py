#!/usr/bin/python3
"""List the functions of src/ longer than a limit (60 lines by default).

Usage: long_functions.py [SOURCE_ROOT] [--limit N] [--under DIR]

A function is counted from the line of its opening brace at column 0 to its
closing brace at column 0 (the house style, DEVELOPERS.md).  The list is for
reading, not a gate: DEVELOPERS.md ("Long functions") says which may stay
long (kernels and tables, with banner comments for their sections).
"""

import argparse
import os
import re
import sys

NAME = re.compile(r"([A-Za-z_]\w*)\s*\(")


def functions(path):
    """(name, first line, length in lines) of every function in a C file."""
    with open(path, encoding="utf-8", errors="replace") as f:
        lines = f.read().split("\n")
    out = []
    for i, line in enumerate(lines):
        if line != "{":
            continue
        # the signature: the lines above, back to one that starts at column 0
        j = i - 1
        while j > 0 and lines[j][:1] in (" ", "\t"):
            j -= 1
        sig = " ".join(lines[j:i])
        m = NAME.search(sig.split("(")[0] + "(") if "(" in sig else None
        if not m or sig.lstrip().startswith(("struct", "typedef", "enum", "union", "#")) or "=" in sig.split("(")[0]:
            continue
        k = i + 1
        while k < len(lines) and lines[k] != "}":
            k += 1
        out.append((m.group(1), j + 1, k - j + 1))
    return out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("root", nargs="?", default=".")
    ap.add_argument("--limit", type=int, default=60)
    ap.add_argument("--under", default="src")
    a = ap.parse_args()
    rows = []
    for d, _, files in os.walk(os.path.join(a.root, a.under)):
        for fn in files:
            if fn.endswith((".c", ".cc")):
                p = os.path.join(d, fn)
                for name, line, n in functions(p):
                    if n > a.limit:
                        rows.append((n, os.path.relpath(p, a.root), line, name))
    for n, p, line, name in sorted(rows, reverse=True):
        print("%4d  %s:%d  %s" % (n, p, line, name))
    print("%d functions over %d lines" % (len(rows), a.limit))
    return 0


if __name__ == "__main__":
    sys.exit(main())
