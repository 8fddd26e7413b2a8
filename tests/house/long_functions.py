#!/usr/bin/python3
"""List the functions of src/ longer than a limit (60 lines by default).

Usage: long_functions.py [SOURCE_ROOT] [--limit N] [--under DIR] [--check]

A function is counted from the line of its opening brace at column 0 to its
closing brace at column 0 (the house style, DEVELOPERS.md).  The list is for
reading; DEVELOPERS.md ("Long functions") says which may stay long (kernels,
with banner comments for their sections) and which are still to be split.
--check (test `house-long-functions`) keeps that section true: it fails when
a function over the limit is not named there (as `name`), and when the
section's list of those still to split names one that is no longer long.
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
    ap.add_argument("--check", action="store_true")
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
    return check(a.root, {name for _, _, _, name in rows}) if a.check else 0


def check(root, long_names):
    """0 when DEVELOPERS.md's "Long functions" names every long function
    and its list of those still to split holds only long ones, else 1."""
    with open(os.path.join(root, "DEVELOPERS.md"), encoding="utf-8") as f:
        text = f.read()
    start = text.index("## Long functions")
    section = text[start:text.index("\n## ", start + 1)]
    named = set(re.findall(r"`([A-Za-z_]\w*)`", section))
    fails = ["%s is over the limit and not named in DEVELOPERS.md's \"Long functions\"" % n
             for n in sorted(long_names - named)]
    todo = section[section.index("Still over 60 lines"):] if "Still over 60 lines" in section else ""
    fails += ["DEVELOPERS.md lists %s as still over the limit, and it is not" % n
              for n in re.findall(r"`([A-Za-z_]\w*)`", todo) if n not in long_names]
    for f in fails:
        print("FAIL:", f)
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
