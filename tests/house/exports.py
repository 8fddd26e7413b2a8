#!/usr/bin/python3
"""The shared library exports exactly the public header's functions.

usage: exports.py LIBLOADSTACK.so SOURCE_ROOT

The library is built with hidden visibility and the header marks each of its
functions LS_API (include/loadstack/loadstack.h).  This reads the header's
function declarations (comments stripped; the header holds types and
prototypes only) and the library's defined dynamic symbols (`nm -D
--defined-only`, binutils), and fails on
  - a function of the header the library does not export (or that lacks LS_API),
  - any symbol the library exports that the header does not declare (an
    internal function or table leaking into the ABI).
"""
import re
import subprocess
import sys


def header_functions(path):
    text = open(path, encoding="utf-8").read()
    text = re.sub(r"/\*.*?\*/", " ", text, flags=re.S)
    text = re.sub(r"//[^\n]*", " ", text)
    text = re.sub(r"^\s*#[^\n]*", " ", text, flags=re.M)
    names = set(re.findall(r"\b(ls_\w+)\s*\(", text))
    # a prototype is the text since the previous ';' or '}' up to its name
    unmarked = set()
    for m in re.finditer(r"[;{}]([^;{}]*?)\b(ls_\w+)\s*\(", text):
        if "LS_API" not in m.group(1):
            unmarked.add(m.group(2))
    return names, unmarked


def exported(lib):
    out = subprocess.run(["nm", "-D", "--defined-only", lib], capture_output=True, text=True, check=True).stdout
    syms = set()
    for line in out.splitlines():
        parts = line.split()
        if len(parts) >= 3:
            syms.add(parts[2].split("@")[0])
    return syms


def main():
    lib, root = sys.argv[1], sys.argv[2]
    declared, unmarked = header_functions(root + "/include/loadstack/loadstack.h")
    syms = exported(lib)
    failed = 0
    if not declared:
        print("FAIL no function declarations read from the header")
        failed += 1
    for name in sorted(declared - syms):
        print("FAIL %s is declared in loadstack.h but not exported by %s" % (name, lib))
        failed += 1
    for name in sorted(unmarked):
        print("FAIL %s is declared in loadstack.h without LS_API" % name)
        failed += 1
    for name in sorted(syms - declared):
        print("FAIL %s is exported by the library but is not in loadstack.h" % name)
        failed += 1
    print("%d functions in the header, %d symbols exported, %d failed" % (len(declared), len(syms), failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
