#!/usr/bin/python3
"""Run every ```stack example of the user docs through `loadstack check`.

usage: run_doc_examples.py LOADSTACK DOC.md...

A block passes when `check` exits 0.  A block whose first lines hold
`# expect-error: CODE LINE:COL` must exit with CODE and print a first diagnostic
at LINE:COL of the example, with its source line and a caret.
"""
import os
import re
import subprocess
import sys
import tempfile


def blocks(path):
    text = open(path, encoding="utf-8").read()
    for m in re.finditer(r"^```stack\n(.*?)^```", text, re.S | re.M):
        line = text[: m.start()].count("\n") + 1
        yield line, m.group(1)


def main():
    exe, docs = sys.argv[1], sys.argv[2:]
    failed = total = 0
    with tempfile.TemporaryDirectory() as tmp:
        for doc in docs:
            for line, body in blocks(doc):
                total += 1
                path = os.path.join(tmp, "example_%d.stack" % total)
                with open(path, "w", encoding="utf-8") as f:
                    f.write(body)
                want = re.search(r"^# expect-error: (\d+) (\d+):(\d+)", body, re.M)
                r = subprocess.run([exe, "check", path], capture_output=True, text=True, timeout=60)
                where = "%s:%d" % (doc, line)
                if want:
                    code, pos = int(want.group(1)), "%s:%s:%s: error:" % (path, want.group(2), want.group(3))
                    lines = r.stderr.splitlines()
                    ok = r.returncode == code and lines and lines[0].startswith(pos) and len(lines) >= 3 \
                        and lines[2].strip() == "^"
                    if not ok:
                        failed += 1
                        print("FAIL %s: wanted exit %d at %s, got %d:\n%s" % (where, code, pos, r.returncode, r.stderr))
                elif r.returncode != 0:
                    failed += 1
                    print("FAIL %s: check exited %d\n%s%s" % (where, r.returncode, r.stdout, r.stderr))
                else:
                    print("ok   %s" % where)
    print("%d examples, %d failed" % (total, failed))
    return 1 if failed or total == 0 else 0


if __name__ == "__main__":
    sys.exit(main())
