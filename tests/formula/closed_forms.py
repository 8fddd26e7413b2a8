"""`loadstack formula` against closed forms of textbook circuits.

Each case runs the program on a small circuit, reads the JSON `expression`
back into sympy (lsexpr.py) and checks that its difference from the closed
form cancels to zero exactly.  The source of every closed form is named beside
it; where it is quoted from memory that is said.

usage: closed_forms.py LOADSTACK"""
import json
import os
import subprocess
import sys
import tempfile

import sympy as sp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import lsexpr  # noqa: E402

S = sp.symbols
CASES = []


def case(name, source, circuit, quantity, closed, args=(), symbols=None, shows=None):
    """shows: text the printed formula must contain (the form a designer writes)."""
    CASES.append(dict(name=name, source=source, circuit=circuit, quantity=quantity,
                      closed=closed, args=list(args), symbols=symbols, shows=shows))


LOADED_DIVIDER = """
ground gnd
voltage  vs  gnd -> top 5 V
resistor r_t top -> mid 10k
resistor r_b mid -> gnd 4k7
port     p1  mid -> inp
resistor r_l inp -> gnd 100k
"""
vs, r_t, r_b, r_l = S("vs r_t r_b r_l")
par = lambda a, b: a * b / (a + b)  # noqa: E731
# Voltage divider rule, the load in parallel with the lower leg (Ohm's and
# Kirchhoff's laws; any circuits text, e.g. Horowitz & Hill, The Art of
# Electronics, 3rd ed., section 1.2 -- section number from memory).
case("loaded divider: the loaded node", "voltage divider rule with the load in parallel (Horowitz & Hill 1.2)",
     LOADED_DIVIDER, "mid", vs * par(r_b, r_l) / (r_t + par(r_b, r_l)))
case("loaded divider: open", "voltage divider rule", LOADED_DIVIDER, "p1.open", vs * r_b / (r_t + r_b))
case("loaded divider: zout", "Thevenin resistance of a divider: r_t || r_b (Horowitz & Hill 1.2)",
     LOADED_DIVIDER, "p1.zout", par(r_t, r_b), symbols=["r_t", "r_b"], shows="(r_t || r_b)")
case("loaded divider: zin", "the load alone", LOADED_DIVIDER, "p1.zin", r_l)
case("loaded divider: sag", "open minus loaded, from the two closed forms above", LOADED_DIVIDER, "p1.sag",
     vs * r_b / (r_t + r_b) - vs * par(r_b, r_l) / (r_t + par(r_b, r_l)))
case("loaded divider: current of the load", "Ohm's law on the loaded node", LOADED_DIVIDER, "r_l.current",
     vs * par(r_b, r_l) / (r_t + par(r_b, r_l)) / r_l)

# Wheatstone bridge: open-circuit voltage between the midpoints and the
# resistance seen there with the supply shorted (Thevenin's theorem applied to
# the bridge; e.g. Hambley, Electrical Engineering: Principles and
# Applications, chapter 2 -- chapter from memory).
r1, r2, r3, r4 = S("r1 r2 r3 r4")
BRIDGE = """
ground {ground}
voltage  vs {bottom} -> top 10 V
resistor r1 top -> a 1k
resistor r2 a -> {bottom} 1k2
resistor r3 top -> b 2k2
resistor r4 b -> {bottom} 1k8
{meter}"""
case("Wheatstone bridge: Thevenin voltage", "bridge Thevenin voltage vs*(r2/(r1+r2) - r4/(r3+r4)) (Hambley ch. 2)",
     BRIDGE.format(ground="gnd", bottom="gnd", meter=""), "a - b", vs * (r2 / (r1 + r2) - r4 / (r3 + r4)))
# The same bridge seen from a meter between its midpoints (b as the reference).
case("Wheatstone bridge: Thevenin resistance", "bridge Thevenin resistance r1||r2 + r3||r4 (Hambley ch. 2)",
     BRIDGE.format(ground="b", bottom="bot", meter="port     p  a -> meter\nresistor r_m meter -> b 10M\n"),
     "p.zout", par(r1, r2) + par(r3, r4), symbols=["r1", "r2", "r3", "r4"], shows="(r1 || r2)")

# Op-amp stages with a finite open-loop gain: Black's feedback formula
# A/(1 + A*beta) (H. S. Black, "Stabilized feedback amplifiers", Bell System
# Technical Journal 13, 1934), and its limit for infinite gain.
vin, rf, rg, u1 = S("vin rf rg u1")
NONINV = """
ground gnd
voltage  vin gnd -> in 0.5 V
opamp    u1  plus=in minus=fb out=out gain=100k
resistor rf  out -> fb 47k
resistor rg  fb -> gnd 4k7
"""
beta = rg / (rf + rg)
case("non-inverting stage, finite gain", "Black's formula A/(1 + A*beta), beta = rg/(rf + rg)", NONINV, "out",
     vin * u1 / (1 + u1 * beta))
case("non-inverting stage, --ideal", "the limit A -> oo: 1 + rf/rg", NONINV, "out", vin * (1 + rf / rg),
     args=["--ideal"])
INV = """
ground gnd
voltage  vin gnd -> in 0.2 V
resistor r1  in -> m 10k
resistor r2  out -> m 100k
opamp    u1  plus=gnd minus=m out=out gain=50k
"""
case("inverting stage, finite gain", "Black's formula: -(r2/r1) * A*beta/(1 + A*beta), beta = r1/(r1 + r2)", INV,
     "out", -vin * (r2 / r1) * (u1 * r1 / (r1 + r2)) / (1 + u1 * r1 / (r1 + r2)))
case("inverting stage, --ideal", "the limit A -> oo: -r2/r1", INV, "out", -vin * r2 / r1, args=["--ideal"])

# R-2R ladder: the output resistance is R whatever the number of bits, and the
# open output is the binary-weighted sum of the bit voltages (any DAC text,
# e.g. Horowitz & Hill, The Art of Electronics, 3rd ed., chapter 13 -- from memory).
R2R = """
ground gnd
let r = 10k
voltage  b0 gnd -> s0 1 V
voltage  b1 gnd -> s1 0 V
voltage  b2 gnd -> s2 1 V
voltage  b3 gnd -> s3 1 V
resistor rt n0 -> gnd 2*r
resistor q0 s0 -> n0 2*r
resistor h1 n0 -> n1 r
resistor q1 s1 -> n1 2*r
resistor h2 n1 -> n2 r
resistor q2 s2 -> n2 2*r
resistor h3 n2 -> n3 r
resistor q3 s3 -> n3 2*r
port     p_out n3 -> load
resistor r_load load -> gnd 1M
"""
r, b0, b1, b2, b3 = S("r b0 b1 b2 b3")
case("R-2R ladder: output resistance", "R-2R ladder output resistance R (Horowitz & Hill ch. 13)", R2R,
     "p_out.zout", r, symbols=["r"], shows="r")
case("R-2R ladder: open output", "binary-weighted sum b3/2 + b2/4 + b1/8 + b0/16 (Horowitz & Hill ch. 13)", R2R,
     "p_out.open", b3 / 2 + b2 / 4 + b1 / 8 + b0 / 16)

# Three-op-amp instrumentation amplifier: ideal gain (1 + 2R/Rg)*(R2/R1)
# (any analog textbook, e.g. Sedra & Smith, Microelectronic Circuits, the
# instrumentation amplifier section -- from memory).
INA = """
ground gnd
let rr = 25k
let rgn = 5k
let k1 = 10k
let k2 = 20k
voltage  vp gnd -> inp 1.01 V
voltage  vn gnd -> inn 1.00 V
opamp    ua plus=inp minus=xa out=oa gain=100k
opamp    ub plus=inn minus=xb out=ob gain=100k
resistor ra oa -> xa rr
resistor rgain xa -> xb rgn
resistor rb ob -> xb rr
resistor k1a oa -> m k1
resistor k2a m -> out k2
resistor k1b ob -> p k1
resistor k2b p -> gnd k2
opamp    uc plus=p minus=m out=out gain=100k
"""
rr, rgn, k1, k2, vp, vn = S("rr rgn k1 k2 vp vn")
case("instrumentation amplifier, --ideal", "ideal gain (1 + 2R/Rg)*(R2/R1) (Sedra & Smith)", INA, "out",
     (1 + 2 * rr / rgn) * (k2 / k1) * (vn - vp), args=["--ideal"])

# A current-output sensor into a transimpedance stage (a mode=current port):
# the input resistance of a shunt-feedback stage is rf/(1 + A) (feedback
# theory, e.g. Sedra & Smith, the shunt-feedback section -- from memory), and
# the driver's short-circuit current is the source's own (Norton).
TIA = """
ground gnd
current  s1 gnd -> pd 50 uA
resistor r_sh pd -> gnd 200k
port     p_pd pd -> sum mode=current
opamp    u1 plus=gnd minus=sum out=vout gain=100k
resistor r_f vout -> sum 47k
"""
s1, r_sh, r_f = S("s1 r_sh r_f")
case("transimpedance input: zin", "shunt feedback input resistance rf/(1 + A) (Sedra & Smith)", TIA, "p_pd.zin",
     r_f / (1 + u1))
case("transimpedance input: open (short-circuit current)", "Norton: the source current", TIA, "p_pd.open", s1)
case("transimpedance input: sag", "current divider between r_sh and rf/(1 + A)", TIA, "p_pd.sag",
     s1 - s1 * r_sh / (r_sh + r_f / (1 + u1)))

# The chain of the issue: a divider into a non-inverting stage into a divider
# into an ADC.  The hand calculation is the product of the stages' gains.
CHAIN = """
ground gnd
voltage  vs gnd -> sense 2.5 V
resistor r1 sense -> mid 10k
resistor r2 mid -> gnd 4k7
port     p_in mid -> amp_in
opamp    u1 plus=amp_in minus=fb out=amp_out gain=200k
resistor rf amp_out -> fb 15k
resistor rg fb -> gnd 10k
resistor r3 amp_out -> adc_in 22k
resistor r4 adc_in -> gnd 33k
adc      a1 in=adc_in ref=3.3V bits=12
"""
case("chain: finite gain", "product of the stages: divider * Black's formula * divider", CHAIN, "adc_in",
     vs * r2 / (r1 + r2) * u1 / (1 + u1 * beta) * r4 / (r3 + r4))
case("chain: --ideal", "product of the stages: divider * (1 + rf/rg) * divider", CHAIN, "adc_in",
     vs * r2 / (r1 + r2) * (1 + rf / rg) * r4 / (r3 + r4), args=["--ideal"],
     shows="vs * r2 / (r1 + r2) * (1 + rf / rg) * r4 / (r3 + r4)")

# Held ports: a port whose load side has no DC path of its own once opened (an
# input that only a controlled source senses) is opened with its load end held
# at its loaded voltage (docs/loading.md).  A divider whose midpoint also gets
# a share of its own voltage back through a vcvs that senses the load end:
# loaded, nodal analysis at mid gives v = (vs/r_t) / (1/r_t + 1/r_b + (1 - e1)/r_fb);
# held, the vcvs still sees v, so the open voltage is v itself (the load side
# draws no current) and the sag is 0; with the sources zeroed (the hold
# included) the vcvs output is 0 V and zout is r_t || r_b || r_fb.  Opening the
# port with the load end grounded instead would give (vs/r_t)/(1/r_t + 1/r_b + 1/r_fb).
HELD_FEEDBACK = """
ground gnd
voltage  vs   gnd -> top 5 V
resistor r_t  top -> mid 10k
resistor r_b  mid -> gnd 4k7
port     p_h  mid -> sense
vcvs     e1   gnd -> back gain=0.5 cplus=sense cminus=gnd
resistor r_fb back -> mid 22k
"""
r_fb, e1 = S("r_fb e1")
held_v = (vs / r_t) / (1 / r_t + 1 / r_b + (1 - e1) / r_fb)
case("held port: open is the loaded voltage", "nodal analysis at the midpoint with the fed-back share",
     HELD_FEEDBACK, "p_h.open", held_v)
case("held port: loaded", "nodal analysis at the midpoint with the fed-back share", HELD_FEEDBACK, "p_h.loaded",
     held_v)
case("held port: sag", "open minus loaded: the held load side draws no current", HELD_FEEDBACK, "p_h.sag",
     sp.Integer(0))
case("held port: zout", "three resistances to ground in parallel (the held end and vs zeroed)",
     HELD_FEEDBACK, "p_h.zout", par(par(r_t, r_b), r_fb))

# A follower's input is a held load side too: the unloaded divider rule for
# open and loaded alike, r_t || r_b for zout.
HELD_FOLLOWER = """
ground gnd
voltage  vs  gnd -> top 5 V
resistor r_t top -> mid 10k
resistor r_b mid -> gnd 4k7
port     p_f mid -> buf_in
opamp    u1  plus=buf_in minus=buf_out out=buf_out
resistor r_l buf_out -> gnd 1k
"""
case("held follower input: open", "voltage divider rule, no load current", HELD_FOLLOWER, "p_f.open",
     vs * r_b / (r_t + r_b))
case("held follower input: zout", "Thevenin resistance of a divider: r_t || r_b", HELD_FOLLOWER, "p_f.zout",
     par(r_t, r_b))

# and the zin of a held port has no finite formula (exit 2, the reason given)
UNBOUNDED = [(HELD_FEEDBACK, "p_h.zin"), (HELD_FEEDBACK, "p_h.ratio"), (HELD_FOLLOWER, "p_f.zin")]


def unbounded(prog, d):
    bad = 0
    for circuit, quantity in UNBOUNDED:
        path = os.path.join(d, "held.stack")
        with open(path, "w") as f:
            f.write(circuit)
        p = subprocess.run([prog, "formula", path, quantity], capture_output=True, text=True, timeout=60)
        ok = p.returncode == 2 and "no finite formula" in p.stderr and "held at its loaded voltage" in p.stderr
        print("%s: held port: %s has no finite formula" % ("ok" if ok else "FAIL", quantity))
        if not ok:
            print("    exit %d: %s" % (p.returncode, p.stderr.strip()))
            bad += 1
    return bad


def run(prog, c, d):
    path = os.path.join(d, "case.stack")
    with open(path, "w") as f:
        f.write(c["circuit"])
    args = [prog, "formula", path, c["quantity"], "--format", "json"] + c["args"]
    if c["symbols"]:
        args += ["--symbols", ",".join(c["symbols"])]
    p = subprocess.run(args, capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        return "exit %d: %s" % (p.returncode, p.stderr.strip())
    out = json.loads(p.stdout)
    for key in ("meta", "quantity", "expression", "numerator", "denominator", "symbols", "ideal", "value", "solve"):
        if key not in out:
            return "JSON key %r missing" % key
    got = lsexpr.parse(out["expression"])
    if sp.cancel(sp.together(got - c["closed"])) != 0:
        return "expression %s differs from the closed form %s" % (out["expression"], c["closed"])
    nd = lsexpr.parse(out["numerator"]) / lsexpr.parse(out["denominator"])
    if sp.cancel(sp.together(nd - c["closed"])) != 0:
        return "numerator/denominator %s / %s differ from the closed form" % (out["numerator"], out["denominator"])
    want = {str(s) for s in c["closed"].free_symbols}
    if set(out["symbols"]) != want:
        return "symbols %s, expected %s" % (out["symbols"], sorted(want))
    if c["shows"] and c["shows"] not in out["expression"]:
        return "the formula %r does not show %r" % (out["expression"], c["shows"])
    # the self-check the program reports: at most 1e-12 relative (a sag is judged
    # against the size of the open and loaded values it is the difference of)
    if not c["args"] and not out["difference"] <= 1e-12:
        return "value %r and solve %r differ by %r" % (out["value"], out["solve"], out["difference"])
    return None


def main():
    prog = sys.argv[1]
    bad = 0
    with tempfile.TemporaryDirectory() as d:
        for c in CASES:
            err = run(prog, c, d)
            print("%s: %s  [%s]" % ("FAIL" if err else "ok", c["name"], c["source"]))
            if err:
                print("   ", err)
                bad += 1
        bad_unbounded = unbounded(prog, d)
    print("%d of %d closed forms agree" % (len(CASES) - bad, len(CASES)))
    bad += bad_unbounded
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
