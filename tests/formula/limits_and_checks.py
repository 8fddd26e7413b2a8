"""`loadstack formula`: the self-check on every example circuit, the size
limits, and bad requests.

- Every node of every circuit in circuits/ and tests/cases/closed/ gets its
  formula (all symbols by default; past the limits, with no symbols); the
  formula at the file's numbers must agree with the solver (the program exits
  3 when it does not, which fails this test).
- A circuit past the size bounds gets the error that suggests --symbols, with
  exit code 2, well within a generous timeout (no timed assertion: the bound
  is on work, checked by the program itself).
- Bad requests get exit 2 and say why.

usage: limits_and_checks.py LOADSTACK SOURCE_ROOT"""
import glob
import json
import os
import random
import subprocess
import sys
import tempfile


def run(prog, *args, timeout=60):
    return subprocess.run([prog] + list(args), capture_output=True, text=True, timeout=timeout)


def self_checks(prog, root):
    bad = checked = 0
    files = sorted(glob.glob(os.path.join(root, "circuits", "*.stack")) +
                   glob.glob(os.path.join(root, "tests", "cases", "closed", "*.stack")))
    for f in files:
        p = run(prog, "solve", f, "--format", "json")
        if p.returncode not in (0, 1):
            continue
        report = json.loads(p.stdout)
        # port fields of the opened system come from a low-rank update: held
        # to the larger of 1e-9 and 16 times the base solve's 4 eps / rcond
        rcond = report.get("solver", {}).get("rcond") or 0
        port_bound = max(1e-9, 16 * 4 * 2.220446049250313e-16 / rcond) if rcond > 0 else 1e-9
        nodes = list(report["nodes"])[1:]
        for port in report.get("ports", {}):
            nodes += ["%s.%s" % (port, f) for f in ("open", "loaded", "sag", "zout", "zin", "current")]
        for node in nodes:
            p = run(prog, "formula", f, node, "--format", "json")
            if p.returncode == 2 and "too large" in p.stderr:
                p = run(prog, "formula", f, node, "--format", "json", "--symbols", "")
            if p.returncode == 2 and "no finite formula" in p.stderr:
                continue
            checked += 1
            if p.returncode != 0:
                print("FAIL self-check: %s %s: exit %d\n%s" % (f, node, p.returncode, p.stderr))
                bad += 1
                continue
            out = json.loads(p.stdout)
            v, s = out["value"], out["solve"]
            if not (out["difference"] <= out["bound"] <= (port_bound * (1 + 1e-12) if "." in node else 1e-12)):
                print("FAIL self-check: %s %s: %r against %r" % (f, node, v, s))
                bad += 1
    print("self-check: %d formulas of example circuits (nodes, and port fields) agree with the solver "
          "to 1e-12 (port fields 1e-9, or 16 times the solve's 4 eps / rcond)" % (checked - bad))
    return bad


def mesh(n_nodes, extra, seed):
    rng = random.Random(seed)
    lines = ["ground gnd", "voltage vs gnd -> n1 5 V"]
    k = 0
    for i in range(1, n_nodes + 1):
        j = rng.randrange(0, i)
        lines.append("resistor r%d %s -> n%d %dk" % (k, "gnd" if j == 0 else "n%d" % j, i, rng.randint(1, 99)))
        k += 1
    for _ in range(extra):
        a, b = rng.sample(range(1, n_nodes + 1), 2)
        lines.append("resistor r%d n%d -> n%d %dk" % (k, a, b, rng.randint(1, 99)))
        k += 1
    return "\n".join(lines) + "\n"


def limits(prog, d):
    bad = 0
    cases = [
        ("more symbols than the limit (every resistor by default)", mesh(38, 60, 3), []),
        ("16 symbols in a dense 39-unknown mesh: the term bound", mesh(38, 60, 3),
         ["--symbols", ",".join("r%d" % i for i in range(16))]),
        ("more unknowns than the limit", mesh(60, 10, 4), ["--symbols", "r1"]),
    ]
    for name, text, extra in cases:
        path = os.path.join(d, "big.stack")
        with open(path, "w") as f:
            f.write(text)
        try:
            p = run(prog, "formula", path, "n20", *extra, timeout=30)
        except subprocess.TimeoutExpired:
            print("FAIL %s: no answer within 30 s" % name)
            bad += 1
            continue
        if p.returncode != 2 or "--symbols" not in p.stderr or "too large" not in p.stderr:
            print("FAIL %s: exit %d, %s" % (name, p.returncode, p.stderr.strip()))
            bad += 1
        else:
            print("ok: %s: %s" % (name, p.stderr.strip().splitlines()[0][:110]))
    # within the bounds, a few symbols in the same mesh still give a formula; with
    # values of many digits its long coefficients are printed rounded, and the
    # printed formula still reads back (else the program exits 3)
    path = os.path.join(d, "big.stack")
    for name, text in (("whole kilohms", mesh(38, 60, 3)),
                       ("values of 5 digits", mesh(38, 60, 3).replace("k\n", ".345k\n"))):
        with open(path, "w") as f:
            f.write(text)
        p = run(prog, "formula", path, "n20", "--symbols", "r40,r41,r42,r43", "--format", "json", timeout=30)
        if p.returncode != 0:
            print("FAIL a 39-unknown mesh, %s, 4 symbols: exit %d %s" % (name, p.returncode, p.stderr[-400:]))
            bad += 1
        else:
            print("ok: a 39-unknown mesh, %s, 4 symbols: %d characters" % (name, len(json.loads(p.stdout)["expression"])))
    return bad


BAD = [
    ("unknown symbol", ["n1", "--symbols", "r_nope"], "neither a part with a value nor a top-level let"),
    ("a function has no rational formula", ["abs(n1)"], "has no rational formula"),
    ("an unknown node", ["n_nope"], "error"),
]


def bad_requests(prog, d):
    bad = 0
    path = os.path.join(d, "small.stack")
    with open(path, "w") as f:
        f.write("ground gnd\nvoltage vs gnd -> n1 5 V\nresistor r1 n1 -> n2 1k\nresistor r2 n2 -> gnd 1k\n")
    for name, args, want in BAD:
        p = run(prog, "formula", path, *args)
        if p.returncode != 2 or want not in p.stderr:
            print("FAIL %s: exit %d, %s" % (name, p.returncode, p.stderr.strip()))
            bad += 1
        else:
            print("ok: %s" % name)
    return bad


def main():
    prog, root = sys.argv[1], sys.argv[2]
    with tempfile.TemporaryDirectory() as d:
        bad = self_checks(prog, root) + limits(prog, d) + bad_requests(prog, d)
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
