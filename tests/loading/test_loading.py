#!/usr/bin/python3
"""Loading analysis against closed forms: thevenin, sag, influence, check exit codes.

Usage: test_loading.py LOADSTACK_BINARY

Each check names its source beside it.  Circuits are written to a temporary
directory; every run of the program is checked for its exit code and parsed
from `--format json`.  Exit 0 when every check holds, 1 otherwise.
"""

import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))

from lscheck import FAILS, js, near, run, run_tests, truth, write, par  # noqa: E402


# ---------------------------------------------------------------------------
# Thevenin

def cube_text(r):
    edges = [("gnd", "c100"), ("gnd", "c010"), ("gnd", "c001"), ("c100", "c110"), ("c100", "c101"),
             ("c010", "c110"), ("c010", "c011"), ("c001", "c101"), ("c001", "c011"), ("c110", "c111"),
             ("c101", "c111"), ("c011", "c111")]
    lines = ['title "cube"', "ground gnd", "current feed gnd -> c111 2 mA"]
    for i, (a, b) in enumerate(edges):
        lines.append("resistor e%d %s -> %s %g" % (i, a, b, r))
    return "\n".join(lines) + "\n"


def test_thevenin_cube(b, tmp):
    for r in (1000.0, 47.0):
        f = write(tmp, "cube.stack", cube_text(r))
        d = js(b, ["thevenin", f, "c111"])
        if d:
            near("cube rth", d["rth"], 5 * r / 6, source="resistor cube, body diagonal 5R/6")
            near("cube vth", d["vth"], 5 * r / 6 * 2e-3, source="Ohm's law, 2 mA into 5R/6")
            near("cube norton", d["norton"], 2e-3, source="Norton: vth/rth = the feeding current")
        d = js(b, ["thevenin", f, "c110"])
        if d:
            near("cube face rth", d["rth"], 3 * r / 4, source="resistor cube, face diagonal 3R/4")


def r2r_text(bits, code, r, vref):
    """N-bit R-2R ladder: bit k switches its 2R leg to vref (1) or ground (0);
    the LSB end terminated by 2R to ground; output at the MSB node."""
    lines = ['title "r2r"', "ground gnd", "voltage vr gnd -> ref %g V" % vref,
             "resistor term n0 -> gnd %g" % (2 * r)]
    for k in range(bits):
        node = "n%d" % k
        lines.append("resistor leg%d %s -> %s %g" % (k, node, "ref" if (code >> k) & 1 else "gnd", 2 * r))
        if k + 1 < bits:
            lines.append("resistor rung%d %s -> n%d %g" % (k, node, k + 1, r))
    return "\n".join(lines) + "\n", "n%d" % (bits - 1)


def test_thevenin_r2r(b, tmp):
    r, vref = 10e3, 5.0
    for bits, codes in ((4, (0, 1, 5, 10, 15)), (8, (1, 77, 128, 200, 255))):
        for code in codes:
            text, out = r2r_text(bits, code, r, vref)
            f = write(tmp, "r2r.stack", text)
            d = js(b, ["thevenin", f, out])
            if d:
                near("r2r %d-bit code %d rth" % (bits, code), d["rth"], r,
                     source="R-2R ladder output resistance R for any code (data-converter textbooks)")
                near("r2r %d-bit code %d vth" % (bits, code), d["vth"], vref * code / 2 ** bits, atol=1e-12,
                     source="R-2R ladder Vref*D/2^N (data-converter textbooks)")


def test_thevenin_load_meter(b, tmp):
    # divider 12 V, 10k / 22k: vth = 12*22/32, rth = 10k||22k (Thevenin)
    f = write(tmp, "div.stack", 'title "d"\nground gnd\nvoltage v gnd -> a 12 V\n'
              'resistor rt a -> m 10k\nresistor rb m -> gnd 22k\n')
    d = js(b, ["thevenin", f, "m", "--load", "4.7k", "--meter", "10M"])
    if d:
        vth, rth = 12 * 22 / 32, par(10e3, 22e3)
        near("divider vth", d["vth"], vth, source="unloaded divider, Ohm's law")
        near("divider rth", d["rth"], rth, source="Thevenin resistance Rt||Rb")
        near("divider --load v", d["load"]["v"], vth * 4.7e3 / (4.7e3 + rth), source="Thevenin into a load")
        near("divider --load i", d["load"]["i"], vth / (4.7e3 + rth), source="Ohm's law around the loop")
        near("meter reading", d["meter"]["reading"], vth * 10e6 / (10e6 + rth),
             source="a 10 Mohm meter as a load (common practice for DMM inputs)")
        near("meter error", d["meter"]["error"], vth * 10e6 / (10e6 + rth) - vth, atol=1e-15,
             source="reading minus the open-circuit voltage")
    out, _ = run(b, ["thevenin", f, "mx"], want_rc=2)
    _, err = run(b, ["thevenin", f, "mx"], want_rc=2)
    truth("unknown node suggests the near name", "did you mean 'm'" in err, "usability")
    run(b, ["thevenin", f, "m", "--load", "-3"], want_rc=2)


# ---------------------------------------------------------------------------
# sag ranking

def test_sag_ranking(b, tmp):
    # A 5 V rail with a 2 ohm source resistance feeding four loads in parallel,
    # each behind a port.  Hand computation (Ohm's and Kirchhoff's laws):
    #   V = Vs*Rp/(Rs+Rp), Rp = parallel of all loads; every port opened the
    #   rail sits at Vs; each port's share of the sag is its current times Rs
    #   (the substitution theorem: the loads are current sinks on the rail).
    #   The what-if table: without load i the node is Vs*Rp_i/(Rs+Rp_i),
    #   Rp_i = parallel of the others; opening its port gives the same number;
    #   removing the source gives 0 V.
    vs, rs = 5.0, 2.0
    loads = {"heater": 10.0, "lamp": 50.0, "fan": 25.0, "radio": 200.0}
    lines = ['title "rail"', "ground gnd", "voltage batt gnd -> src %g V" % vs,
             "resistor r_src src -> rail %g" % rs]
    for nm, r in loads.items():
        lines.append("port p_%s rail -> %s_in" % (nm, nm))
        lines.append("resistor r_%s %s_in -> gnd %g" % (nm, nm, r))
    f = write(tmp, "rail.stack", "\n".join(lines) + "\n")
    d = js(b, ["sag", f, "rail", "--what-if"])
    if not d:
        return
    rp = par(*loads.values())
    v0 = vs * rp / (rs + rp)
    near("rail voltage", d["voltage"], v0, source="Ohm's law, source resistance and parallel loads")
    near("rail alone", d["alone"], vs, source="no load current, no drop across r_src")
    near("rail sag", d["sag"], vs - v0, source="alone - voltage (cli spec)")
    shares = {p["name"]: p["share"] for p in d["ports"]}
    for nm, r in loads.items():
        near("share of p_%s" % nm, shares.get("p_" + nm), v0 / r * rs, source="I_load * Rs (substitution theorem)")
    truth("ports ranked heater, fan, lamp, radio: %s" % [p["name"] for p in d["ports"]],
          [p["name"] for p in d["ports"]] == ["p_heater", "p_fan", "p_lamp", "p_radio"],
          "hand computation: the smallest load resistance pulls hardest")
    truth("culprit p_heater", d["culprit"] == "p_heater", "the 10 ohm load")
    want = {}
    for nm, r in loads.items():
        rpi = par(*[x for k, x in loads.items() if k != nm])
        vi = vs * rpi / (rs + rpi)
        want["p_" + nm] = vi
        want["r_" + nm] = vi
    want["batt"] = 0.0
    want["r_src"] = 0.0
    got = {it["name"]: it for it in d["what_if"]}
    for nm, vi in want.items():
        if nm not in got:
            FAILS.append("sag: what-if row %s missing" % nm)
            continue
        near("what-if %s without" % nm, got[nm]["without"], vi, atol=1e-12, source="hand computation, parallel loads")
        near("what-if %s delta" % nm, got[nm]["delta"], vi - v0, atol=1e-12, source="delta = without - voltage")
    deltas = [abs(it["delta"]) for it in d["what_if"] if it["delta"] is not None]
    truth("what-if rows sorted by |delta|", all(deltas[i] >= deltas[i + 1] - 1e-15 for i in range(len(deltas) - 1)),
          "largest change first")
    text, _ = run(b, ["sag", f, "rail"])
    tail = text.split("Culprit")[-1]
    truth("text names p_heater: %r" % tail.strip(), ": port 'p_heater'" in tail, "hand computation: the 10 ohm load")
    share = 100 * (v0 / 10.0 * rs) / (vs - v0)
    truth("culprit share %.0f%% printed" % share, ("(%.0f%%)" % share) in tail, "share over the sag")


# ---------------------------------------------------------------------------
# sensitivities, closed form

def test_sens_divider(b, tmp):
    # Vout = Vs*Rb/(Rt+Rb): normalized sensitivities S_Rt = -Rt/(Rt+Rb),
    # S_Rb = Rt/(Rt+Rb), S_Vs = 1 (differentiation of the divider formula)
    rt, rb, vs = 10e3, 4.7e3, 9.0
    f = write(tmp, "sdiv.stack", 'title "s"\nground gnd\nvoltage vs gnd -> a %g V\n'
              "resistor rt a -> m %g\nresistor rb m -> gnd %g\nport p m -> q\nresistor rl q -> gnd 47k\n"
              % (vs, rt, rb))
    d = js(b, ["influence", f, "p.open"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        near("S_rt of open", it["rt"]["percent_per_percent"], -rt / (rt + rb), source="divider: -Rt/(Rt+Rb)")
        near("S_rb of open", it["rb"]["percent_per_percent"], rt / (rt + rb), source="divider: Rt/(Rt+Rb)")
        near("S_vs of open", it["vs"]["percent_per_percent"], 1.0, source="linear in the source")
        near("S_rl of open", it["rl"]["percent_per_percent"], 0.0, atol=1e-12, source="the load is disconnected")
        near("dopen/drt", it["rt"]["per_unit"], -vs * rb / (rt + rb) ** 2, source="d/dRt of Vs*Rb/(Rt+Rb)")
    d = js(b, ["influence", f, "p.zout"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        # zout = Rt*Rb/(Rt+Rb): S_Rt = Rb/(Rt+Rb), S_Rb = Rt/(Rt+Rb)
        near("S_rt of zout", it["rt"]["percent_per_percent"], rb / (rt + rb), source="d ln(Rt||Rb)/d ln Rt = Rb/(Rt+Rb)")
        near("S_rb of zout", it["rb"]["percent_per_percent"], rt / (rt + rb), source="d ln(Rt||Rb)/d ln Rb = Rt/(Rt+Rb)")
        near("S_vs of zout", it["vs"]["percent_per_percent"], 0.0, atol=1e-12, source="sources zeroed")
    d = js(b, ["influence", f, "p.ratio"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        near("S_rl of ratio", it["rl"]["percent_per_percent"], 1.0, source="ratio = RL/(Rt||Rb)")
        near("S_rt of ratio", it["rt"]["percent_per_percent"], -rb / (rt + rb), source="ratio = RL/(Rt||Rb)")
    d = js(b, ["influence", f, "m"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        rbl = par(rb, 47e3)
        near("S_rt of the loaded node", it["rt"]["percent_per_percent"], -rt / (rt + rbl),
             source="loaded divider: -Rt/(Rt + Rb||RL)")
    # a quantity that is zero gets derivatives only (normalized null)
    f0 = write(tmp, "szero.stack", 'title "z"\nground gnd\nvoltage vs gnd -> a 0 V\n'
               "resistor rt a -> m 1k\nresistor rb m -> gnd 1k\n")
    d = js(b, ["influence", f0, "m"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        truth("zero quantity: percent_per_percent is null", it["rt"]["percent_per_percent"] is None, "cli spec")
        near("zero quantity: dV/dVs", it["vs"]["per_unit"], 0.5, source="divider ratio Rb/(Rt+Rb)")



def test_sens_exact_zero(b, tmp):
    # An op-amp's inputs draw no current (its model: docs/parts-real.md), so
    # nothing after a follower moves the follower's input node: the input node
    # is the source's divider alone, V = Vs*Rc/(Rs + Rc), and every part after
    # the input (the op-amp's own gain, the output divider, the load) has an
    # influence of exactly 0.  Rounding in the adjoint solve leaves such
    # derivatives near 1e-46 on some processors; they must print as 0.
    f = write(tmp, "szfollow.stack", 'title "z"\nground gnd\nvoltage vs gnd -> s 0.9 V rint=20k\n'
              "resistor rc s -> gnd 1M\nopamp u plus=s minus=o out=o gain=100k rout=100\n"
              "resistor r1 o -> m 10k\nresistor r2 m -> gnd 22k\nresistor rl m -> gnd 100k\n")
    d = js(b, ["influence", f, "s"])
    if d:
        near("follower input", d["value"], 0.9 * 1e6 / (20e3 + 1e6), source="divider Vs*Rc/(Rs+Rc)")
        it = {x["part"]: x for x in d["items"]}
        for name in ("u", "r1", "r2", "rl"):
            truth("influence of %s on the follower's input is exactly 0" % name,
                  it[name]["per_unit"] == 0 and it[name]["percent_per_percent"] == 0,
                  "op-amp inputs draw no current")
        near("S_rc of the input node", it["rc"]["percent_per_percent"], 20e3 / (20e3 + 1e6),
             source="d ln(Rc/(Rs+Rc))/d ln Rc = Rs/(Rs+Rc)")

def test_sens_pot(b, tmp):
    # A pot's voltage is V(a) - V(b) across its whole track (docs/parts-real.md),
    # here V(a) with b grounded: Va = Vs*Rd/(R1+Rd), Rd = at*T + ((1-at)*T || RL)
    # (series and parallel resistances); its derivatives by sympy's diff of
    # that closed form.
    import sympy
    vs, r1, t, rl, at = sympy.symbols("vs r1 t rl at", positive=True)
    seg2 = (1 - at) * t
    rd = at * t + seg2 * rl / (seg2 + rl)
    va = vs * rd / (r1 + rd)
    vals = {vs: 5, r1: 1000, t: 10000, rl: 20000, at: sympy.Rational(3, 10)}
    f = write(tmp, "spot.stack", 'title "p"\nground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> a 1k\n'
              "pot trim 10k a=a wiper=w b=gnd at=0.3\nresistor rl w -> gnd 20k\n")
    d = js(b, ["influence", f, "trim.voltage"])
    if d:
        near("pot voltage", d["value"], float(va.subs(vals)), source="series-parallel divider, V(a) - V(b)")
        it = {x["part"]: x for x in d["items"]}
        for name, sym in (("vs", vs), ("r1", r1), ("trim", t), ("rl", rl)):
            near("d pot.voltage/d %s" % name, it[name]["per_unit"], float(sympy.diff(va, sym).subs(vals)),
                 rtol=1e-8, source="sympy diff of the divider's closed form")
    # a track's power is its two segments', no product of voltage and current:
    # no derivative is made up for it
    _, err = run(b, ["influence", f, "trim.power"], want_rc=2)
    truth("influence on a pot's power says why it has none", "not its voltage times its current" in err, "cli spec")
    _, err = run(b, ["formula", f, "trim.power"], want_rc=2)
    truth("formula on a pot's power says why it has none", "not its voltage times its current" in err, "cli spec")


def test_opamp_power(b, tmp):
    # An op-amp's power is what it absorbs at every pin (language spec: a part's
    # power is the power it absorbs): with rails= on nodes the output current
    # comes from the upper rail, iq flows from rail to rail and the bias
    # currents into the inputs, so its power is (Vcc - Vout)*Iout + iq*Vcc +
    # ib*(V+ + V-) (Ohm's law and KCL by hand below), and the parts' powers sum
    # to zero (Tellegen's theorem).
    vcc, vin, rs, rf, rg, rl, iq, ib = 10.0, 2.0, 1e3, 10e3, 10e3, 2e3, 1e-3, 100e-9
    vp = vin - ib * rs                      # the bias current through rs
    vm = vp                                 # ideal: V+ = V-
    vout = vm + rf * (vm / rg + ib)         # KCL at the feedback node
    iout = (vout - vm) / rf + vout / rl     # into the divider and the load
    want = (vcc - vout) * iout + iq * vcc + ib * (vp + vm)
    f = write(tmp, "opow.stack", 'title "p"\nground gnd\nvoltage vs gnd -> vcc 10 V\nvoltage vi gnd -> src 2 V\n'
              "resistor rs src -> inp 1k\nopamp u1 plus=inp minus=fb out=out rails=gnd..vcc iq=1mA ib=100nA\n"
              "resistor rf out -> fb 10k\nresistor rg fb -> gnd 10k\nresistor rl out -> gnd 2k\n")
    d = js(b, ["solve", f])
    if d:
        parts = d["parts"]
        near("op-amp output", parts["u1"]["voltage"], vout, source="KCL and Ohm's law by hand")
        near("op-amp power at every pin", parts["u1"]["power"], want, source="sum of V*I over its pins by hand")
        near("op-amp power is its dissipation", parts["u1"]["power"], d["opamps"]["u1"]["dissipation"] + ib * (vp + vm),
             source="output stage and quiescent power plus the inputs' bias power")
        total = sum(x["power"] for x in parts.values())
        mag = sum(abs(x["power"]) for x in parts.values())
        truth("the parts' powers sum to zero (%.3g W of %.3g W)" % (total, mag), abs(total) <= 1e-12 * mag,
              "Tellegen's theorem")
    # its power is no longer -V(out)*I(out): no derivative or formula is made up for it
    _, err = run(b, ["influence", f, "u1.power"], want_rc=2)
    truth("influence on a supplied op-amp's power says why it has none", "not its voltage times its current" in err,
          "cli spec")
    _, err = run(b, ["formula", f, "u1.power"], want_rc=2)
    truth("formula on a supplied op-amp's power says why it has none", "not its voltage times its current" in err,
          "cli spec")


# ---------------------------------------------------------------------------
# checks and rules through exit codes; edge cases of the port report

def test_sens_current_mode(b, tmp):
    # A Norton source (I, Rsh) into RL through a current-mode port (current
    # divider, Kirchhoff): open = I (into a short; Rsh carries nothing),
    # loaded = I*Rsh/(Rsh+RL), ratio = Rsh/RL.  Derivatives by differentiating
    # those closed forms.
    i, rsh, rl = 10e-6, 1e6, 100e3
    f = write(tmp, "scur.stack", 'title "c"\nground gnd\ncurrent src gnd -> pd %g A\n'
              "resistor rsh pd -> gnd %g\nport p pd -> ld mode=current\nresistor rl ld -> gnd %g\n" % (i, rsh, rl))
    d = js(b, ["influence", f, "p.open"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        near("d open/d I", it["src"]["per_unit"], 1.0, source="short-circuit current = I")
        near("d open/d Rsh", it["rsh"]["per_unit"], 0.0, atol=1e-15, source="a short takes all of I")
    d = js(b, ["influence", f, "p.loaded"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        near("d loaded/d Rsh", it["rsh"]["per_unit"], i * rl / (rsh + rl) ** 2, source="d/dRsh of I*Rsh/(Rsh+RL)")
        near("d loaded/d RL", it["rl"]["per_unit"], -i * rsh / (rsh + rl) ** 2, source="d/dRL of I*Rsh/(Rsh+RL)")
    d = js(b, ["influence", f, "p.sag"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        near("d sag/d RL", it["rl"]["per_unit"], i * rsh / (rsh + rl) ** 2, source="sag = I - I*Rsh/(Rsh+RL)")
    d = js(b, ["influence", f, "p.ratio"])
    if d:
        it = {x["part"]: x for x in d["items"]}
        near("S_Rsh of ratio", it["rsh"]["percent_per_percent"], 1.0, source="ratio = Rsh/RL")
        near("S_RL of ratio", it["rl"]["percent_per_percent"], -1.0, source="ratio = Rsh/RL")


def test_check_exit_codes(b, tmp):
    fail_dir = os.path.join(HERE, "failing")
    d = js(b, ["check", os.path.join(fail_dir, "rule_fails.stack")], want_rc=1)
    if d:
        rules = [c for c in d["checks"] if c["text"].startswith("rule")]
        truth("the ratio rule fails for p_lvl", len(rules) == 1 and not rules[0]["pass"],
              "ratio 4 < 10 (10x rule, common practice)")
        near("rule value is the ratio", rules[0]["value"] if rules else None, 4.0, source="20k/(10k||10k)")
        truth("the other expects pass", d["passed"] == 2 and d["failed"] == 1, "closed forms in the file")
    d = js(b, ["check", os.path.join(fail_dir, "rule_fails.stack"), "--min-ratio", "3"], want_rc=0)
    d = js(b, ["check", os.path.join(fail_dir, "expect_fails.stack")], want_rc=1)
    if d:
        fails = sorted(c["text"] for c in d["checks"] if not c["pass"])
        truth("ratio and sag expects fail: %s" % fails,
              fails == ["expect p_lvl.ratio >= 10", "expect p_lvl.sag < 20 mV"], "ratio 4, sag 1 V")
    run(b, ["solve", os.path.join(fail_dir, "expect_fails.stack")], want_rc=0)


def test_verdicts(b, tmp):
    # zout = 1k; zin = k*1k for k = 10 (ok), 7 (marginal: from half the minimum), 4 (loading)
    lines = ['title "v"', "ground gnd", "voltage v gnd -> a 1 V"]
    for k in (10, 7, 4):
        lines += ["resistor rs%d a -> d%d 1k" % (k, k), "port p%d d%d -> l%d" % (k, k, k),
                  "resistor rl%d l%d -> gnd %dk" % (k, k, k)]
    f = write(tmp, "verdict.stack", "\n".join(lines) + "\n")
    d = js(b, ["solve", f])
    if d:
        v = {k: d["ports"]["p%d" % k]["verdict"] for k in (10, 7, 4)}
        truth("verdicts %s" % v, v == {10: "ok", 7: "marginal", 4: "loading"},
              "language spec: ok at the minimum, marginal from half of it")
    d = js(b, ["solve", f, "--min-ratio", "3"])
    if d:
        truth("--min-ratio 3 passes every port", all(p["verdict"] == "ok" for p in d["ports"].values()),
              "cli spec --min-ratio")
    text, _ = run(b, ["solve", f])
    adv = [ln for ln in text.splitlines() if ln.strip().startswith("-> p4")]
    truth("text advice for p4 names a buffer", adv and "buffer" in adv[0], "issue 3: what would fix it")
    truth("text advice for p4 gives zout at most 400", adv and "400.0" in adv[0], "zin/10 = 4k/10")


def test_feedback_port(b, tmp):
    # a port inside an ideal follower's feedback: opened, the op-amp has no
    # feedback and the equations have no solution (V+ fixed, V- floating)
    f = write(tmp, "fb.stack", 'title "fb"\nground gnd\nvoltage v gnd -> a 1 V\nresistor r1 a -> p 1k\n'
              "resistor r2 p -> gnd 1k\nopamp u plus=p minus=m out=o\nport p_fb o -> m\nresistor rl o -> gnd 1k\n")
    d = js(b, ["solve", f])
    if d:
        p = d["ports"]["p_fb"]
        truth("feedback port: open/zout/zin/ratio null", all(p[k] is None for k in ("open", "zout", "zin", "ratio")),
              "no DC solution with the loop opened (nullor needs feedback)")
        near("feedback port loaded", p["loaded"], 0.5, source="follower of a 1k/1k divider")
        truth("a warning names the port", any("p_fb" in w["message"] and w["code"] == "port-undefined"
                                              for w in d["warnings"]), "cli spec: a warning names the field")
    # a current source driving a voltage-mode port: open is unbounded
    f = write(tmp, "cs.stack", 'title "cs"\nground gnd\ncurrent i gnd -> e 1 mA\nport p e -> f\n'
              "resistor r f -> gnd 1k\n")
    d = js(b, ["solve", f])
    if d:
        p = d["ports"]["p"]
        truth("current driver: open and zout null", p["open"] is None and p["zout"] is None,
              "an ideal current source into an open end")
        near("current driver: zin", p["zin"], 1000.0, source="the load alone")
        truth("current driver: verdict loading", p["verdict"] == "loading", "ratio zin/inf = 0")


def test_float_load_json(b, tmp):
    # load = an ideal op-amp input: opening the port floats it (language spec:
    # no error, the fields that need it are unbounded, JSON null)
    d = js(b, ["solve", os.path.join(HERE, "closed", "float_load.stack")])
    if d:
        p = d["ports"]["p_buf"]
        truth("ideal input: zin and ratio null", p["zin"] is None and p["ratio"] is None, "cli spec: null = unbounded")
        truth("ideal input: verdict ok", p["verdict"] == "ok", "an unbounded ratio meets any minimum")
        near("ideal input: open", p["open"], 1.25, source="equal-resistor divider halves 2.5 V")
        truth("no warning for a merely unbounded field",
              not any(w["code"] == "port-undefined" and "p_buf" in w["message"] for w in d["warnings"]),
              "an ideal input is normal, not a fault")
    text, _ = run(b, ["sag", os.path.join(HERE, "closed", "float_load.stack"), "nin", "--what-if"])
    line = [ln for ln in text.splitlines() if " p_buf " in ln]
    truth("sag: opening p_buf leaves nin floating", line and "floats" in line[0], "nothing sets the input then")


def main():
    if len(sys.argv) != 2 or not os.access(sys.argv[1], os.X_OK):
        print(__doc__)
        return 2
    b = sys.argv[1]
    tests = [test_thevenin_cube, test_thevenin_r2r, test_thevenin_load_meter, test_sag_ranking,
             test_sens_divider, test_sens_exact_zero, test_sens_current_mode, test_sens_pot, test_opamp_power, test_check_exit_codes, test_verdicts, test_feedback_port, test_float_load_json]
    return run_tests([(t.__name__, lambda tmp, t=t: t(b, tmp)) for t in tests], "loadstack_loading_")


if __name__ == "__main__":
    sys.exit(main())
