#!/usr/bin/python3
"""`loadstack pick ratio R` end to end, against a brute force written here.

The series are rebuilt from IEC 60063: E24 and below from the standard's list
(E12 and E6 are every 2nd and 4th E24 value), E48 and E96 from the standard's
defining rule, 10^(i/n) rounded to three significant figures.  The brute force
takes every pair of values from 1 ohm to the top of the total range (no search
shortcuts), keeps the pairs whose sum lies in the range and whose zout =
rtop||rbot is within the limit, and sorts them by |error|, then zout, then rtop
(the order cli.md asks for: best 10 by |error|, then by zout).
"""
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lsrun import run, run_json, check, close, finish  # noqa: E402

E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]


def codes(series):
    if series in ("E6", "E12", "E24"):
        return [round(v * 100) for v in E24[::{"E6": 4, "E12": 2, "E24": 1}[series]]]
    n = int(series[1:])
    return [round(100 * 10 ** (i / n)) for i in range(n)]


def brute(series, ratio, lo=1e3, hi=1e6, zmax=float("inf")):
    vals = sorted({float(c * 10 ** k) for k in range(-2, 8) for c in codes(series)})
    vals = [v for v in vals if 1.0 <= v <= hi * (1 + 1e-12)]
    rows = []
    for rt in vals:
        for rb in vals:
            s = rt + rb
            if not (lo * (1 - 1e-12) <= s <= hi * (1 + 1e-12)):
                continue
            z = rt * rb / s
            if z > zmax * (1 + 1e-12):
                continue
            a = rb / s
            rows.append((abs(a / ratio - 1), z, rt, rb, a, a / ratio - 1))
    rows.sort()
    return rows[:10]


CASES = [  # series, ratio, extra arguments, (lo, hi, zmax) for the brute force
    ("E24", 0.66, [], (1e3, 1e6, float("inf"))),                       # 5 V down to 3.3 V
    ("E12", 0.1, ["--total", "10k..100k"], (1e4, 1e5, float("inf"))),
    ("E96", 0.4142, ["--zout", "5k"], (1e3, 1e6, 5e3)),
    ("E6", 0.25, ["--total", "1k..10k"], (1e3, 1e4, float("inf"))),
    ("E48", 0.7071, ["--total", "2kohm..200kohm", "--zout", "20k"], (2e3, 2e5, 2e4)),
]


def main():
    for series, ratio, extra, (lo, hi, zmax) in CASES:
        j = run_json(["pick", "ratio", repr(ratio), "--series", series] + extra)
        if not j:
            continue
        check(j["series"] == series and j["ratio"] == ratio, f"{series} {ratio}: series and ratio echoed")
        want = brute(series, ratio, lo, hi, zmax)
        got = j["items"]
        check(len(got) == len(want) == 10, f"{series} {ratio}: 10 pairs")
        same = [(g["rtop"], g["rbot"]) for g in got] == [(w[2], w[3]) for w in want]
        check(same, f"{series} {ratio} {extra}: the same pairs in the same order as the brute force\n"
              f"  got  {[(g['rtop'], g['rbot']) for g in got]}\n  want {[(w[2], w[3]) for w in want]}")
        if same:
            print(f"ok   {series} {ratio} {extra}: 10 pairs agree with the brute force")
        for g, w in zip(got, want):
            close(g["ratio"], w[4], rel=1e-14, what="  achieved ratio rbot/(rtop+rbot)")
            close(g["error"], w[5], rel=1e-9, abs_=1e-15, what="  relative error")
            close(g["zout"], w[1], rel=1e-14, what="  zout = rtop || rbot")
    rc, out, err = run(["pick", "ratio", "0.66", "--format", "csv"], check_rc=0)
    check(out.splitlines()[0] == "rank,rtop,rbot,ratio,error,zout" and len(out.splitlines()) == 11, "CSV: header + 10")
    rc, out, err = run(["pick", "ratio", "0.66"], check_rc=0)
    check("E24" in out and "rtop" in out, "text report names the series (E24 by default)")
    for args in (["pick", "ratio", "0"], ["pick", "ratio", "1"], ["pick", "ratio", "abc"],
                 ["pick", "ratio", "0.5", "--series", "E5"], ["pick", "ratio", "0.5", "--total", "10k..1k"],
                 ["pick", "ratio", "0.5", "--zout", "-1"], ["pick", "share", "0.5"], ["pick", "ratio"]):
        rc, out, err = run(args)
        check(rc == 2 and "error" in err, f"{' '.join(args)}: exit 2 with a message (got {rc})")
    finish()


if __name__ == "__main__":
    main()
