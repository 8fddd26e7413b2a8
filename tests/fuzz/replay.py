#!/usr/bin/python3
"""Replay the fuzz corpus and the fuzzing regressions through `loadstack check`.

Usage: replay.py LOADSTACK DIR...

Every file of every DIR is run as `loadstack check FILE` under a timeout.  The
program must end by itself (no hang: 60 s per file; the corpus files take
milliseconds, the resource-limit regressions a few seconds) with one of the
exit codes of the CLI contract (0..3; shared/spec/cli.md), never by a signal
and with no sanitizer report; and when it exits 2 or 3 its stderr must carry a
diagnostic ("error:"), never be silent.  Under LOADSTACK_SELFCHECK (the suite
sets it) no file may fail the self-check (src/analysis/selfcheck.h): its error
says the program's own numbers disagree, whatever the input.  Files of the corpus that start
with an "@set NAME=VALUE" line (the fuzz target's convention) are replayed with
that line passed as --set and the rest of the file as the circuit.
"""
import os
import subprocess
import sys
import tempfile

TIMEOUT_S = 60


def run_one(exe, path, tmpdir):
    with open(path, "rb") as f:
        data = f.read()
    args = [exe, "check"]
    target = path
    if data.startswith(b"@set "):
        line, _, rest = data.partition(b"\n")
        setarg = line[5:].decode("utf-8", "replace").replace("\0", "")
        if "=" in setarg:
            args += ["--set", setarg]
        target = os.path.join(tmpdir, "replay.stack")
        with open(target, "wb") as f:
            f.write(rest)
    args.append(target)
    try:
        p = subprocess.run(args, stdin=subprocess.DEVNULL, capture_output=True, timeout=TIMEOUT_S)
    except subprocess.TimeoutExpired:
        return "hang (no exit within %d s)" % TIMEOUT_S
    if p.returncode < 0:
        return "killed by signal %d" % -p.returncode
    if b"runtime error:" in p.stderr or b"Sanitizer" in p.stderr:
        return "sanitizer report: " + p.stderr.decode("utf-8", "replace")[:1500]
    if p.returncode not in (0, 1, 2, 3):
        return "exit code %d is not one of 0..3" % p.returncode
    if p.returncode in (2, 3) and b"error:" not in p.stderr:
        return "exit %d without an error message" % p.returncode
    if b"self-check:" in p.stderr:   # the program's own numbers disagree: always a defect
        return "self-check failed: " + p.stderr.decode("utf-8", "replace")[-600:]
    return None


def main():
    exe, dirs = os.path.abspath(sys.argv[1]), sys.argv[2:]
    files = []
    for d in dirs:
        if os.path.isdir(d):
            files += sorted(os.path.join(d, n) for n in os.listdir(d)
                            if os.path.isfile(os.path.join(d, n)) and not n.startswith(".")
                            and not n.endswith(".md"))
    if not files:
        print("no corpus files found in", dirs)
        return 1
    bad = 0
    with tempfile.TemporaryDirectory() as tmp:
        for path in files:
            why = run_one(exe, path, tmp)
            if why:
                bad += 1
                print("FAIL %s: %s" % (path, why))
    print("%d files replayed, %d failed" % (len(files), bad))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
