"""Shared helpers for the tolerance, sweep, plot and pick tests.

The program under test is $LOADSTACK (set by meson's test_env).  Circuits are
written to a temporary directory; each helper returns what the program wrote.
"""
import json
import os
import shutil
import subprocess
import sys
import tempfile

LOADSTACK = os.environ.get("LOADSTACK") or (sys.argv[1] if len(sys.argv) > 1 else None)
if not LOADSTACK:
    sys.exit("LOADSTACK is not set (run under meson test, or pass the binary)")

TMP = tempfile.mkdtemp(prefix="ls_tol_test_")
failures = []


def circuit(name, text):
    """Write text to TMP/name and return the path."""
    path = os.path.join(TMP, name)
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    return path


def run(args, env=None, check_rc=None):
    """Run loadstack ARGS; returns (rc, stdout, stderr)."""
    e = dict(os.environ)
    if env:
        e.update(env)
    p = subprocess.run([LOADSTACK] + args, capture_output=True, text=True, env=e, timeout=120)
    if check_rc is not None and p.returncode != check_rc:
        fail(f"{' '.join(args)}: exit {p.returncode}, expected {check_rc}\n{p.stderr}")
    return p.returncode, p.stdout, p.stderr


def run_json(args, env=None):
    rc, out, err = run(args + ["--format", "json"], env=env, check_rc=0)
    try:
        return json.loads(out)
    except json.JSONDecodeError as ex:
        fail(f"{' '.join(args)}: output is not JSON ({ex})\n{out}\n{err}")
        return None


def fail(msg):
    failures.append(msg)
    print("FAIL:", msg)


def check(cond, msg):
    if not cond:
        fail(msg)
    return cond


def close(a, b, rel=0.0, abs_=0.0, what=""):
    """|a - b| <= abs_ + rel*|b|; records a failure otherwise."""
    ok = a is not None and b is not None and abs(a - b) <= abs_ + rel * abs(b)
    if not ok:
        fail(f"{what}: got {a!r}, expected {b!r} (rel {rel}, abs {abs_})")
    else:
        print(f"ok   {what}: {a!r} ~ {b!r}")
    return ok


def finish():
    shutil.rmtree(TMP, ignore_errors=True)
    if failures:
        print(f"{len(failures)} check(s) failed")
        sys.exit(1)
    print("all checks passed")
    sys.exit(0)
