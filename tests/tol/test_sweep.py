#!/usr/bin/python3
"""End-to-end checks of `loadstack sweep` against closed forms.

Sources: the divider law Vout = V*Rb/(Rt+Rb) and Ohm's law V = I*R (closed
forms, computed here at every point); the point spacing against numpy's
linspace and geomspace (Debian's python3-numpy); the Shockley diode equation
is monotonic in its current (a textbook property), so a diode sweep must be
monotonic and smooth.
"""
import csv
import io
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lsrun import circuit, run, run_json, check, close, finish  # noqa: E402

import numpy as np  # noqa: E402

DIVIDER = circuit("sweep_div.stack", """\
title "Tank-level sender divider"
let r_sender = 4.7k
let v_bus = 12 V
ground gnd
voltage  bus   gnd -> vin v_bus
resistor r_top vin -> mid 10k
resistor r_s   mid -> gnd r_sender
expect mid between 1 V and 6 V
""")


def test_linear():
    n = 51
    j = run_json(["sweep", DIVIDER, "r_sender", "1k", "100k", "mid", "r_top.current"])
    if not j:
        return
    check(j["let"] == "r_sender" and len(j["points"]) == n, "51 points by default, the let named")
    xs = np.linspace(1e3, 100e3, n)
    bad = 0
    for p, x in zip(j["points"], xs):
        bad += not close(p["r_sender"], x, rel=1e-14, what=f"point {x:.6g}: the let's value (numpy linspace)")
        bad += not close(p["mid"], 12 * x / (10e3 + x), rel=1e-12, what="  divider law")
        bad += not close(p["r_top.current"], 12 / (10e3 + x), rel=1e-12, what="  Ohm's law for the current")
    check(bad == 0, "every point of the linear sweep matches its closed form")


def test_log_csv():
    path = circuit("sweep_isrc.stack", """\
title "Soil probe excitation"
let i_exc = 100 uA
ground gnd
current  src gnd -> probe i_exc
resistor r_probe probe -> gnd 2.2k
""")
    rc, out, err = run(["sweep", path, "i_exc", "1uA", "1mA", "probe", "--steps", "7", "--log", "--format", "csv"],
                       check_rc=0)
    rows = list(csv.reader(io.StringIO(out)))
    check(rows[0] == ["i_exc", "probe"], f"CSV header is the let then the quantities, got {rows[0]}")
    xs = np.geomspace(1e-6, 1e-3, 7)
    check(len(rows) == 8, "one CSV row per point")
    for r, x in zip(rows[1:], xs):
        close(float(r[0]), x, rel=1e-12, what="log spacing against numpy geomspace")
        close(float(r[1]), 2.2e3 * float(r[0]), rel=1e-12, what="Ohm's law V = I*R")
    rc, out, err = run(["sweep", path, "i_exc", "1uA", "1mA", "probe", "--steps", "4"], check_rc=0)
    check("i_exc" in out and "probe" in out and len(out.splitlines()) >= 6, "text table has a header and 4 rows")


def test_null_points_and_set():
    j = run_json(["sweep", DIVIDER, "r_sender", "0", "10k", "mid", "--steps", "3", "--set", "r_sender=1k",
                  "--set", "v_bus=6V"])
    if not j:
        return
    pts = j["points"]
    check(pts[0]["mid"] is None, "a zero resistance is an unsolvable point: null")
    close(pts[1]["mid"], 6 * 5e3 / 15e3, rel=1e-12, what="--set of another let applies; the swept one wins")
    close(pts[2]["mid"], 6 * 10e3 / 20e3, rel=1e-12, what="last point = TO")


def test_diode_monotonic():
    path = circuit("sweep_diode.stack", """\
title "Indicator LED drive"
let v_in = 1 V
ground gnd
voltage  src gnd -> a v_in
resistor r_lim a -> k 1k
diode    d1 k -> gnd isat=2n ideality=1.8
""")
    rc, out, err = run(["solve", path])
    if rc == 2 and "diode" in err:
        print("skip diode sweep: no diode part in this build")
        return
    j = run_json(["sweep", path, "v_in", "0", "5", "k", "d1.current", "--steps", "101"])
    if not j:
        return
    v = np.array([p["k"] for p in j["points"]], dtype=float)
    i = np.array([p["d1.current"] for p in j["points"]], dtype=float)
    check(np.all(np.isfinite(v)), "every diode point solved")
    check(np.all(np.diff(v) > 0) and np.all(np.diff(i) > 0), "diode voltage and current rise monotonically")
    # smooth: no jumps; the slope of V(k) never grows between steps (the diode compresses)
    d = np.diff(v)
    check(np.all(d[1:] <= d[:-1] * (1 + 1e-6) + 1e-12), "diode voltage is concave in the drive (smooth curve)")


def test_bad():
    rc, out, err = run(["sweep", DIVIDER, "nope", "1k", "2k", "mid"], check_rc=2)
    check("nope" in err, "an unknown let is named")
    rc, out, err = run(["sweep", DIVIDER, "r_sender", "-1k", "2k", "mid", "--log"], check_rc=2)
    rc, out, err = run(["sweep", DIVIDER, "r_sender", "one", "2k", "mid"], check_rc=2)
    rc, out, err = run(["sweep", DIVIDER, "r_sender", "1k", "2k", "mid *"], check_rc=2)
    check("quantity:1:" in err and "^" in err, "a bad QUANTITY gets file:line:col and a caret")
    rc, out, err = run(["sweep", DIVIDER, "v_bus", "1kohm", "2kohm", "mid"], check_rc=2)
    check("resistance" in err and "voltage" in err, "FROM in ohms for a voltage let is refused, both named")
    rc, out, err = run(["sweep", DIVIDER, "r_sender", "1k", "2k", "mid", "--steps", "1"], check_rc=2)
    rc, out, err = run(["sweep", DIVIDER, "r_sender", "1k", "2k"], check_rc=2)


def main():
    test_linear()
    test_log_csv()
    test_null_points_and_set()
    test_diode_monotonic()
    test_bad()
    finish()


if __name__ == "__main__":
    main()
