"""Shared helpers for the command-line tests in tests/cli/.

The program under test is $LOADSTACK (set by meson's test_env) or argv[1].
Each test writes its circuits to a temporary directory, runs the program and
records failures; report() prints them and exits 1 if there were any.
"""
import os
import shutil
import subprocess
import sys
import tempfile

LOADSTACK = os.environ.get("LOADSTACK") or (sys.argv[1] if len(sys.argv) > 1 else None)
if not LOADSTACK:
    sys.exit("LOADSTACK is not set (run under meson test, or pass the binary)")
LOADSTACK = os.path.abspath(LOADSTACK)

TMP = tempfile.mkdtemp(prefix="ls_cli_test_")
failures = []
passes = [0]


def circuit(name, text, mode="w"):
    """Write text (str, or bytes with mode "wb") to TMP/name; return the path."""
    path = os.path.join(TMP, name)
    os.makedirs(os.path.dirname(path), exist_ok=True)
    if mode == "wb":
        with open(path, "wb") as f:
            f.write(text)
    else:
        with open(path, "w", encoding="utf-8") as f:
            f.write(text)
    return path


def run(args, stdin=None, env=None, cwd=None, timeout=120):
    """Run loadstack ARGS; returns (rc, stdout bytes, stderr str)."""
    e = dict(os.environ)
    if env:
        e.update(env)
    p = subprocess.run([LOADSTACK] + args, input=stdin, capture_output=True, env=e, cwd=cwd or TMP,
                       timeout=timeout)
    return p.returncode, p.stdout, p.stderr.decode("utf-8", "replace")


def check(ok, what, detail=""):
    """Record one check: `what` names the expectation and its source."""
    if ok:
        passes[0] += 1
    else:
        failures.append(what + (("\n    " + detail.replace("\n", "\n    ")) if detail else ""))
    return ok


def report():
    shutil.rmtree(TMP, ignore_errors=True)
    for f in failures:
        print("FAIL:", f)
    print("%d checks passed, %d failed" % (passes[0], len(failures)))
    sys.exit(1 if failures else 0)
