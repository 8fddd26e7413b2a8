#!/usr/bin/python3
"""The resistor option snap=SERIES rounds the value to IEC 60063 and says so.

Expected values: the nearest values of the IEC 60063 series (E24 has 10 and 11
in that decade, so 10.3k rounds to 10k; E96 has 4.53, 4.64, 4.75, from the
standard's rule round(10^(i/96), 2) at i = 63, 64, 65), the divider law for
the node voltage, and the rounding error snapped/written - 1.
"""
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lsrun import circuit, run, run_json, check, close, finish  # noqa: E402


def main():
    check([round(10 ** (i / 96), 2) for i in (63, 64, 65)] == [4.53, 4.64, 4.75], "E96 rule near 4.6")
    path = circuit("snap.stack", """\
title "Tank sender with purchasable values"
ground gnd
voltage  tank  gnd -> vin 5 V
resistor r_top vin -> mid 10.3k snap=E24 tol=1%
resistor r_bot mid -> gnd 4.6k  snap=E96
resistor r_ok  vin -> gnd 4.7k  snap=E12          # already an E12 value: no note
""")
    j = run_json(["solve", path])
    if j:
        close(j["nodes"]["mid"], 5 * 4640 / (10000 + 4640), rel=1e-12, what="divider law with the snapped values")
        snaps = [w for w in j["warnings"] if w["code"] == "snapped"]
        check(len(snaps) == 2, f"two 'snapped' warnings, got {len(snaps)}")
        if len(snaps) == 2:
            e1 = 100 * (10000 / 10300 - 1)
            e2 = 100 * (4640 / 4600 - 1)
            check(f"{e1:+.3g}%" in snaps[0]["message"] and "r_top" in snaps[0]["message"],
                  f"r_top's rounding error {e1:+.3g}% is shown: {snaps[0]['message']}")
            check(f"{e2:+.3g}%" in snaps[1]["message"] and snaps[1]["line"] == 5,
                  f"r_bot's rounding error {e2:+.3g}% is shown at line 5: {snaps[1]['message']}")
    rc, out, err = run(["solve", path], check_rc=0)
    check("snap.stack:4:" in err and "warning:" in err and "^" in err, "the note has file:line:col and a caret")
    # tolerance analysis varies the snapped value
    j = run_json(["tol", path, "r_top.current", "--trials", "100"])
    if j:
        close(j["nominal"], 5 / (10000 + 4640), rel=1e-12, what="tol starts from the snapped value")
    bad = circuit("snap_bad.stack", "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1k snap=E7\n"
                  "voltage w gnd -> b 1 V snap=E24\nresistor rb b -> gnd 1k\n")
    rc, out, err = run(["solve", bad], check_rc=2)
    check("snap_bad.stack:3:" in err and "E6|E12|E24" in err, "an unknown series is an error naming the choices")
    check("snap_bad.stack:4:" in err, "snap= on a voltage source is an error (resistors only)")
    finish()


if __name__ == "__main__":
    main()
