#!/usr/bin/python3
"""Replay a Monte Carlo run outside the program and compare every statistic.

The trial values are rebuilt here from the published algorithms the program
documents (docs/tolerance.md, src/rng.h): M. E. O'Neill's pcg32 (PCG-XSH-RR,
seeded as the reference pcg32_srandom_r), trial i on stream i with the seed
mixed by SplitMix64's output function (Steele, Lea, Flood 2014), 53-bit
uniforms from two outputs, Box-Muller normals (cos first, then sin).  The
divider law gives each trial's output; numpy (Debian's python3-numpy) then
gives the mean, the sample standard deviation (ddof=1), the extremes and the
percentiles (np.percentile, its default "linear" method), and the yield is
counted here.  Agreement to 1e-12 shows that a seed fixes the answer and that
the statistics are the textbook ones.
"""
import math
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lsrun import circuit, run_json, check, close, finish  # noqa: E402

import numpy as np  # noqa: E402

M64 = (1 << 64) - 1
PCG_MULT = 6364136223846793005


def splitmix64(z):
    z = (z + 0x9E3779B97F4A7C15) & M64
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M64
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M64
    return z ^ (z >> 31)


class Pcg32:
    def __init__(self, seed, stream):
        self.inc = ((stream << 1) | 1) & M64
        self.state = 0
        self.u32()
        self.state = (self.state + seed) & M64
        self.u32()
        self.spare = None

    def u32(self):
        old = self.state
        self.state = (old * PCG_MULT + self.inc) & M64
        x = (((old >> 18) ^ old) >> 27) & 0xFFFFFFFF
        rot = old >> 59
        return ((x >> rot) | (x << ((32 - rot) & 31))) & 0xFFFFFFFF

    def uniform(self):
        a, b = self.u32() >> 5, self.u32() >> 6
        return (a * 67108864.0 + b) * (1.0 / 9007199254740992.0)

    def normal(self):
        if self.spare is not None:
            s, self.spare = self.spare, None
            return s
        u1 = 1.0 - self.uniform()
        u2 = self.uniform()
        rad = math.sqrt(-2.0 * math.log(u1))
        th = 6.283185307179586 * u2
        self.spare = rad * math.sin(th)
        return rad * math.cos(th)


def replay(seed, n, parts, normal):
    """parts: [(nominal, tol)] in netlist order; returns an (n, len(parts)) array of values."""
    out = np.empty((n, len(parts)))
    for i in range(n):
        r = Pcg32(splitmix64(seed ^ splitmix64(i)), i)
        for j, (nom, tol) in enumerate(parts):
            d = r.normal() * tol / 3 if normal else (2.0 * r.uniform() - 1.0) * tol
            out[i, j] = nom * (1 + d)
    return out


def main():
    path = circuit("replay.stack", """\
title "Bench supply monitor"
ground gnd
voltage  psu   gnd -> vin 5 V tol=5%
resistor r_top vin -> mon 10k tol=1%
resistor r_bot mon -> gnd 4.7k tol=2%
expect mon between 1.55 V and 1.65 V
""")
    parts = [(5.0, 0.05), (10e3, 0.01), (4.7e3, 0.02)]
    for seed, n, dist in ((1, 3000, "uniform"), (987654321987, 2001, "normal")):
        j = run_json(["tol", path, "mon", "--trials", str(n), "--seed", str(seed), "--dist", dist])
        if not j:
            continue
        v = replay(seed, n, parts, dist == "normal")
        q = v[:, 0] * v[:, 2] / (v[:, 1] + v[:, 2])       # divider law per trial
        mc = j["monte_carlo"]
        what = f"{dist} seed {seed}"
        close(mc["mean"], float(np.mean(q)), rel=1e-12, what=f"{what}: mean (numpy)")
        close(mc["std"], float(np.std(q, ddof=1)), rel=1e-9, what=f"{what}: sample std (numpy, ddof=1)")
        close(mc["min"], float(np.min(q)), rel=1e-12, what=f"{what}: min")
        close(mc["max"], float(np.max(q)), rel=1e-12, what=f"{what}: max")
        for key in ("0.1", "1", "50", "99", "99.9"):
            close(mc["percentiles"][key], float(np.percentile(q, float(key))), rel=1e-12,
                  what=f"{what}: percentile {key} (np.percentile, linear)")
        y = float(np.mean((q >= 1.55) & (q <= 1.65)))
        check(abs(j["yield"] - y) <= 1.5 / n, f"{what}: yield {j['yield']} = counted {y}")
    ladder_trials()
    finish()


def ladder_trials():
    """A trial is solved to its double solve's accuracy (no extra-precise
    refinement): on a 40-rung ladder every statistic still agrees to 1e-12
    with the trials solved here by the ladder's own recurrence (series and
    parallel resistances from the far end, then the divider law rung by rung:
    a few roundings per rung, no cancellation)."""
    rungs = 40
    lines = ['title "Sensor string, forty taps"', "ground gnd", "voltage vs gnd -> t0 9 V tol=2%"]
    parts = [(9.0, 0.02)]
    for k in range(rungs):
        rs, rp = 1e3 * (1 + k % 3), 22e3 * (1 + k % 4)
        lines.append(f"resistor rs{k} t{k} -> t{k + 1} {rs:g} ohm tol=1%")
        lines.append(f"resistor rp{k} t{k + 1} -> gnd {rp:g} ohm tol=5%")
        parts += [(rs, 0.01), (rp, 0.05)]
    lines.append("resistor rl t40 -> gnd 100k tol=1%")
    parts.append((100e3, 0.01))
    path = circuit("ladder40.stack", "\n".join(lines) + "\n")
    tap, n, seed = 17, 400, 20261203
    j = run_json(["tol", path, f"t{tap}", "--trials", str(n), "--seed", str(seed)])
    if not j:
        return
    v = replay(seed, n, parts, False)
    q = np.empty(n)
    for i in range(n):
        src, rs, rp, rl = v[i, 0], v[i, 1:-1:2], v[i, 2:-1:2], v[i, -1]
        z = [0.0] * (rungs + 1)              # z[k]: resistance from t_k to ground, looking away from the source
        z[rungs] = rp[rungs - 1] * rl / (rp[rungs - 1] + rl)
        for k in range(rungs - 1, 0, -1):
            down = rs[k] + z[k + 1]
            z[k] = rp[k - 1] * down / (rp[k - 1] + down)
        u = src
        for k in range(tap):
            u = u * z[k + 1] / (rs[k] + z[k + 1])
        q[i] = u
    mc = j["monte_carlo"]
    what = f"40-rung ladder, tap t{tap}"
    close(mc["mean"], float(np.mean(q)), rel=1e-12, what=f"{what}: mean (numpy)")
    close(mc["min"], float(np.min(q)), rel=1e-12, what=f"{what}: min")
    close(mc["max"], float(np.max(q)), rel=1e-12, what=f"{what}: max")
    for key in ("1", "50", "99"):
        close(mc["percentiles"][key], float(np.percentile(q, float(key))), rel=1e-12,
              what=f"{what}: percentile {key} (np.percentile, linear)")


if __name__ == "__main__":
    main()
