#!/usr/bin/python3
"""Run the `$ loadstack ...` lines of ```console blocks in a doc, from the
project's root, and check that the lines shown after each appear in its output
in that order (each shown line must occur within an output line).  A command ending in `# exits N` must
exit with N, every other with 0.

usage: run_cli_examples.py LOADSTACK DOC.md
"""
import re
import shlex
import subprocess
import sys


def examples(text):
    for m in re.finditer(r"^```console\n(.*?)^```", text, re.S | re.M):
        cmd, want = None, []
        for line in m.group(1).splitlines():
            if line.startswith("$ "):
                if cmd:
                    yield cmd, want
                cmd, want = line[2:], []
            elif cmd is not None:
                want.append(line.rstrip())
        if cmd:
            yield cmd, want


def main():
    exe, doc = sys.argv[1], sys.argv[2]
    failed = total = 0
    for cmd, want in examples(open(doc, encoding="utf-8").read()):
        total += 1
        code = 0
        m = re.search(r"#\s*exits (\d+)\s*$", cmd)
        if m:
            code = int(m.group(1))
            cmd = cmd[: m.start()]
        argv = shlex.split(cmd)
        assert argv[0] == "loadstack", cmd
        r = subprocess.run([exe] + argv[1:], capture_output=True, text=True, timeout=60)
        out = [l.rstrip() for l in r.stdout.splitlines()]
        pos, ok = 0, r.returncode == code
        for w in want:
            while pos < len(out) and w.strip() not in out[pos]:
                pos += 1
            if pos == len(out):
                ok = False
                break
            pos += 1
        if not ok:
            failed += 1
            print("FAIL: %s (exit %d, wanted %d)\n--- output ---\n%s%s" % (cmd, r.returncode, code, r.stdout, r.stderr))
        else:
            print("ok   %s" % cmd)
    print("%d commands, %d failed" % (total, failed))
    return 1 if failed or total == 0 else 0


if __name__ == "__main__":
    sys.exit(main())
