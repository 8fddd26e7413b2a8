#!/usr/bin/env python3
"""Every circuit of the test corpus solved both ways: `--solver dense` (LAPACK) and
`--solver sparse` (SuiteSparse) must give the same exit code and, where a report is
written, the same node voltages and part currents, voltages and powers to 1e-9 of the
circuit's scale (the largest magnitude of that quantity in the report, at least 1e-12).

Usage: dense_vs_sparse.py LOADSTACK DIR...   (every *.stack under each DIR)
The reference is the other solver: the two paths share the front end and the
assembly, and nothing else (LU with partial pivoting on the dense matrix against
KLU/UMFPACK/CHOLMOD with their own orderings and pivoting)."""
import json
import os
import subprocess
import sys

TOL = 1e-9


def run(exe, path, solver):
    p = subprocess.run([exe, "solve", path, "--format", "json", "--solver", solver],
                       capture_output=True, text=True, errors="replace", timeout=120, cwd=os.path.dirname(path) or ".")
    try:
        rep = json.loads(p.stdout) if p.stdout.strip() else None
    except json.JSONDecodeError:
        rep = None
    return p.returncode, rep, p.stderr


def values(rep):
    """(key, value) pairs of every number that must agree."""
    out = {}
    for k, v in (rep.get("nodes") or {}).items():
        out[("node", k)] = v
    for k, part in (rep.get("parts") or {}).items():
        for f in ("current", "voltage", "power"):
            if isinstance(part.get(f), (int, float)):
                out[(f, k)] = part[f]
    return out


def main():
    exe, dirs = os.path.abspath(sys.argv[1]), sys.argv[2:]
    files = sorted(os.path.abspath(os.path.join(r, f)) for d in dirs for r, _, fs in os.walk(d) for f in fs if f.endswith(".stack"))
    compared = same_refusal = bad = 0
    for path in files:
        cd, rd, ed = run(exe, path, "dense")
        cs, rs, es = run(exe, path, "sparse")
        # the dense path refuses systems above its size limit (docs/limits.md)
        if cd != cs and "the dense solver would need" in ed:
            continue
        if cd != cs:
            print(f"FAIL {path}: exit {cd} dense, {cs} sparse\n  dense: {ed.strip()[:300]}\n  sparse: {es.strip()[:300]}")
            bad += 1
            continue
        if rd is None or rs is None:
            same_refusal += 1
            continue
        vd, vs = values(rd), values(rs)
        if vd.keys() != vs.keys():
            print(f"FAIL {path}: the reports name different quantities")
            bad += 1
            continue
        scale = {}
        for (f, _), v in vd.items():
            if isinstance(v, (int, float)):
                scale[f] = max(scale.get(f, 1e-12), abs(v))
        worst = 0.0
        for key, a in vd.items():
            b = vs[key]
            if a is None or b is None:
                if a != b:
                    print(f"FAIL {path}: {key} is {a} dense, {b} sparse")
                    bad += 1
                continue
            worst = max(worst, abs(a - b) / scale[key[0]])
        if worst > TOL:
            print(f"FAIL {path}: dense and sparse differ by {worst:.3g} of the scale")
            bad += 1
        compared += 1
    print(f"{compared} circuits compared, {same_refusal} refused alike by both paths, {bad} disagreements"
          f" ({len(files)} files)")
    if compared < 20:
        print("FAIL: too few circuits solved to compare")
        return 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
