"""The loading tests' shared helpers: running the program, reading its JSON,
counting checks and collecting failures (test_loading.py, test_budget.py,
test_sag_connections.py).

A check that fails appends its message to FAILS; COUNT[0] counts the checks.
run_tests() runs the test functions, each crash a failure, and returns the
exit code of the script."""

import json
import os
import subprocess
import tempfile

FAILS = []
COUNT = [0]


def run(binary, args, want_rc=0):
    """Run the program; return (stdout, stderr).  A wrong exit code is a
    failure (want_rc None: any exit code)."""
    p = subprocess.run([binary] + args, capture_output=True, text=True, timeout=120)
    if want_rc is not None and p.returncode != want_rc:
        FAILS.append("%s: exit %d, expected %d: %s" % (" ".join(args), p.returncode, want_rc,
                                                       p.stderr.strip()[:400]))
    return p.stdout, p.stderr


def js(binary, args, want_rc=0):
    """The program's JSON report, or None (a failure) when it is not JSON."""
    out, _ = run(binary, args + ["--format", "json"], want_rc)
    try:
        return json.loads(out)
    except ValueError:
        FAILS.append("%s: output is not JSON: %r" % (" ".join(args), out[:300]))
        return None


def near(what, got, want, rtol=1e-9, atol=0.0, source=""):
    COUNT[0] += 1
    ok = isinstance(got, (int, float)) and abs(got - want) <= rtol * abs(want) + atol
    if not ok:
        FAILS.append("%s: got %r, expected %r (%s)" % (what, got, want, source))


def truth(what, cond, source=""):
    COUNT[0] += 1
    if not cond:
        FAILS.append("%s (%s)" % (what, source))


def write(tmp, name, text):
    path = os.path.join(tmp, name)
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    return path


def par(*rs):
    """Resistors in parallel (ohm)."""
    return 1.0 / sum(1.0 / r for r in rs)


def run_tests(tests, prefix, width=28, shown=None):
    """Runs (name, function of the temporary directory) pairs in one temporary
    directory, prints each one's outcome, then the failures (the first `shown`)
    and the count; returns the script's exit code."""
    with tempfile.TemporaryDirectory(prefix=prefix) as tmp:
        for name, t in tests:
            before = len(FAILS)
            try:
                t(tmp)
            except Exception as e:  # a crash of the test is a failure, not a pass
                FAILS.append("%s raised %r" % (name, e))
            print("%-*s %s" % (width, name, "ok" if len(FAILS) == before else "FAIL"))
    for f in FAILS[:shown]:
        print("  FAIL: " + f)
    print("%d checks, %d failures" % (COUNT[0], len(FAILS)))
    return 1 if FAILS else 0
