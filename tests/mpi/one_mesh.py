#!/usr/bin/python3
"""One circuit solved across MPI ranks (hypre's distributed matrices), and
ranks that fail.

Usage: one_mesh.py LOADSTACK LOADSTACK_MPI MPIRUN

`mpirun -n K loadstack-mpi CMD FILE --solver iterative` splits each system's
node block by rows among the K ranks; the report must be the single
process's (docs/iterative.md).  Checks, each with its reference:
 1. A 12 x 12 x 12 heater block fed through a source with rint and a port to
    a load (a scenario of ours): the text report of `solve` with 2 and 3
    ranks is byte-identical to one process's except the solver line, which
    must name the ranks (their count changes hypre's coarsening, so the
    iteration count); the JSON node voltages agree to 1e-9 of the largest.
    `thevenin`, `sag` and `influence` (CSV) agree with one process to 1e-8
    of the largest value of their report, part for part.
 2. Two-point resistance of a 10 x 10 x 10 lattice of one-ohm resistors
    between adjacent centre nodes, solved on 2 ranks, against
    scipy.sparse.linalg.spsolve on a Laplacian built here: 1e-9 relative.
 3. A balanced Wheatstone bridge on 2 ranks: the influence of its detector
    resistor on the feed node is exactly 0 (no current flows in balance, the
    bridge balance condition), not the rest of the stopping rule.
 4. A rank that finds no room for hypre's objects
    (LOADSTACK_TEST_HYPRE_NOMEM=1): every rank stops with it, the run ends
    with exit 3, one "out of memory setting up the iterative solver" error
    and no report.
 5. A rank that fails before its exchange of tol's trials or sweep's points
    (LOADSTACK_TEST_RANK_FAILS=1): the others would wait for it forever; the
    run must end by itself (within 60 s) with a non-zero exit and the failed
    rank's word, once.
Exit 0 when every check holds.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

ls1, lsm, mpirun = sys.argv[1:4]
env = dict(os.environ, OMPI_ALLOW_RUN_AS_ROOT="1", OMPI_ALLOW_RUN_AS_ROOT_CONFIRM="1",
           OMPI_MCA_rmaps_base_oversubscribe="1")
tmp = tempfile.mkdtemp(prefix="ls_mpi_")
failures = []


def check(ok, what):
    print(("ok   " if ok else "FAIL ") + what)
    if not ok:
        failures.append(what)


def one(args, extra_env=None):
    return subprocess.run([ls1] + args, capture_output=True, text=True, timeout=120,
                          env=dict(env, **(extra_env or {})))


def ranks(k, args, extra_env=None, timeout=120):
    return subprocess.run([mpirun, "-n", str(k), "--oversubscribe", lsm] + args, capture_output=True, text=True,
                          timeout=timeout, env=dict(env, **(extra_env or {})))


def write(name, text):
    path = os.path.join(tmp, name)
    with open(path, "w") as f:
        f.write(text)
    return path


def lattice(n, feed_line):
    """n^3 one-ohm lattice, node (x, y, z) named n<x>_<y>_<z>, the centre's +x neighbour is ground."""
    c = n // 2
    gnd = (c + 1, c, c)

    def nm(p):
        return "g" if p == gnd else "n%d_%d_%d" % p
    lines = ["ground g"]
    k = 0
    for x in range(n):
        for y in range(n):
            for z in range(n):
                for d in ((1, 0, 0), (0, 1, 0), (0, 0, 1)):
                    q = (x + d[0], y + d[1], z + d[2])
                    if max(q) < n:
                        lines.append(f"resistor r{k} {nm((x, y, z))} -> {nm(q)} 1")
                        k += 1
    lines += feed_line(nm)
    return "\n".join(lines) + "\n", nm, gnd


def numbers(csv_text):
    """{first cell: [floats of the row]} of a CSV report (non-numbers left out)."""
    out = {}
    for line in csv_text.splitlines()[1:]:
        key, vals = [], []
        for c in line.split(","):
            try:
                vals.append(float(c))
            except ValueError:
                key.append(c)
        out[",".join(key)] = vals
    return out


def agree(a, b, rel):
    if a.keys() != b.keys():
        return False
    scale = max([abs(v) for vs in a.values() for v in vs] + [1e-300])
    return all(len(a[k]) == len(b[k]) and all(abs(x - y) <= rel * scale for x, y in zip(a[k], b[k])) for k in a)


# 1. the heater block with a port
text, nm, _ = lattice(12, lambda nm: ["voltage vs g -> top 5 V rint=0.2", "resistor rfeed top -> n0_0_11 10",
                                      "port p_out n11_11_11 -> load", "resistor rload load -> g 1k"])
block = write("block.stack", 'title "Heater block with a sense port"\n' + text)
it = ["--solver", "iterative"]
ref = one(["solve", block] + it)
check(ref.returncode == 0 and ref.stdout, "one process solves the block")
for k in (2, 3):
    got = ranks(k, ["solve", block] + it)
    a, b = ref.stdout.splitlines(), got.stdout.splitlines()
    same = got.returncode == 0 and len(a) == len(b) and a[:1] == b[:1] and a[2:] == b[2:]
    check(same, f"solve text on {k} ranks identical to one process's but the solver line")
    check(len(b) > 1 and f"(hypre, {k} ranks)" in b[1], f"the solver line names the {k} ranks: {b[1] if len(b) > 1 else ''}")
refj = json.loads(one(["solve", block, "--format", "json"] + it).stdout)
gotj = json.loads(ranks(2, ["solve", block, "--format", "json"] + it).stdout)
scale = max(abs(v) for v in refj["nodes"].values())
check(refj["nodes"].keys() == gotj["nodes"].keys() and
      all(abs(refj["nodes"][n] - gotj["nodes"][n]) <= 1e-9 * scale for n in refj["nodes"]),
      "JSON node voltages on 2 ranks agree with one process to 1e-9")
check(gotj["solver"]["library"] == "hypre, 2 ranks" and gotj["solver"]["method"] == "iterative-amg",
      "JSON solver: iterative-amg, hypre, 2 ranks")
for args in (["thevenin", block, "n3_3_3"], ["sag", block, "n11_11_11"], ["influence", block, "p_out.sag"],
             ["influence", block, "n6_6_6"]):
    r1 = one(args + ["--format", "csv"] + it)
    r2 = ranks(2, args + ["--format", "csv"] + it)
    ok = r1.returncode == r2.returncode == 0 and r1.stdout and agree(numbers(r1.stdout), numbers(r2.stdout), 1e-8)
    check(ok, f"{args[0]} {args[2]} on 2 ranks agrees with one process to 1e-8")

# 2. two-point resistance against scipy
n = 10
text, nm, gnd = lattice(n, lambda nm: [f"current feed g -> {nm((n // 2, n // 2, n // 2))} 1 A"])
lat = write("lattice.stack", 'title "Lattice 10^3"\n' + text)
idx = {(x, y, z): (x * n + y) * n + z for x in range(n) for y in range(n) for z in range(n)}
rows, cols, vals = [], [], []
for p, i in idx.items():
    for d in ((1, 0, 0), (0, 1, 0), (0, 0, 1)):
        q = (p[0] + d[0], p[1] + d[1], p[2] + d[2])
        if q in idx:
            j = idx[q]
            rows += [i, j, i, j]
            cols += [i, j, j, i]
            vals += [1.0, 1.0, -1.0, -1.0]
m = n ** 3
lap = sp.csr_matrix((vals, (rows, cols)), shape=(m, m))
keep = [i for i in range(m) if i != idx[gnd]]
b = np.zeros(m)
centre = (n // 2, n // 2, n // 2)
b[idx[centre]] = 1.0
r_ref = spla.spsolve(lap[keep][:, keep].tocsc(), b[keep])[keep.index(idx[centre])]
p = ranks(2, ["solve", lat, "--format", "json"] + it)
r_got = json.loads(p.stdout)["nodes"][nm(centre)] if p.returncode == 0 else float("nan")
check(abs(r_got - r_ref) <= 1e-9 * r_ref, f"two-point resistance on 2 ranks {r_got!r} against scipy {r_ref!r}")

# 3. the balanced bridge
bridge = write("bridge.stack", 'title "Balanced strain bridge"\nground g\ncurrent feed g -> a 1 mA\n'
               "resistor r1 a -> b 1k\nresistor r2 a -> c 2k\nresistor r3 b -> g 1.5k\n"
               "resistor r4 c -> g 3k\nresistor r_gal b -> c 470\n")
p = ranks(2, ["influence", bridge, "a", "--format", "csv"] + it)
row = [l for l in p.stdout.splitlines() if l.startswith("r_gal,")]
check(p.returncode == 0 and row and row[0].split(",")[3:5] == ["0", "0"],
      f"the detector's influence in balance is exactly 0 on 2 ranks: {row}")

# 4. a rank without room for hypre
p = ranks(2, ["solve", block] + it, {"LOADSTACK_TEST_HYPRE_NOMEM": "1"})
check(p.returncode == 3 and p.stderr.count("out of memory setting up the iterative solver (hypre, 2 ranks)") == 1
      and not p.stdout, f"a rank out of memory for hypre: exit {p.returncode}, said once, no report")

# 5. a rank that fails before its exchange
demo = write("divider.stack", 'title "Trimmed divider"\nground g\nvoltage vs g -> a 5 V\n'
             "let r_low = 10k\nresistor rt a -> o 10k tol=1%\nresistor rb o -> g r_low tol=5%\n")
for args in (["tol", demo, "o", "--trials", "3000"], ["sweep", demo, "r_low", "1k", "100k", "o", "--steps", "40"]):
    try:
        p = ranks(2, args, {"LOADSTACK_TEST_RANK_FAILS": "1"}, timeout=60)
        check(p.returncode != 0 and p.stderr.count("rank 1 of 2 stopped") == 1 and not p.stdout,
              f"{args[0]}: rank 1 failing before its exchange ends the run: exit {p.returncode}")
    except subprocess.TimeoutExpired:
        check(False, f"{args[0]}: rank 1 failing before its exchange left the others waiting (no end in 60 s)")
sys.exit(1 if failures else 0)
