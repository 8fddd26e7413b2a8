#!/usr/bin/python3
"""Real parts and their limits, checked against outside sources.

Run by meson with Debian's /usr/bin/python3 (numpy and scipy):
    test_real.py LOADSTACK

Every check names its source beside it.  Circuits are written here, solved
with `loadstack solve FILE --format json` (or `check`), and compared with a
closed form, a published result, or an independent root-finder from scipy.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy.optimize import brentq
from scipy.special import lambertw

EXE = sys.argv[1] if len(sys.argv) > 1 else os.environ.get("LOADSTACK", "loadstack")
# kT/q at 25 degC from the exact SI (2019) values of k and q: CODATA 2018.
VT = 1.380649e-23 * 298.15 / 1.602176634e-19

failures = []
checks = 0
tmpdir = tempfile.mkdtemp(prefix="real_")


def run(text, *args, cmd="solve", name="c.stack"):
    path = os.path.join(tmpdir, name)
    with open(path, "w") as f:
        f.write(text)
    p = subprocess.run([EXE, cmd, path, "--format", "json", *args], capture_output=True, text=True, timeout=60)
    data = None
    if p.stdout.strip():
        try:
            data = json.loads(p.stdout)
        except json.JSONDecodeError:
            data = None
    return p.returncode, data, p.stderr


def check(cond, what):
    global checks
    checks += 1
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def close(got, want, rel, what, abs_tol=0.0):
    ok = got is not None and abs(got - want) <= rel * abs(want) + abs_tol
    check(ok, "%s: got %r, want %r (rel %g)" % (what, got, want, rel))


def solve(text, *args):
    rc, d, err = run(text, *args)
    check(rc == 0 and d is not None, "solve exits 0 with JSON (rc %d): %s" % (rc, err.strip()[:300]))
    return d or {"nodes": {}, "parts": {}, "opamps": {}, "warnings": [], "solver": {}}


def codes(d):
    return [w["code"] for w in d.get("warnings", [])]


# ---- 1. diode with a series resistor: the exact Lambert-W solution ------------------------
# Banwell and Jayakumar, "Exact analytical solution for current flow through
# diode with series resistance", Electronics Letters 36(4), 2000:
#   I = (n Vt / R) W( (Is R / (n Vt)) exp((V + Is R) / (n Vt)) ) - Is
# evaluated with scipy.special.lambertw; required to 1e-9 relative.
def lambert_current(v, r, i_s, n):
    nvt = n * VT
    arg = i_s * r / nvt * np.exp((v + i_s * r) / nvt)
    return float((nvt / r * lambertw(arg)).real - i_s)


for v, r, i_s, n, rs in [(5, 1000, 2e-9, 1.8, 0.5), (1, 100, 1e-14, 1.0, 0), (12, 4700, 4e-9, 1.9, 2),
                         (0.3, 10, 1e-12, 1.2, 0), (3.3, 220, 1e-14, 1, 0.1)]:
    d = solve(f"""ground gnd
voltage vin gnd -> a {v} V
resistor r1 a -> k {r}
diode d1 k -> gnd isat={i_s} ideality={n} rbulk={rs}
""")
    want = lambert_current(v, r + rs, i_s, n)
    close(d["parts"].get("d1", {}).get("current"), want, 1e-9,
          f"diode current V={v} R={r} isat={i_s} ideality={n} rbulk={rs} vs Lambert W (Banwell-Jayakumar 2000)")
    check(d["solver"].get("iterations", 0) >= 2, "a diode circuit reports its Newton iterations")

# ---- 2. an LED at its rated forward voltage carries its rated current ----------------------
# Datasheet convention: vf is specified at the test current (e.g. 2.0 V at 20 mA).
for vf, at, n, rs in [(2.0, 20e-3, 2, 0), (2.1, 20e-3, 2, 5), (3.1, 10e-3, 3, 8)]:
    d = solve(f"""ground gnd
voltage v1 gnd -> a {vf} V
led d1 a -> gnd vf={vf}V at={at}A ideality={n} rbulk={rs}
""")
    close(d["parts"].get("d1", {}).get("current"), at, 1e-9, f"LED vf={vf} at={at} rbulk={rs}: current at rated vf")

# ---- 3. non-inverting stage past its rail ---------------------------------------------------
# Textbook: gain 1 + Rf/Rg = 2 asks 2 x 3 V = 6 V from a 5 V supply; a real
# output stops at the rail minus its headroom (here 0.1 V): 4.9 V.
d = solve("""ground gnd
voltage vs gnd -> vcc 5 V
voltage vi gnd -> in 3 V
opamp u1 plus=in minus=fb out=out rails=gnd..vcc headroom=0.1V
resistor rf out -> fb 10k
resistor rg fb -> gnd 10k
resistor rl out -> gnd 1k
""")
close(d["nodes"].get("out"), 4.9, 1e-12, "non-inverting stage past its rail: rail minus headroom")
check(d["opamps"].get("u1", {}).get("limited") == "rail-high", "limited = rail-high")
check("opamp-saturated" in codes(d), "a saturated op-amp is warned about")
# The supply current: output current drawn from the upper rail (KCL): the
# source delivers the load current plus the feedback current.
close(d["parts"].get("vs", {}).get("current"), 4.9 / 1000 + 4.9 / 20000, 1e-12, "supply current = output current")

# Same stage within its range: no limit, gain 2 exactly (textbook).
d = solve("""ground gnd
voltage vs gnd -> vcc 5 V
voltage vi gnd -> in 2 V
opamp u1 plus=in minus=fb out=out rails=gnd..vcc headroom=0.1V
resistor rf out -> fb 10k
resistor rg fb -> gnd 10k
""")
close(d["nodes"].get("out"), 4.0, 1e-12, "non-inverting stage inside its range: 1 + Rf/Rg")
check(d["opamps"].get("u1", {}).get("limited") == "none", "limited = none inside the range")

# Inverting stage with fixed-voltage rails driven below the lower rail (finite gain).
d = solve("""ground gnd
voltage vi gnd -> in 2 V
opamp u1 plus=gnd minus=m out=out rails=-5V..5V headroom=0.5V gain=200k rout=50
resistor rin in -> m 1k
resistor rf out -> m 10k
""")
close(d["nodes"].get("out"), -4.5, 1e-12, "inverting stage past its lower rail: -5 V + 0.5 V")
check(d["opamps"].get("u1", {}).get("limited") == "rail-low", "limited = rail-low")

# A comparator (ideal, no feedback): the output goes to the rail the sign of
# V(plus) - V(minus) picks (textbook comparator).
for vin, want, lim in [(2.0, 4.9, "rail-high"), (3.0, 0.1, "rail-low")]:
    d = solve(f"""ground gnd
voltage vs gnd -> vcc 5 V
voltage vi gnd -> in {vin} V
voltage vr gnd -> ref 2.5 V
opamp u1 plus=ref minus=in out=out rails=gnd..vcc headroom=0.1V
resistor rl out -> gnd 10k
""")
    close(d["nodes"].get("out"), want, 1e-12, f"comparator with input {vin} V against 2.5 V")
    check(d["opamps"].get("u1", {}).get("limited") == lim, f"comparator limited = {lim}")
# A comparator with hysteresis (positive feedback through rh): the output sits
# at a rail, never at the balanced point; the threshold moves with the output
# (hand calculation, superposition at node ref):
#   V(ref) = (Vcc/R1 + Vout/Rh) / (1/R1 + 1/R2 + 1/Rh).
def ref_v(vout):
    return (5 / 10e3 + vout / 100e3) / (1 / 10e3 + 1 / 10e3 + 1 / 100e3)


for vin in [2.3, 2.6, 2.7]:
    d = solve(f"""ground gnd
voltage vs gnd -> vcc 5 V
voltage vi gnd -> in {vin} V
resistor r1 vcc -> ref 10k
resistor r2 ref -> gnd 10k
resistor rh out -> ref 100k
opamp u1 plus=ref minus=in out=out rails=gnd..vcc headroom=0.1V
""")
    out = d["nodes"].get("out")
    check(out in (4.9, 0.1) or (out is not None and min(abs(out - 4.9), abs(out - 0.1)) < 1e-12),
          f"hysteresis comparator at {vin} V sits at a rail (got {out})")
    if out is not None:
        close(d["nodes"].get("ref"), ref_v(out), 1e-12, f"hysteresis threshold at {vin} V (superposition)")
        check((out > 2.5) == (ref_v(out) > vin), f"hysteresis comparator at {vin} V: its rail is consistent")
    if vin == 2.7:
        close(out, 0.1, 1e-12, "2.7 V is above both thresholds: output low")
    if vin == 2.3:
        close(out, 4.9, 1e-12, "2.3 V is below both thresholds: output high")

# The text report shows the limit in its op-amp table.
p = subprocess.run([EXE, "solve", os.path.join(tmpdir, "c.stack")], capture_output=True, text=True)
check("rail-high" in p.stdout or "rail-low" in p.stdout, "text report names the limit in force")

# ---- 4. follower into a low resistance settles at its current limit ------------------------
# Ohm's law: a 20 mA limit into 47 ohm gives 0.94 V, not the 2 V asked for.
d = solve("""ground gnd
voltage vs gnd -> vcc 12 V
voltage vi gnd -> in 2 V
opamp u1 plus=in minus=out out=out rails=gnd..vcc headroom=0.2V imax=20mA
resistor rl out -> gnd 47
""")
close(d["nodes"].get("out"), 0.020 * 47, 1e-12, "follower at its current limit: imax x R")
close(d["opamps"].get("u1", {}).get("current"), 0.020, 1e-12, "output current = imax")
check(d["opamps"].get("u1", {}).get("limited") == "current", "limited = current")
check("opamp-current-limit" in codes(d), "current limit warned about")
# Energy conservation (Tellegen): what the supply delivers is what the load and
# the op-amp's output stage dissipate: (12 V - 0.94 V) x 20 mA in the op-amp.
close(d["opamps"].get("u1", {}).get("dissipation"), (12 - 0.94) * 0.020, 1e-12, "op-amp dissipation")
close(-d["parts"]["vs"]["power"], d["parts"]["rl"]["power"] + d["opamps"]["u1"]["dissipation"], 1e-12,
      "supply power = load power + op-amp dissipation (energy conservation)")
d = solve("""ground gnd
voltage vs gnd -> vcc 12 V
voltage vi gnd -> in 2 V
opamp u1 plus=in minus=out out=out rails=gnd..vcc headroom=0.2V imax=20mA rating=0.2W
resistor rl out -> gnd 47
""")
check("over-rating" in codes(d), "an op-amp dissipating 221 mW is over its 0.2 W rating")
# Sinking: -2 V into 47 ohm from split rails.
d = solve("""ground gnd
voltage vi gnd -> in -2 V
opamp u1 plus=in minus=out out=out rails=-12V..12V imax=20mA
resistor rl out -> gnd 47
""")
close(d["nodes"].get("out"), -0.94, 1e-12, "follower sinking at its current limit")
check(d["opamps"].get("u1", {}).get("limited") == "current", "limited = current while sinking")

# ---- 5. bias current: 10 nA into 1 Mohm makes 10 mV (common practice) -------------------
d = solve("""ground gnd
resistor rb gnd -> p 1M
opamp u1 plus=p minus=out out=out ib=10nA
resistor rl out -> gnd 10k
""")
close(abs(d["nodes"].get("p", 0)), 10e-3, 1e-12, "10 nA bias current into 1 Mohm = 10 mV (common practice)")
# ios: Ib+ = ib + ios/2, Ib- = ib - ios/2 (the usual definition of offset current);
# 1 Mohm at each input of a unity-gain stage: V+ = -Ib+ R and V(out) = V- + Ib- R,
# so V(out) = -(Ib+ - Ib-) R = -ios R: the bias currents cancel (textbook).
d = solve("""ground gnd
resistor rb gnd -> p 1M
opamp u1 plus=p minus=m out=out ib=10nA ios=2nA
resistor rf out -> m 1M
""")
close(d["nodes"].get("out"), -2e-9 * 1e6, 1e-9, "offset current x R: bias currents cancel, ios x 1 Mohm remains")

# ---- 6. offset voltage times the noise gain 1 + Rf/Rg (textbook) ---------------------------
for rf, rg in [(99e3, 1e3), (9e3, 1e3), (47e3, 4.7e3)]:
    d = solve(f"""ground gnd
opamp u1 plus=gnd minus=fb out=out vos=1mV
resistor rf out -> fb {rf}
resistor rg fb -> gnd {rg}
""")
    close(d["nodes"].get("out"), 1e-3 * (1 + rf / rg), 1e-12, f"vos x (1 + {rf:g}/{rg:g}) (textbook)")

# ---- 7. a divider-made rail sags when the op-amp sources into a load ------------------------
# Hand calculation (KCL at the rail node): (Vs - V)/R1 = V/R2 + Iout + Iq,
# Iout = Vin / RL for a follower.
vs, r1, r2, vin, rl, iq = 10.0, 1e3, 1e3, 2.0, 1e3, 0.5e-3
v_rail = (vs / r1 - vin / rl - iq) / (1 / r1 + 1 / r2)
d = solve(f"""ground gnd
voltage vs gnd -> vcc {vs} V
resistor r1 vcc -> vhalf {r1}
resistor r2 vhalf -> gnd {r2}
voltage vi gnd -> in {vin} V
opamp u1 plus=in minus=out out=out rails=gnd..vhalf iq={iq}A
resistor rl out -> gnd {rl}
""")
close(d["nodes"].get("vhalf"), v_rail, 1e-12, "divider rail sags by the output and quiescent currents (hand calc)")
close(d["nodes"].get("vhalf"), vs / 2 - (vin / rl + iq) * (r1 * r2 / (r1 + r2)), 1e-12,
      "sag = (Iout + Iq) x R1||R2 (Thevenin)")
# Sinking: the output current returns into the lower rail, a divider made mid-point.
d = solve("""ground gnd
voltage vs gnd -> vcc 10 V
resistor r1 vcc -> mid 2k
resistor r2 mid -> gnd 2k
voltage vi gnd -> in 8 V
opamp u1 plus=in minus=out out=out rails=mid..vcc
resistor rl vcc -> out 1k
""")
# out = 8 V; the op-amp sinks (10 - 8)/1k = 2 mA into mid: 5 V + 2 mA x 1k = 7 V
close(d["nodes"].get("mid"), 5 + 2e-3 * 1e3, 1e-12, "sunk current raises a divider-made lower rail (hand calc)")

# ---- 8. thermistor against the Beta equation -------------------------------------------------
# Beta (B-parameter) equation of NTC datasheets: R(T) = R25 exp(B (1/T - 1/T25)),
# T in kelvin, T25 = 298.15 K; at 25 degC R = R25.
for t in [-20, 0, 25, 40, 85]:
    d = solve(f"""ground gnd
current i1 gnd -> t 10uA
ntc th1 t -> gnd r25=10k beta=3950 celsius={t}
""")
    want = 10e3 * math.exp(3950 * (1 / (t + 273.15) - 1 / 298.15))
    close(d["parts"].get("th1", {}).get("resistance"), want, 1e-12, f"ntc at {t} degC vs the Beta equation")
    close(d["nodes"].get("t"), 10e-6 * want, 1e-12, f"ntc at {t} degC: V = I R")
    if t == 25:
        close(d["parts"]["th1"]["resistance"], 10e3, 1e-12, "ntc at 25 degC equals r25")
# Self-heating: T = Ta + P / delta (dissipation constant), solved with scipy's brentq.
va, rser, delta = 5.0, 1e3, 2e-3


def heat(t):
    r = 10e3 * math.exp(3950 * (1 / (t + 273.15) - 1 / 298.15))
    i = va / (r + rser)
    return t - 25 - i * i * r / delta


t_body = brentq(heat, 25, 200)
d = solve(f"""ground gnd
voltage v1 gnd -> a {va} V
resistor rs a -> t {rser}
ntc th1 t -> gnd r25=10k beta=3950 celsius=25 dissipation={delta}W
""")
close(d["parts"].get("th1", {}).get("temperature"), t_body, 1e-9, "ntc self-heating vs brentq on T = Ta + P/delta")

# Current drive with a large rise (the fixed point would oscillate): T = Ta + I^2 R(T) / delta.
for delta in [1.5e-3, 1e-4, 1e-5]:
    t_body = brentq(lambda t: t - 25 - 1e-6 * 10e3 * math.exp(3950 * (1 / (t + 273.15) - 1 / 298.15)) / delta,
                    25, 500)
    d = solve(f"""ground gnd
current i1 gnd -> t 1mA
ntc th1 t -> gnd r25=10k beta=3950 celsius=25 dissipation={delta}W
""")
    close(d["parts"].get("th1", {}).get("temperature"), t_body, 1e-9,
          f"current-driven self-heating, dissipation {delta:g} W/K, vs brentq")
# Thermal runaway: 10 V straight across a 10k NTC shedding 1 mW/K has no
# steady temperature (T - 25 = V^2 / (R(T) delta) has no root below 1e4 degC).
rc, _, err = run("""ground gnd
voltage v1 gnd -> t 10 V
ntc th_hot t -> gnd r25=10k beta=3950 celsius=25 dissipation=1mW
""")
check(all(t - 25 < 100 / (10e3 * math.exp(3950 * (1 / (t + 273.15) - 1 / 298.15))) / 1e-3
          for t in np.linspace(25, 1e4, 4000)), "the runaway case indeed has no steady temperature")
check(rc == 3 and "th_hot" in err and "runaway" in err, "thermal runaway is exit 3 naming the thermistor")

# ---- 9. convergence ----------------------------------------------------------------------------
# A chain of ten diodes and LEDs: one current through all; each junction obeys
# its own characteristic (Shockley, inverted) and KCL/KVL hold.
chain = ["ground gnd", "voltage v1 gnd -> n0 24 V", "resistor r1 n0 -> n1 470"]
for k in range(1, 11):
    kind = "diode" if k % 2 else "led"
    opt = "isat=5n ideality=1.9" if k % 2 else "vf=2.0V at=20mA ideality=2"
    chain.append(f"{kind} d{k} n{k} -> n{k + 1} {opt}")
chain.append("resistor r2 n11 -> gnd 10")
d = solve("\n".join(chain) + "\n")
i = d["parts"].get("r1", {}).get("current", 0)
total = d["parts"].get("r1", {}).get("voltage", 0) + d["parts"].get("r2", {}).get("voltage", 0)
for k in range(1, 11):
    p = d["parts"].get(f"d{k}", {})
    close(p.get("current"), i, 1e-9, f"chain: d{k} carries the series current (KCL)")
    total += p.get("voltage", 0)
    if k % 2:
        want_v = 1.9 * VT * math.log1p(i / 5e-9)     # Shockley, inverted
    else:
        i_s = 20e-3 / math.expm1(2.0 / (2 * VT))     # is from vf at `at`
        want_v = 2 * VT * math.log1p(i / i_s)
    close(p.get("voltage"), want_v, 1e-9, f"chain: d{k} voltage from its characteristic")
close(total, 24, 1e-12, "chain: KVL around the loop")

# A back-to-back pair: the reverse-biased one blocks; the current is its
# saturation current plus the 1e-12 S always across a junction (documented).
d = solve("""ground gnd
voltage v1 gnd -> a 5 V
resistor r1 a -> m 1k
diode d1 m -> x
diode d2 gnd -> x
""")
check(abs(d["parts"].get("d1", {}).get("current", 1)) < 1e-10, "back-to-back pair blocks (current below 0.1 nA)")
close(d["parts"].get("d1", {}).get("current"), -d["parts"].get("d2", {}).get("current", 0), 1e-9,
      "back-to-back pair: one current through both")

# A zener shunt regulator: the node obeys KCL with the documented zener model,
# solved independently with scipy's brentq.
vz, at, rsz, vsup, rser, rload = 5.1, 5e-3, 10.0, 12.0, 470.0, 2.2e3


def zener_i(v):  # current cathode -> anode of the zener at reverse voltage v (anode at gnd)
    nvt = VT
    vbd = vz - at * rsz

    def f(i):  # v = vj + rs i for the breakdown current i (forward term negligible)
        vj = v - rsz * i
        ib = at * (math.exp((vj - vbd) / nvt) - math.exp(-vbd / nvt)) - 1e-14 * math.expm1(-vj / nvt)
        return ib + 1e-12 * vj - i
    return brentq(f, -1, (v + 1) / rsz)


vk = brentq(lambda v: (vsup - v) / rser - v / rload - zener_i(v), 0, vsup)
d = solve(f"""ground gnd
voltage v1 gnd -> a {vsup} V
resistor r1 a -> k {rser}
zener z1 gnd -> k vz={vz}V at={at}A rbulk={rsz}
resistor rl k -> gnd {rload}
""")
close(d["nodes"].get("k"), vk, 1e-9, "zener regulator vs brentq on KCL with the zener model")
check(abs(d["nodes"].get("k", 0) - vz) < 0.2, "zener regulator holds near vz (within 0.2 V)")

# ---- 10. an impossible circuit: exit 3 naming the part ------------------------------------
rc, _, err = run("""ground gnd
voltage v1 gnd -> a 12 V
led d_bare a -> gnd vf=2V at=20mA
""")
check(rc == 3, "a bare LED across 12 V cannot be solved: exit 3 (got %d)" % rc)
check("d_bare" in err and ":3:5: error:" in err and "^" in err, "the error names the LED with file:line:col and a caret")

# ---- 11. ratings and cautions ----------------------------------------------------------------
# P = V^2 / R = 10.89 mW against rating 20 mW: fine at derate 1, over at --derate 0.5
# (0.5 is a common derating: common practice).
text = """ground gnd
voltage v1 gnd -> a 3.3 V
resistor r1 a -> gnd 1k rating=20mW vmax=3V
"""
d = solve(text)
check("over-rating" not in codes(d) and "over-voltage" in codes(d), "10.9 mW under a 20 mW rating; 3.3 V over vmax 3 V")
d = solve(text, "--derate", "0.5")
check("over-rating" in codes(d), "--derate 0.5 makes 10.9 mW exceed 20 mW x 0.5")
# LED current beyond imax=: (5 - 2 V) / 100 ohm is about 30 mA > 25 mA
d = solve("""ground gnd
voltage v1 gnd -> a 5 V
resistor r1 a -> k 100
led d1 k -> gnd vf=2V at=20mA imax=25mA
""")
check("over-current" in codes(d), "LED above imax warned about")
# 60 V DC: the usual touch-safe limit for ripple-free DC (IEC 61140 / IEC 60335-1)
d = solve("""ground gnd
voltage v1 gnd -> hv 75 V
resistor r1 hv -> mid 10k
resistor r2 mid -> gnd 10k
""")
msgs = [w["message"] for w in d["warnings"] if w["code"] == "hazardous-voltage"]
check(len(msgs) == 1 and "'hv'" in msgs[0], "only the 75 V node gets the caution, not the 37.5 V one")

# ---- 12. ADC input ---------------------------------------------------------------------------------
# Divider 47k/47k from 3.3 V: Thevenin 1.65 V behind 23.5 kohm (textbook).  With
# rin = 1 Mohm and 100 nA leakage: V = (1.65 - 23.5k x 100n) x 1M / (1M + 23.5k).
vth, rth = 1.65, 23.5e3
vin = (vth - rth * 100e-9) * 1e6 / (1e6 + rth)
d = solve("""ground gnd
voltage vs gnd -> vcc 3.3 V
resistor ra vcc -> ain 47k
resistor rb ain -> gnd 47k
adc in1 in=ain ref=3.3V bits=12 rin=1M leak=100nA max_source=10k
""")
a = d["parts"].get("in1", {})
close(a.get("voltage"), vin, 1e-12, "ADC input voltage under loading and leakage (Thevenin)")
close(a.get("source_resistance"), rth, 1e-9, "source resistance seen by the ADC = 47k || 47k")
close(a.get("unloaded"), vth, 1e-9, "unloaded voltage = divider voltage")
check(a.get("code") == math.floor(vin / (3.3 / 4096)), "ADC code = floor(V / LSB)")
close(a.get("error_lsb"), (vin - vth) / (3.3 / 4096), 1e-9, "LSB error from loading and leakage")
check("adc-source-resistance" in codes(d), "23.5 kohm source above a 10 kohm max_source warned (common practice)")

# ---- 13. switch flipped by --set, pot position ---------------------------------------------------
text = """ground gnd
let pump_on = 1
voltage vs gnd -> vcc 12 V
switch s1 vcc -> m state=pump_on
resistor r1 m -> gnd 100
pot p1 10k a=vcc wiper=w b=gnd at=0.25
"""
d = solve(text)
close(d["nodes"].get("m"), 12, 1e-12, "closed switch passes the supply")
close(d["nodes"].get("w"), 12 * 0.75, 1e-12, "pot wiper at 0.25 from a: divider 0.75 (textbook)")
d = solve(text, "--set", "pump_on=0")
close(d["nodes"].get("m"), 0, 0, "--set pump_on=0 opens the switch", abs_tol=1e-12)

# ---- 14. bad input: file:line:col, a caret, exit 2 ---------------------------------------------
for line, frag in [("opamp u1 plus=a minus=o out=o rails=5V", "takes a range"),
                   ("switch s1 a -> o state=maybe", "state= takes one of"),
                   ("adc in1 in=o ref=3.3V bits=12.5", "whole number"),
                   ("opamp u1 plus=a minus=o out=o rails=5V..1V", "low end must be below"),
                   ("led d1 a -> o at=20mA", "needs vf="),
                   ("pot p1 10k a=a wiper=o b=gnd at=1.5", "between 0 and 1")]:
    rc, _, err = run("ground gnd\nvoltage v gnd -> a 1 V\nresistor r o -> gnd 1k\n" + line + "\n")
    check(rc == 2 and ":4:" in err and "error:" in err and "^" in err and frag in err,
          f"bad input '{line}' gives exit 2 and a located error containing '{frag}' (rc {rc}): {err.strip()[:200]}")

# ---- 15. check: expects on real parts pass/fail with exit codes -------------------------------------
rc, d, err = run("""ground gnd
voltage vs gnd -> vcc 5 V
voltage vi gnd -> in 3 V
opamp u1 plus=in minus=fb out=out rails=gnd..vcc headroom=0.1V
resistor rf out -> fb 10k
resistor rg fb -> gnd 10k
expect out = 6 V within 1%
""", cmd="check")
check(rc == 1 and d and d["failed"] == 1, "check fails (exit 1) when a stage saturates below its expected 6 V")

# ---- 15b. the linearized analyses see a junction's dynamic resistance -----------------------
# Small-signal model (textbook): a forward-biased junction is rd = n Vt / I;
# the port's zout is R1 || rd and the sensitivity dI/dVin = 1 / (R1 + rd).
text = """ground gnd
voltage vin gnd -> a 5 V
resistor r1 a -> k 1k
diode d1 k -> gnd isat=2n ideality=1.8
port p1 k -> load
resistor rl load -> gnd 1G
"""
d = solve(text)
i_d = d["parts"].get("d1", {}).get("current", 1)
rd = 1.8 * VT / (i_d + 2e-9)
close(d["ports"].get("p1", {}).get("zout"), 1e3 * rd / (1e3 + rd), 1e-6, "port zout = R1 || n Vt / I (small-signal)")
rc, s, err = run(text, "d1.current", cmd="influence")
item = next((it for it in (s or {}).get("items", []) if it["part"] == "vin"), {})
close(item.get("per_unit"), 1 / (1e3 + rd), 1e-6, "influence dI/dVin = 1 / (R1 + rd) (small-signal)")

# ---- 16. robustness: random circuits of real parts never crash or hang -----------------------
# Random ladders of junctions, resistors and limited op-amps (seeded): each
# run must end with exit 0 (solved) or 3 (a named part that cannot settle),
# within the timeout, never a signal.
rng = np.random.default_rng(4)
for trial in range(60):
    nn = int(rng.integers(3, 8))
    lines = ["ground gnd", f"voltage vs gnd -> n1 {rng.uniform(-30, 30):.3g} V rint={rng.choice([0, 1, 50])}",
             "voltage vcc gnd -> vp 12 V", "voltage vee gnd -> vm -12 V"]
    for k in range(int(rng.integers(3, 12))):
        a, b = (f"n{int(rng.integers(0, nn))}".replace("n0", "gnd") for _ in range(2))
        kind = rng.choice(["resistor", "diode", "led", "zener", "opamp"])
        if kind == "resistor" or a == b:
            lines.append(f"resistor r{k} {a} -> n{int(rng.integers(1, nn))} {rng.choice([10, 1e3, 1e5])}")
        elif kind == "diode":
            lines.append(f"diode d{k} {a} -> {b} isat={rng.choice([1e-14, 1e-9])} ideality={rng.choice([1, 2])}")
        elif kind == "led":
            lines.append(f"led l{k} {a} -> {b} vf=2V rbulk={rng.choice([0, 5])}")
        elif kind == "zener":
            lines.append(f"zener z{k} {a} -> {b} vz={rng.choice([3.3, 5.1, 12])}V")
        else:
            lines.append(f"opamp u{k} plus={a} minus={b} out=n{int(rng.integers(1, nn))} rails=vm..vp "
                         f"headroom=0.5V imax=20mA" + (" gain=100k" if rng.random() < 0.5 else ""))
    for k in range(1, nn):
        lines.append(f"resistor rg{k} n{k} -> gnd 1M")
    text = "\n".join(lines) + "\n"
    try:
        rc, d, err = run(text, name="random.stack")
        ok = rc in (0, 3) and (rc == 0) == (d is not None)
        if rc == 3:
            ok = ok and "error:" in err
    except subprocess.TimeoutExpired:
        ok, rc, err = False, "timeout", ""
    check(ok, f"random circuit {trial}: exit {rc} {err.strip()[:200]}\n{text}")

print(f"{checks} checks, {len(failures)} failed")
sys.exit(1 if failures else 0)
