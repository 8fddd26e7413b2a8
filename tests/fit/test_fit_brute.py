#!/usr/bin/python3
"""fit against the test's own brute force: every standard-value combination of
three free resistors, judged independently with numpy.

Sources outside the project:
- IEC 60063: the E12 series 1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2
  (the standard's table, written here from memory; checked below to lie
  within 5 % of the geometric rule 10^(i/12) it is built on).
- The divider law and the series-parallel rules (any circuits text) for the
  loaded voltages; zout of the opened port = r_top || r_bot, zin = r_ser + r_in.
- P = V^2 / R for the rating; the ratio rule zin/zout >= 10 is common practice
  (language.md); the margins and the ranking are the ones docs/fit.md defines
  (range: distance to the nearer end over half the width; one-sided: distance
  over the limit's size; feasible first, then the largest smallest margin,
  ties to the least supply current).

The same circuit is then fitted with the enumeration switched off
(LOADSTACK_FIT_EXHAUSTIVE=1), so the continuous stage, the series
neighbourhood and branch and bound run: the proven answer is the brute-force one.
"""
import os
import sys

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tol"))
from lsrun import circuit, run, run_json, check, close, finish  # noqa: E402

E12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]
VS, R_IN = 12.0, 100e3
LO, HI = 3.0, 3.3        # expect sense between 3.0 V and 3.3 V
RATING = 0.0625          # r_top's rating, W


def series_in(lo, hi):
    """E12 values in [lo, hi]."""
    vals = []
    for d in range(-1, 8):
        for m in E12:
            v = round(m * 10 ** d, 6)
            if lo * (1 - 1e-9) <= v <= hi * (1 + 1e-9):
                vals.append(v)
    return sorted(vals)


def brute():
    """Every combination, judged: returns (best values, its margin, count, feasible count)."""
    rt, rb, rs = np.meshgrid(series_in(1e3, 100e3), series_in(1e3, 100e3), series_in(100, 10e3), indexing="ij")
    rt, rb, rs = rt.ravel(), rb.ravel(), rs.ravel()
    rload = rs + R_IN
    rlow = rb * rload / (rb + rload)
    tap = VS * rlow / (rt + rlow)
    sense = tap * R_IN / rload
    m_expect = np.minimum(sense - LO, HI - sense) / ((HI - LO) / 2)
    zout = rt * rb / (rt + rb)
    ratio = rload / zout
    m_ratio = (ratio - 10) / 10
    p_top = (VS - tap) ** 2 / rt
    feasible = (m_expect >= 0) & (m_ratio >= 0) & (p_top <= RATING)
    margin = np.minimum(m_expect, m_ratio)
    current = VS / (rt + rlow)
    idx = np.flatnonzero(feasible)
    best = idx[np.argmax(margin[idx])]
    ties = idx[np.abs(margin[idx] - margin[best]) <= 1e-9 * abs(margin[best])]
    best = ties[np.argmin(current[ties])]
    return (rt[best], rb[best], rs[best]), margin[best], len(rt), len(idx)


def main():
    # every E12 value lies within 5 % of the geometric rule 10^(i/12) the series is built on
    check(all(abs(v / 10 ** (i / 12) - 1) < 0.05 for i, v in enumerate(E12)), "E12 table against its rule")
    path = circuit("sense_chain.stack", """\
title "Soil-probe excitation tap"
ground gnd
voltage  vs    gnd -> vin 12 V
resistor r_top vin -> tap 10k free=1k..100k rating=0.0625W
resistor r_bot tap -> gnd 10k free=1k..100k
port     p_tap tap -> buf
resistor r_ser buf -> sense 1k free=100..10k
resistor r_in  sense -> gnd 100k
expect sense between 3.0 V and 3.3 V
""")
    (bt, bb, bs), bm, n, nfeas = brute()
    print(f"brute force: {n} combinations, {nfeas} feasible, best r_top {bt:g} r_bot {bb:g} r_ser {bs:g} "
          f"margin {bm:.6f}")
    j = run_json(["fit", path, "--series", "E12"])
    if j:
        check(j["search"]["method"] == "every-combination", "three E12 parts over two decades are enumerated")
        check(j["search"]["combinations"] == n, f"{n} combinations, got {j['search']['combinations']}")
        ch = j["chosen"]
        got = (ch["values"]["r_top"], ch["values"]["r_bot"], ch["values"]["r_ser"])
        check(all(abs(a - b) <= 1e-9 * b for a, b in zip(got, (bt, bb, bs))),
              f"fit chose {got}, brute force {(bt, bb, bs)}")
        close(ch["margin"], bm, rel=1e-9, what="the chosen margin")
        for c in j["candidates"]:
            for name, v in c["values"].items():
                check(any(abs(v - s) <= 1e-9 * s for s in (series_in(1e3, 100e3) + series_in(100, 10e3))),
                      f"{name} = {v} is an E12 value")
    # the continuous stage and the neighbourhood, on the same case
    rc, out, err = run(["fit", path, "--series", "E12", "--format", "json"], env={"LOADSTACK_FIT_EXHAUSTIVE": "1"})
    check(rc == 0, f"continuous path: exit {rc}\n{err}")
    if rc == 0:
        import json
        k = json.loads(out)
        check(k["search"]["method"] == "continuous-then-branch-and-bound", "the enumeration was switched off")
        check(k["search"]["solved"] < n / 2, f"the search solves far fewer candidates ({k['search']['solved']})")
        m = k["chosen"]["margin"]
        got = tuple(k["chosen"]["values"][p] for p in ("r_top", "r_bot", "r_ser"))
        print(f"continuous path and branch and bound: {k['search']['continuous_solves']} continuous solves, "
              f"{k['search']['solved']} candidates, margin {m:.6f} of the best {bm:.6f}, proven {k['search']['proven']}")
        check(k["search"]["proven"] is True, "branch and bound finished")
        check(all(abs(a - b) <= 1e-9 * b for a, b in zip(got, (bt, bb, bs))),
              f"branch and bound chose {got}, brute force {(bt, bb, bs)}")
    finish()


if __name__ == "__main__":
    main()
