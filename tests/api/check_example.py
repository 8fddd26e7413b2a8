#!/usr/bin/env python3
"""Run the embedding example (docs/examples/bench_monitor.c, built against the
in-tree library) and compare what it prints with the closed forms of its
circuit, docs/examples/bench_monitor.stack:

  a 12 V supply with 0.05 ohm source resistance feeds a 47 ohm device and a
  100k / 22k sense divider, whose tap drives a 50k ADC input through port p_tap.

Closed forms used (series/parallel reduction and the voltage-divider rule;
Thevenin's theorem for zout and rth; the sensitivities by central finite
differences of the same closed form).  The sag and sensitivity lines must
also agree with the program's own `sag` and `influence` reports in JSON, since
the library and the program compute them separately.
Usage: check_example.py EXE STACK LOADSTACK
"""
import json
import re
import subprocess
import sys

RS, RDUT, RADC, VSET = 0.05, 47.0, 50e3, 12.0


def par(*rs):
    return 1.0 / sum(1.0 / r for r in rs)


def tap(rhi, rlo, radc=RADC, v=VSET):
    """V(tap) with the ADC connected (radc) or not (radc=None)."""
    lower = rlo if radc is None else par(rlo, radc)
    branch = rhi + lower
    vout = v * par(RDUT, branch) / (par(RDUT, branch) + RS)
    return vout * lower / branch, vout


def main():
    exe, stack = sys.argv[1], sys.argv[2]
    run = subprocess.run([exe, stack], capture_output=True, text=True, timeout=60)
    out = run.stdout
    fails = []

    def near(label, got, want, tol):
        if not abs(got - want) <= tol * max(abs(want), 1e-30):
            fails.append(f"{label}: got {got}, want {want}")

    def num(pattern, group=1):
        m = re.search(pattern, out)
        if not m:
            fails.append(f"no match for {pattern!r}")
            return float("nan")
        return float(m.group(group))

    if run.returncode != 0:
        fails.append(f"exit status {run.returncode}, want 0 (the stiff divider passes)")
    rhi, rlo = 100e3, 22e3
    vtap, vout = tap(rhi, rlo)
    vopen, _ = tap(rhi, rlo, None)
    zout = par(rlo, rhi + par(RS, RDUT))
    near("V(out)", num(r"\n  out\s+(\S+) V"), vout, 2e-4)
    near("V(tap)", num(r"\n  tap\s+(\S+) V"), vtap, 2e-4)
    near("open", num(r"open (\S+) V, loaded"), vopen, 2e-4)
    near("loaded", num(r"loaded (\S+) V, sag"), vtap, 2e-4)
    near("zout", num(r"zout (\S+) ohm"), zout, 1e-4)
    near("zin", num(r"zin (\S+) ohm"), RADC, 1e-4)
    near("ratio", num(r"ratio (\S+): loading"), RADC / zout, 1e-3)
    near("rth", num(r"behind (\S+) ohm"), par(rlo, RADC, rhi + par(RS, RDUT)), 1e-4)
    # influence in % per % ((p/Q) dQ/dp) by central differences
    h = 1e-6
    for name, f, p in (("r_hi", lambda x: tap(x, rlo)[0], rhi), ("r_lo", lambda x: tap(rhi, x)[0], rlo)):
        d = (f(p * (1 + h)) - f(p * (1 - h))) / (2 * p * h)
        near(f"influence {name}", num(rf"\n  {name}\s+(\S+) % per %"), p / vtap * d, 1e-3)
    # the divider ten times stiffer
    zout2 = par(2.2e3, 10e3 + par(RS, RDUT))
    near("stiff ratio", num(r"ratio (\S+): ok"), RADC / zout2, 1e-3)
    near("stiff loaded", num(r"with r_hi = 10k[^\n]*\n[^\n]*loaded (\S+) V"), tap(10e3, 2.2e3)[0], 2e-4)
    if len(sys.argv) > 3:
        cli = sys.argv[3]
        sag = json.loads(subprocess.run([cli, "sag", stack, "tap", "--what-if", "--format", "json"],
                                        capture_output=True, text=True, timeout=60).stdout)
        lines = re.findall(r"\n  without (\S+) +(?:\(port\))? *(\S+) V \(delta ([-+]\S+) V\)", out)
        if len(lines) != 3:
            fails.append(f"{len(lines)} sag lines, want 3")
        for (name, without, delta), item in zip(lines, sag["what_if"]):
            if name != item["name"]:
                fails.append(f"sag order: example has {name}, loadstack sag has {item['name']}")
            near(f"sag without {name}", float(without), item["without"], 2e-4)
            near(f"sag delta {name}", float(delta), item["delta"], 2e-4)
        inf = json.loads(subprocess.run([cli, "influence", stack, "adc", "--format", "json"], capture_output=True,
                                         text=True, timeout=60).stdout)
        got = re.findall(r"\n  (\S+) +(\S+) % per %", out)
        for (name, norm), item in zip(got, inf["items"]):
            if name != item["part"]:
                fails.append(f"influence order: example has {name}, loadstack influence has {item['part']}")
            near(f"influence {name} against the program", float(norm), item["percent_per_percent"], 1e-3)
    if "checks: 2 of 2 pass" not in out:
        fails.append("the checks line is missing or wrong")
    if fails:
        print(out)
        print(run.stderr, file=sys.stderr)
        for f in fails:
            print("FAIL", f)
        return 1
    print("example output matches the closed forms")
    return 0


if __name__ == "__main__":
    sys.exit(main())
