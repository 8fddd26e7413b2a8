#!/usr/bin/python3
"""Independent brute force of ls_pick_ratio, run against tests/unit/base/pick_driver.

Usage: test_pick_ref.py PATH/TO/pick_driver      (exit 0 = all cases agree)

The series are rebuilt here without the C tables: E48/E96/E192 from IEC 60063's
defining formula round(10^(i/n), 2) (plus the standard's one exception, E192
9.20 where the formula gives 9.19); E24 from the standard's historic list, E12
and E6 as its every 2nd and 4th value.  The search enumerates every pair over a
wide fixed range of decades, filters by the documented rules, and sorts the
whole list, instead of keeping a running top-N as the C code does.
"""
import math
import subprocess
import sys

E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]


def mantissas(name):
    """Mantissas in hundredths for one decade of series `name`."""
    if name in ("E6", "E12", "E24"):
        step = {"E6": 4, "E12": 2, "E24": 1}[name]
        return [round(v * 100) for v in E24[::step]]
    n = int(name[1:])
    m = [round(100 * 10 ** (i / n)) for i in range(n)]
    if n == 192:
        assert m[185] == 919
        m[185] = 920
    return m


def value(code, k):
    """code * 10^k, one correctly rounded operation (as documented in eseries.h)."""
    return float(code * 10 ** k) if k >= 0 else code / 10 ** (-k)


def brute(name, ratio, lo, hi, zmax, n, part=None):
    """part: (lowest, highest) value allowed, default 0.1 ohm..100 Mohm widened to
    reach [lo, hi] (the program's documented part range)."""
    lo = lo if lo > 0 else 1e3
    hi = hi if hi > 0 else 1e6
    zmax = zmax if zmax > 0 else math.inf
    plo, phi = part if part else (min(0.1, lo), max(100e6, hi))
    vmin = max(10.0 ** (math.floor(math.log10(max(min(ratio, 1 - ratio) * lo, plo))) - 1), plo * (1 - 1e-12))
    vals = sorted({value(c, d - 2) for d in range(-4, 10) for c in mantissas(name)})
    vals = [v for v in vals if vmin * (1 - 1e-15) <= v <= min(hi, phi) * (1 + 1e-12)]
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
    return [(r[2], r[3], r[4], r[5], r[1]) for r in rows[:n]]


CASES = [  # series, ratio, total_lo, total_hi, zout_max, N
    ("E24", 0.33, 0, 0, 0, 10),
    ("E24", 3.3 / 5.0, 0, 0, 0, 10),           # 5 V rail down to 3.3 V
    ("E12", 0.1, 0, 0, 0, 10),
    ("E6", 0.25, 0, 0, 0, 10),
    ("E48", 0.7071, 2e3, 2e5, 0, 10),
    ("E96", 0.4142, 0, 0, 5e3, 10),
    ("E96", 0.01, 0, 0, 0, 10),                # 1:100, small rbot decades
    ("E96", 0.995, 0, 0, 0, 10),               # small rtop decades
    ("E192", 0.123456, 1e4, 1e5, 0, 10),
    ("E24", 0.5, 1000, 1005, 0, 10),           # only 4 pairs qualify (fewer than N)
    ("E12", 0.2, 1e3, 1e6, 800, 25),
]


def main():
    drv = sys.argv[1]
    bad = 0
    for case in CASES:
        out = subprocess.run([drv] + [repr(c) if isinstance(c, float) else str(c) for c in case],
                             capture_output=True, text=True, check=True).stdout
        got = [tuple(float(x) for x in line.split()) for line in out.splitlines()]
        want = brute(*case)
        ok = len(got) == len(want) and all(
            g[0] == w[0] and g[1] == w[1] and
            all(math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-15) for a, b in zip(g[2:], w[2:]))
            for g, w in zip(got, want))
        print(("ok  " if ok else "FAIL"), case, f"{len(got)} results")
        if not ok:
            bad += 1
            for g, w in zip(got + [None] * len(want), want + [None] * len(got)):
                if g is None and w is None:
                    break
                print("   got ", g, "\n   want", w)
    print("all agree" if not bad else f"{bad} case(s) differ")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
