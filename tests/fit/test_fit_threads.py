#!/usr/bin/python3
"""fit gives the same report on one thread and on two (docs/fit.md, "Both
cores"): branch and bound solves the corners, combinations and inward steps
of a group of boxes as one batch, on two threads when LOADSTACK_THREADS (else
the processor count) allows, and counts, caches and keeps them in the batch's
order, so nothing may depend on the thread count.

The circuits are test_fit_bb.py's bias ladder (four free resistors, 160 000
combinations: branch and bound runs) with and without its non-monotone power
check, for the margin and current goals, finished and stopped by --max-solves,
in text and JSON, and the benchmark's op-amp chain (tests/bench/fit_bench.py)
stopped at 1000 and at 25 000 solves; the check is byte-for-byte equality of the two runs' output
(no outside value is needed: the claim is that the thread count changes
nothing, the test_fit_bb.py and test_fit_limit.py enumerations check the
answers themselves).
"""
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "tol"))
sys.path.insert(0, HERE)
from lsrun import circuit, run, check, finish  # noqa: E402
from test_fit_bb import ladder  # noqa: E402


def main():
    start = ("5.6k", "1k", "6.2k", "1.2k")
    compared = 0
    for power in (False, True):
        path = circuit(f"threads_{int(power)}.stack", ladder(start, power))
        for goal in ("margin", "current"):
            for cap in ("60", None):
                for fmt in ("json", "text"):
                    args = ["fit", path, "--goal", goal, "--format", fmt] + (["--max-solves", cap] if cap else [])
                    outs = []
                    for threads in ("1", "2"):
                        rc, out, err = run(args, env={"LOADSTACK_THREADS": threads})
                        check(rc == 0, f"{' '.join(args)} on {threads} thread(s): exit {rc}\n{err}")
                        outs.append(out)
                    check(outs[0] == outs[1] and outs[0] != "",
                          f"{' '.join(args[2:])} (power check {power}): one thread and two give the same report")
                    compared += 1
    # the benchmark's 30-part chain (two op-amps with rails, five ports): the
    # op-amps' limit states must come out the same on either thread's op
    sys.path.insert(0, os.path.join(HERE, "..", "bench"))
    from fit_bench import chain  # noqa: E402
    path = circuit("threads_chain.stack", chain(4))
    # 1k solves: the first boxes; 25k: many groups of boxes whose corners,
    # combinations and inward steps are solved as shared batches, then the
    # limit of the stopped search (docs/fit.md, "Both cores")
    for cap in ("1k", "25k"):
        args = ["fit", path, "--format", "json", "--max-solves", cap, "--quiet"]
        outs = [run(args, env={"LOADSTACK_THREADS": t})[1] for t in ("1", "2")]
        check(outs[0] == outs[1] and outs[0] != "",
              f"the op-amp chain, --max-solves {cap}: one thread and two give the same report")
        compared += 1
    print(f"{compared} reports compared, one thread against two")
    finish()


if __name__ == "__main__":
    main()
