#!/usr/bin/python3
"""Golden reports: the program's output over every circuit in the tree, pinned.

usage: golden.py LOADSTACK SOURCE_ROOT            compare with tests/house/golden/
       golden.py LOADSTACK SOURCE_ROOT --update   rewrite tests/house/golden/
       (or `ninja -C build update-golden`)

The rule (DEVELOPERS.md "Golden reports"): a reshaping commit changes no golden
file; a behaviour change regenerates them in a commit of its own, so its diff
shows exactly which reports moved.

What runs, from SOURCE_ROOT with relative paths (so the reports name the same
files in every checkout):
  - every circuit file (`*.stack`) of circuits/, docs/examples/, docs/tutorial/,
    tests/cases/, tests/loading/ and tests/tol/: solve as text, JSON and CSV,
    check, chain; for circuits/ also solve and chain as HTML.  Then on one
    quantity of the circuit (the first port's load-side node, else its last
    node): influence, thevenin (of the first port, else of that node), sag, and
    formula when the circuit has at most FORMULA_MAX_UNKNOWNS unknowns;
  - every case of the bad-input corpus (tests/bad/cases/) as tests/bad/run_bad.py
    runs it: `check CASE ARGS` from the corpus directory.  Its golden file pins
    the whole message text, which run_bad.py does not (it checks the place).
Each golden file holds, per command: the command line, the exit code, standard
output and standard error.

What legitimately varies is masked or tolerated: the program's version (from
`--version`) is replaced by "<version>"; a picture embedded in an HTML report
by its length and digest; the environment is fixed
(LOADSTACK_SELFCHECK=1 as in the suite, no LOADSTACK_TIMING or _THREADS, C.UTF-8
locale).  A report that differs from its golden file in text is still accepted
when it differs only in numbers, each within the rounding of its printed digits
(one unit in the last place shown, or 1e-9 relative for full-precision numbers),
or when both numbers are below 1e-12 in magnitude (residuals and error bounds at
rounding-noise level, which depend on the BLAS kernels of the machine); such a
match is reported as "within rounding" so it is visible.
"""
import concurrent.futures
import difflib
import hashlib
import os
import re
import subprocess
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "bad"))
import run_bad  # noqa: E402  (the corpus's header format: one reader)

CIRCUIT_DIRS = ["circuits", "docs/examples", "docs/tutorial", "tests/cases", "tests/loading", "tests/tol"]
HTML_DIRS = ["circuits"]
BAD_DIR = "tests/bad/cases"
GOLDEN_DIR = "tests/house/golden"
FORMULA_MAX_UNKNOWNS = 12
TIMEOUT_S = 120

IMAGE = re.compile(r"(data:[a-z/+.-]+;base64,)([A-Za-z0-9+/=]+)")
NUM = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")


def env():
    e = {k: v for k, v in os.environ.items() if not k.startswith("LOADSTACK_")}
    e["LOADSTACK_SELFCHECK"] = "1"
    e["LC_ALL"] = "C.UTF-8"
    # under the sanitizer build, LeakSanitizer lists the suppressions it used
    # (the font library's) on stderr: not part of any report
    if "LSAN_OPTIONS" in e:
        e["LSAN_OPTIONS"] += ":print_suppressions=0"
    return e


def run(exe, args, cwd, version):
    """One run as a golden section: command line, exit code, stdout, stderr."""
    try:
        p = subprocess.run([exe] + args, cwd=cwd, env=env(), stdin=subprocess.DEVNULL,
                           capture_output=True, timeout=TIMEOUT_S)
        code = str(p.returncode)
        out, err = p.stdout.decode("utf-8", "replace"), p.stderr.decode("utf-8", "replace")
    except subprocess.TimeoutExpired:
        code, out, err = "timeout", "", ""
    text = "$ loadstack %s\nexit: %s\n--- stdout\n%s\n--- stderr\n%s\n" % (" ".join(args), code, out, err)
    return IMAGE.sub(image_digest, text.replace(version, "<version>"))


def image_digest(m):
    """An embedded picture of an HTML report as its digest (the pictures
    themselves are checked by the plot tests; here they only must not move)."""
    return "%s<%d bytes, sha256 %s>" % (m.group(1), len(m.group(2)),
                                          hashlib.sha256(m.group(2).encode()).hexdigest()[:16])


def circuit_files(root):
    files = []
    for d in CIRCUIT_DIRS:
        for base, _, names in os.walk(os.path.join(root, d)):
            files += [os.path.relpath(os.path.join(base, n), root) for n in names if n.endswith(".stack")]
    return sorted(files)


def pick_quantity(exe, root, rel):
    """(node, thevenin target, unknowns) from the circuit's JSON report, or None."""
    import json
    p = subprocess.run([exe, "solve", rel, "--format", "json"], cwd=root, env=env(),
                       capture_output=True, timeout=TIMEOUT_S)
    try:
        d = json.loads(p.stdout)
    except ValueError:
        return None
    ports = d.get("ports") or {}
    nodes = [n for n in d.get("nodes", {}) if d["nodes"][n] is not None]
    if ports:
        name, port = next(iter(ports.items()))
        return port["to"], name, d["solver"]["unknowns"]
    if len(nodes) < 2:
        return None
    return nodes[-1], nodes[-1], d["solver"]["unknowns"]


def circuit_report(exe, root, rel, version):
    runs = [["solve", rel], ["solve", rel, "--format", "json"], ["solve", rel, "--format", "csv"],
            ["check", rel], ["chain", rel]]
    if any(rel.startswith(d + "/") for d in HTML_DIRS):
        runs += [["solve", rel, "--format", "html"], ["chain", rel, "--format", "html"]]
    q = pick_quantity(exe, root, rel)
    if q:
        node, target, unknowns = q
        runs += [["influence", rel, node], ["thevenin", rel, target], ["sag", rel, node]]
        if unknowns <= FORMULA_MAX_UNKNOWNS:
            runs.append(["formula", rel, node])
    with open(os.path.join(root, rel), encoding="utf-8", errors="replace") as f:
        if "free=" in f.read():   # a design with parts left to choose: fit's report too
            runs.append(["fit", rel, "--quiet"])
    return "".join(run(exe, a, root, version) for a in runs)


def bad_report(exe, root, name, version):
    cases = os.path.join(root, BAD_DIR)
    _, _, args, target = run_bad.header(os.path.join(cases, name))
    return run(exe, ["check", target or name] + args, cases, version)


def jobs(exe, root, version):
    """(golden file name, function computing its text) for every pinned report."""
    out = []
    for rel in circuit_files(root):
        out.append((rel.replace("/", "__") + ".txt", lambda rel=rel: circuit_report(exe, root, rel, version)))
    for name in sorted(os.listdir(os.path.join(root, BAD_DIR))):
        if name.endswith(".stack"):
            out.append(("bad__" + name + ".txt", lambda name=name: bad_report(exe, root, name, version)))
    return out


def ulp(tok):
    """One unit in the last place a printed number shows."""
    m = re.fullmatch(r"[-+]?(\d*)(?:\.(\d*))?(?:[eE]([-+]?\d+))?", tok)
    decimals = len(m.group(2) or "")
    exp = int(m.group(3) or 0)
    return 10.0 ** (exp - decimals)


def numbers_close(a, b):
    if a == b:
        return True
    x, y = float(a), float(b)
    if abs(x) < 1e-12 and abs(y) < 1e-12:
        return True                     # rounding-noise level: residuals, error bounds
    tol = max(ulp(a), ulp(b)) if len(a.strip("-+").replace(".", "")) < 15 else 0.0
    return abs(x - y) <= max(tol * 1.000001, 1e-9 * max(abs(x), abs(y)))


def within_rounding(want, got):
    """True when two texts differ only in numbers within their printed rounding."""
    if NUM.sub("#", want) != NUM.sub("#", got):
        return False
    return all(numbers_close(a, b) for a, b in zip(NUM.findall(want), NUM.findall(got)))


def main():
    if len(sys.argv) < 3:
        print(__doc__)
        return 2
    exe, root = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    update = "--update" in sys.argv[3:]
    version = subprocess.run([exe, "--version"], capture_output=True, text=True).stdout.split()[-1]
    gdir = os.path.join(root, GOLDEN_DIR)
    work = jobs(exe, root, version)
    with concurrent.futures.ThreadPoolExecutor(max_workers=2) as pool:
        texts = list(pool.map(lambda j: j[1](), work))
    if update:
        os.makedirs(gdir, exist_ok=True)
        wanted = {name for name, _ in work}
        for old in os.listdir(gdir):
            if old not in wanted:
                os.remove(os.path.join(gdir, old))
        for (name, _), text in zip(work, texts):
            with open(os.path.join(gdir, name), "w", encoding="utf-8") as f:
                f.write(text)
        print("wrote %d golden files to %s" % (len(work), GOLDEN_DIR))
        return 0
    failed = rounded = 0
    for (name, _), text in zip(work, texts):
        path = os.path.join(gdir, name)
        if not os.path.exists(path):
            failed += 1
            print("FAIL %s: no golden file (a new circuit: regenerate with `ninja -C build update-golden`"
                  " in a commit of its own)" % name)
            continue
        want = open(path, encoding="utf-8").read()
        if want == text:
            continue
        if within_rounding(want, text):
            rounded += 1
            print("ok   %s: within rounding of the printed digits" % name)
            continue
        failed += 1
        print("FAIL %s: the output changed:" % name)
        diff = difflib.unified_diff(want.splitlines(), text.splitlines(), "golden", "now", lineterm="", n=1)
        print("\n".join(list(diff)[:60]))
    known = {name for name, _ in work}
    for stale in sorted(set(os.listdir(gdir)) - known):
        failed += 1
        print("FAIL %s: golden file of a circuit that no longer exists" % stale)
    print("%d reports, %d within rounding, %d failed" % (len(work), rounded, failed))
    if failed:
        print("A reshaping commit changes no golden file; a behaviour change regenerates them"
              " (`ninja -C build update-golden`) in a commit of its own.")
    return 1 if failed or not work else 0


if __name__ == "__main__":
    sys.exit(main())
