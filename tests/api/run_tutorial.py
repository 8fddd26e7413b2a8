#!/usr/bin/env python3
"""Run every command of a Markdown walk-through and compare its output.

In each ```console block, a line `$ loadstack ARGS` is a command and the lines
after it, up to the next `$ ` line or the end of the block, are its expected
output: standard output and standard error together, as a terminal shows them.
A line holding only `...` stands for any number of lines (none included);
trailing blanks are ignored.  A command ending in `# exits N` must exit with
N, any other with 0.  Commands run in the directory of the Markdown file, with
`loadstack` replaced by the program under test; `cat FILE` may show a
circuit file, so the text shown is the file the commands read.  Every *.stack file of the
tutorial's own directory (docs/tutorial/) must be used by some command.

Usage: run_tutorial.py TUTORIAL.md LOADSTACK
"""
import difflib
import os
import re
import shlex
import subprocess
import sys

EXIT_RE = re.compile(r"#\s*exits\s+(\d+)\s*$")


def blocks(text):
    """Yield (first line number, lines) of every ```console block."""
    lines = text.split("\n")
    i = 0
    while i < len(lines):
        if lines[i].strip() == "```console":
            start, body = i + 2, []
            i += 1
            while i < len(lines) and lines[i].strip() != "```":
                body.append(lines[i])
                i += 1
            yield start, body
        i += 1


def commands(text):
    """Yield (line number, command text, expected lines) in document order."""
    for start, body in blocks(text):
        cur = None
        for k, line in enumerate(body):
            if line.startswith("$ "):
                if cur:
                    yield cur
                cur = (start + k, line[2:], [])
            elif cur:
                cur[2].append(line)
            elif line.strip():
                raise SystemExit(f"line {start + k}: output before any '$ ' command")
        if cur:
            yield cur


def matches(want, got):
    """Do the expected lines (with '...' wildcards) match the actual lines?"""
    memo = {}

    def m(i, j):
        if (i, j) in memo:
            return memo[i, j]
        if i == len(want):
            r = j == len(got)
        elif want[i] == "...":
            r = any(m(i + 1, k) for k in range(j, len(got) + 1))
        else:
            r = j < len(got) and want[i] == got[j] and m(i + 1, j + 1)
        memo[i, j] = r
        return r

    return m(0, 0)


def trim(lines):
    lines = [l.rstrip() for l in lines]
    while lines and not lines[-1]:
        lines.pop()
    return lines


def main():
    md, prog = sys.argv[1], os.path.abspath(sys.argv[2])
    here = os.path.dirname(os.path.abspath(md))
    with open(md, encoding="utf-8") as f:
        text = f.read()
    failures, count, used = 0, 0, set()
    for line_no, cmd, want in commands(text):
        count += 1
        m = EXIT_RE.search(cmd)
        code = int(m.group(1)) if m else 0
        argv = shlex.split(EXIT_RE.sub("", cmd))
        if not argv or argv[0] not in ("loadstack", "cat"):
            print(f"{md}:{line_no}: only loadstack and cat commands can be run: {cmd}")
            failures += 1
            continue
        if argv[0] == "loadstack":
            used.update(os.path.normpath(a) for a in argv if a.endswith(".stack"))
            argv = [prog] + argv[1:]
        env = dict(os.environ, LC_ALL="C.UTF-8")
        run = subprocess.run(argv, cwd=here, stdout=subprocess.PIPE,
                             stderr=subprocess.STDOUT, env=env, timeout=120)
        got = trim(run.stdout.decode("utf-8", "replace").split("\n"))
        want = trim(want)
        bad = []
        if run.returncode != code:
            bad.append(f"exit status {run.returncode}, the text says {code}")
        if not matches(want, got):
            bad.append("output differs:\n" + "\n".join(
                difflib.unified_diff(want, got, "tutorial", "actual", lineterm="")))
        if bad:
            failures += 1
            print(f"{md}:{line_no}: $ {cmd}")
            for b in bad:
                print("  " + b)
    tut_dir = os.path.join(here, "tutorial")
    if os.path.isdir(tut_dir):
        for name in sorted(os.listdir(tut_dir)):
            rel = os.path.normpath(os.path.join("tutorial", name))
            if name.endswith(".stack") and rel not in used:
                print(f"{rel} is not used by any command of {md}")
                failures += 1
    if count == 0:
        print(f"no commands found in {md}")
        return 1
    print(f"{count} commands run, {failures} failed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
