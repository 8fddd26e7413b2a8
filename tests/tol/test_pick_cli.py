#!/usr/bin/python3
"""`loadstack pick ratio R` end to end, against an independent brute force.

The brute force is the one of tests/ref/test_pick_ref.py: it rebuilds the
series from IEC 60063 without the program's tables, tries every pair of values
(no search shortcuts), keeps the pairs whose sum lies in the range and whose
zout = rtop||rbot is within the limit, and sorts them by |error|, then zout,
then rtop (the order cli.md asks for: best 10 by |error|, then by zout).
"""
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lsrun import run, run_json, check, close, finish  # noqa: E402

# The independent brute force of the library test (it rebuilds the series
# without our tables; see tests/ref/test_pick_ref.py for its sources).
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "ref"))
from test_pick_ref import brute  # noqa: E402


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
        want = brute(series, ratio, lo, hi, zmax, 10)  # (rtop, rbot, ratio, error, zout)
        got = j["items"]
        check(len(got) == len(want) == 10, f"{series} {ratio}: 10 pairs")
        same = [(g["rtop"], g["rbot"]) for g in got] == [(w[0], w[1]) for w in want]
        check(same, f"{series} {ratio} {extra}: the same pairs in the same order as the brute force\n"
              f"  got  {[(g['rtop'], g['rbot']) for g in got]}\n  want {[(w[0], w[1]) for w in want]}")
        if same:
            print(f"ok   {series} {ratio} {extra}: 10 pairs agree with the brute force")
        for g, w in zip(got, want):
            close(g["ratio"], w[2], rel=1e-14, what="  achieved ratio rbot/(rtop+rbot)")
            close(g["error"], w[3], rel=1e-9, abs_=1e-15, what="  relative error")
            close(g["zout"], w[4], rel=1e-14, what="  zout = rtop || rbot")
    rc, out, err = run(["pick", "ratio", "0.66", "--format", "csv"], check_rc=0)
    check(out.splitlines()[0] == "rank,rtop,rbot,ratio,error,zout" and len(out.splitlines()) == 11, "CSV: header + 10")
    rc, out, err = run(["pick", "ratio", "0.66"], check_rc=0)
    check("E24" in out and "rtop" in out, "text report names the series (E24 by default)")
    for args in (["pick", "ratio", "0"], ["pick", "ratio", "1"], ["pick", "ratio", "abc"],
                 ["pick", "ratio", "0.5", "--series", "E5"], ["pick", "ratio", "0.5", "--total", "10k..1k"],
                 ["pick", "ratio", "0.5", "--zout", "-1"], ["pick", "share", "0.5"], ["pick", "ratio"]):
        rc, out, err = run(args)
        check(rc == 2 and "error" in err, f"{' '.join(args)}: exit 2 with a message (got {rc})")
    part_ranges()
    finish()


def part_ranges():
    """Candidates stay within the values resistors are made in, 0.1 ohm to 100 Mohm
    (common practice: the ranges of ordinary thick- and thin-film resistor families),
    unless --total reaches beyond; a ratio no pair can reach within the series'
    tolerance (E24: 5 %) is said to be out of reach, with exit 1 and the closest pair."""
    rc, out, err = run(["pick", "ratio", "1e-300", "--format", "json"])
    j = __import__("json").loads(out)
    check(rc == 1 and j["fits"] is False and j["items"] == [], f"ratio 1e-300: no pair fits, exit 1 (got {rc})")
    c = j.get("closest", {})
    check(c.get("rbot", 0) >= 0.1 and c.get("rtop", 1e9) <= 100e6, "ratio 1e-300: the closest pair uses real values")
    rc, out, err = run(["pick", "ratio", "1e-300"])
    check(rc == 1 and "no pair comes within 5%" in out, "ratio 1e-300: the text says no pair comes within 5 %")
    rc, out, err = run(["pick", "ratio", "0.999999999999", "--format", "json"])
    j = __import__("json").loads(out)
    vals = [v for it in j["items"] for v in (it["rtop"], it["rbot"])]
    check(rc == 0 and vals and min(vals) >= 0.1 and max(vals) <= 100e6,
          "ratio 0.999999999999: every value from 0.1 ohm to 100 Mohm (no 1 nohm)")
    want = brute("E24", 0.999999999999, 1e3, 1e6, float("inf"), 10, part=(0.1, 100e6))
    got = [(it["rtop"], it["rbot"]) for it in j["items"]]
    check(got == [(w[0], w[1]) for w in want], "ratio 0.999999999999: the brute force's pairs within the part range")
    rc, out, err = run(["pick", "ratio", "1e-9", "--total", "1..1G", "--format", "json"])
    j = __import__("json").loads(out)
    check(rc == 0 and j["fits"] and max(it["rtop"] for it in j["items"]) > 100e6 - 1,
          "--total 1..1G widens the part range up to 1 Gohm")


if __name__ == "__main__":
    main()
