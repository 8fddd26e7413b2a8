#!/usr/bin/python3
"""fit's fast path reaches the same answer as the plain one (docs/fit.md, "The
search"): the search's candidates test their matrices for singularity only
(src/solve/dense.c: a floor under the reciprocal condition stands in for
LAPACK's estimate where it proves the test passes), while the reported
candidates, the finalists' trials and the written values are solved on the
full path.  LOADSTACK_FIT_PLAIN=1 puts every candidate on the full path.

Each case runs both ways and the two runs must agree exactly: exit code,
stdout (the JSON: chosen design, every figure, the search's counts, proven
and the limit) and stderr.  Any decision the fast path changed (a candidate
ranked, a box ruled out, a solve counted) would show in the JSON.  The
circuits are the other fit tests' (test_fit_bb.py's bias ladder with and
without its power check, test_fit_cases.py's converter tap, feasible and
not, the level shifter of circuits/) and the benchmark's op-amp chain with 4
and 8 free parts, for the margin, current and yield goals, by enumeration,
by the continuous path (LOADSTACK_FIT_EXHAUSTIVE=1) and by branch and bound,
finished and stopped by --max-solves.  That the floor is a floor and the
factors the same bits is tests/unit/solve/test_dense_floor.c's (against
LAPACK's dgecon and a closed form).
"""
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


def same(args, env=None):
    """Run fit ARGS on the fast path and the plain one; they must agree exactly."""
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
    check(fast == full, f"{what}: the fast path's exit code, report and messages are the plain path's")
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
    print(f"{compared} runs compared, fast path against plain")
    finish()


if __name__ == "__main__":
    main()
