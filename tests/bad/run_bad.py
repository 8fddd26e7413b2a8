#!/usr/bin/python3
"""The malformed-input corpus: every tests/bad/cases/*.stack is a broken circuit.

Usage: run_bad.py LOADSTACK CASES_DIR

Each case carries its expectation in its header comments:
    # expect: CODE WHERE        CODE the exit code; WHERE "FILE:LINE:COL" of the
                                first error, or "-" for an error with no place in
                                a file ("loadstack: error: ...", a usage error)
    # args: ARG...              extra command-line arguments (optional)
    # file: NAME                run NAME instead of the case (a missing file)
The case is run as `loadstack check CASE ARGS` from CASES_DIR under a timeout.
The contract checked (shared/spec/cli.md "Diagnostics", shared/spec/language.md
"What bad input gets"): the exit code; the first error line of stderr starts
with "WHERE: error: " (only warnings may come before it); the next line shows
the source line itself (compared with the file's text) and the line after it
has a caret under column COL; and nothing is killed by a signal, hangs, or
trips a sanitizer.
"""
import os
import shlex
import subprocess
import sys

TIMEOUT_S = 60   # the largest case (a million block instances) takes a few seconds


def header(path):
    code, where, args, target = None, None, [], None
    with open(path, "rb") as f:
        for raw in f:
            line = raw.decode("utf-8", "replace").rstrip("\n")
            if not line.startswith("#"):
                break
            if line.startswith("# expect:"):
                parts = line.split()
                code, where = int(parts[2]), parts[3]
            elif line.startswith("# args:"):
                args = shlex.split(line[len("# args:"):])
            elif line.startswith("# file:"):
                target = line[len("# file:"):].strip()
    return code, where, args, target


def source_line(cases, where, args):
    """The text of line LINE of FILE as the diagnostic should show it."""
    file, line, _ = where.rsplit(":", 2)
    line = int(line)
    if file == "--set":  # the pseudo-file of a --set option: its NAME=VALUE text
        text = args[args.index("--set") + 1].encode()
    else:
        with open(os.path.join(cases, file), "rb") as f:
            text = f.read()
    lines = text.split(b"\n")
    src = lines[line - 1] if line - 1 < len(lines) else b""
    return src.split(b"\r")[0].decode("utf-8", "replace")


def check_case(exe, cases, name):
    path = os.path.join(cases, name)
    code, where, args, target = header(path)
    if code is None:
        return "no '# expect:' header"
    try:
        p = subprocess.run([exe, "check", target or name] + args, cwd=cases, stdin=subprocess.DEVNULL,
                           capture_output=True, timeout=TIMEOUT_S)
    except subprocess.TimeoutExpired:
        return "hang: no exit within %d s" % TIMEOUT_S
    err = p.stderr.decode("utf-8", "replace")
    if p.returncode < 0:
        return "killed by signal %d" % -p.returncode
    if "runtime error:" in err or "Sanitizer" in err:
        return "sanitizer report:\n" + err[:2000]
    if p.returncode != code:
        return "exit %d, expected %d; stderr:\n%s" % (p.returncode, code, err[:600])
    lines = err.split("\n")
    first = None
    for i, l in enumerate(lines):
        if l.startswith("    ") or not l:
            continue             # an excerpt or caret line
        if ": warning: " in l or ": note: " in l:
            continue
        first = i
        break
    if first is None:
        return "no error message on stderr"
    if where == "-":
        if not lines[first].startswith("loadstack: error: "):
            return "expected a 'loadstack: error:' line, got: %r" % lines[first]
        return None
    if not lines[first].startswith(where + ": error: "):
        return "first error is %r, expected it at %s" % (lines[first], where)
    if first + 2 >= len(lines):
        return "no source line and caret after the error"
    excerpt, caret = lines[first + 1], lines[first + 2]
    want = source_line(cases, where, args)
    if not excerpt.startswith("    ") or not want.startswith(excerpt[4:]):
        return "excerpt %r is not the source line %r" % (excerpt[:120], want[:120])
    col = int(where.rsplit(":", 1)[1])
    if caret.rstrip() != caret or not caret.endswith("^") or caret[4:-1].strip(" \t") != "":
        return "no caret line: %r" % caret[:120]
    if len(caret) - 5 != col - 1:
        return "caret under column %d, expected %d" % (len(caret) - 4, col)
    return None


def main():
    exe, cases = os.path.abspath(sys.argv[1]), sys.argv[2]
    names = sorted(n for n in os.listdir(cases) if n.endswith(".stack"))
    failed = 0
    for n in names:
        why = check_case(exe, cases, n)
        if why:
            failed += 1
            print("FAIL %s: %s" % (n, why))
        else:
            print("ok   %s" % n)
    print("%d cases, %d failed" % (len(names), failed))
    if len(names) < 60:
        print("the corpus must hold at least 60 cases")
        return 1
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
