#!/usr/bin/python3
"""fit's fast path reaches the same answer as the plain one (docs/fit.md, "The
search"): the search's candidates test their matrices for singularity only
(src/solve/dense.c: a floor under the reciprocal condition stands in for
LAPACK's estimate where it proves the test passes) and factor and solve with
the dense backend's own LU instead of LAPACK's dgetrf and dgetrs, while the
continuous stage, the reported candidates, the finalists' trials and the
written values are solved on the full path.  LOADSTACK_FIT_PLAIN=1 puts every
candidate on the full path.

Each case runs both ways and the two runs must agree: exit code and stderr
exactly; in the JSON the chosen design, every reported candidate in its
order (the ranking), every check, figure, yield and the limit, numbers to a
relative 1e-12 (the own LU's factors differ from LAPACK's in the last bits;
the reported figures are solved on the full path, so in practice they are
the same bits).  The search's work counts (candidates solved,
factorizations, the limit's extra solves, branch and bound's boxes) may
differ by at most 2 % (WORK_REL): branch and bound's flatness tests read the
last bits of figures such as a port's sag, a difference of two nearly equal
voltages.  The circuits are the other fit tests' (test_fit_bb.py's bias
ladder with and without its power check, test_fit_cases.py's converter tap,
feasible and not, the level shifter of circuits/) and the benchmark's op-amp
chain with 4 and 8 free parts, for the margin, current and yield goals, by
enumeration, by the continuous path (LOADSTACK_FIT_EXHAUSTIVE=1) and by
branch and bound, finished and stopped by --max-solves.  That the floor is a
floor is tests/unit/solve/test_dense_floor.c's (against LAPACK's dgecon and a
closed form); the own LU against numpy.linalg.solve is
tests/unit/solve/test_own_lu.py's.  The fall-back (the fast path's choice
failing on the full path, so the search runs again on it) is reached through
LOADSTACK_FIT_REDO=1, as no circuit is known to reach it: the report then says
so and is the plain path's otherwise.
"""
import json
import math
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.join(HERE, "..", "..")
sys.path.insert(0, os.path.join(HERE, "..", "tol"))
sys.path.insert(0, os.path.join(HERE, "..", "bench"))
sys.path.insert(0, HERE)
from lsrun import circuit, run, check, finish  # noqa: E402
from test_fit_bb import ladder  # noqa: E402
from test_fit_cases import ADC_TAP  # noqa: E402
from fit_bench import chain  # noqa: E402


# the search's work counts, which the fast path may change a little
WORK = {".search.solved", ".search.factorizations", ".search.bound.solves"}
WORK_PREFIX = ".search.branch_and_bound."
WORK_REL = 0.02
FIGURE_REL = 1e-12


def flat(o, p=""):
    """(path, leaf) pairs of a JSON value."""
    if isinstance(o, dict):
        for k, v in o.items():
            yield from flat(v, f"{p}.{k}")
    elif isinstance(o, list):
        for i, v in enumerate(o):
            yield from flat(v, f"{p}[{i}]")
    else:
        yield p, o


def agree(key, a, b):
    """Do the two runs' leaves at key agree (module docstring)?"""
    if a == b:
        return True
    if not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in (a, b)):
        return False
    rel = WORK_REL if key in WORK or key.startswith(WORK_PREFIX) else FIGURE_REL
    return math.isfinite(a) and math.isfinite(b) and abs(a - b) <= rel * max(abs(a), abs(b))


def same(args, env=None):
    """Run fit ARGS on the fast path and the plain one; they must agree."""
    env = dict(env or {})
    outs = []
    for plain in ("", "1"):
        e = dict(env)
        e["LOADSTACK_FIT_PLAIN"] = plain
        e.setdefault("LOADSTACK_THREADS", "1")
        outs.append(run(args, env=e))
    fast, full = outs
    what = " ".join(os.path.basename(a) for a in args) + (f" {env}" if env else "")
    check(full[1] != "", f"{what}: the plain path wrote a report (exit {full[0]}: {full[2]})")
    check(fast[0] == full[0] and fast[2] == full[2],
          f"{what}: the fast path's exit code and messages are the plain path's")
    try:
        a, b = dict(flat(json.loads(fast[1]))), dict(flat(json.loads(full[1])))
    except json.JSONDecodeError as ex:
        check(False, f"{what}: a report is not JSON ({ex})")
        return 1
    check(a.keys() == b.keys(), f"{what}: the same members in both reports: {sorted(set(a) ^ set(b))}")
    off = [(k, a[k], b[k]) for k in sorted(a.keys() & b.keys()) if not agree(k, a[k], b[k])]
    check(not off, f"{what}: the fast path's report is the plain path's: {off[:5]}")
    return 1


def fell_back(args):
    """With LOADSTACK_FIT_REDO=1 the fast path's choice is taken as failing on the
    full path (docs/fit.md, "The search"): the report must say the search fell
    back and be the plain path's in every other member, and the text must say
    so in words."""
    e = {"LOADSTACK_THREADS": "1"}
    redo = run(args + ["--format", "json"], env=dict(e, LOADSTACK_FIT_REDO="1"))
    full = run(args + ["--format", "json"], env=dict(e, LOADSTACK_FIT_PLAIN="1"))
    what = " ".join(os.path.basename(a) for a in args) + " (fall-back)"
    check(redo[0] == full[0] and redo[2] == full[2], f"{what}: exit code and messages are the plain path's")
    try:
        a, b = dict(flat(json.loads(redo[1]))), dict(flat(json.loads(full[1])))
    except json.JSONDecodeError as ex:
        check(False, f"{what}: a report is not JSON ({ex})")
        return 1
    said = [k for k, v in a.items() if k.endswith(".fell_back_to_full_path")]
    check(len(said) == 1 and a[said[0]] is True, f"{what}: the report says it fell back: {said}")
    check(not any(k.endswith(".fell_back_to_full_path") for k in b), f"{what}: the plain run does not say so")
    for k in said:
        del a[k]
    check(a.keys() == b.keys(), f"{what}: the same members as the plain run: {sorted(set(a) ^ set(b))}")
    off = [(k, a[k], b[k]) for k in sorted(a.keys() & b.keys()) if not agree(k, a[k], b[k])]
    check(not off, f"{what}: after the fall-back the report is the plain path's: {off[:5]}")
    text = run(args, env=dict(e, LOADSTACK_FIT_REDO="1"))
    plain_text = run(args, env=dict(e, LOADSTACK_FIT_REDO="0"))
    check("solved in full again" in text[1] and "solved in full again" not in plain_text[1],
          f"{what}: the text report says it fell back, only then")
    return 1


def main():
    compared = 0
    start = ("5.6k", "1k", "6.2k", "1.2k")
    for power in (False, True):
        path = circuit(f"plain_ladder_{int(power)}.stack", ladder(start, power))
        for goal in ("margin", "current"):
            for cap in (["--max-solves", "60"], []):
                compared += same(["fit", path, "--goal", goal, "--format", "json"] + cap)
        compared += same(["fit", path, "--goal", "yield", "--trials", "200", "--format", "json"])
    tap = circuit("plain_tap.stack", ADC_TAP.format(rin="100M"))
    bad = circuit("plain_tap_bad.stack", ADC_TAP.format(rin="1M"))
    for path in (tap, bad):
        compared += same(["fit", path, "--format", "json"])
        compared += same(["fit", path, "--format", "json"], env={"LOADSTACK_FIT_EXHAUSTIVE": "1"})
    shifter = os.path.join(ROOT, "circuits", "level_shifter.stack")
    compared += same(["fit", shifter, "--format", "json", "--top", "3"])
    c4 = circuit("plain_chain4.stack", chain(4))
    c8 = circuit("plain_chain8.stack", chain(8))
    compared += same(["fit", c4, "--format", "json", "--max-solves", "3k", "--quiet"])
    compared += same(["fit", c4, "--format", "json", "--max-solves", "1k", "--goal", "yield", "--trials", "100",
                      "--quiet"])
    compared += same(["fit", c4, "--format", "json", "--max-solves", "1k", "--quiet"], env={"LOADSTACK_THREADS": "2"})
    compared += same(["fit", c8, "--format", "json", "--max-solves", "1k", "--quiet"])
    compared += fell_back(["fit", circuit("redo_ladder.stack", ladder(start, True))])
    compared += fell_back(["fit", c4, "--max-solves", "1k", "--quiet"])
    print(f"{compared} runs compared, fast path against plain")
    finish()


if __name__ == "__main__":
    main()
