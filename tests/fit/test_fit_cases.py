#!/usr/bin/python3
"""fit end to end: worked cases with their outside sources named beside each.

- A divider for a ratio under a maximum zout: the pair `pick` ranks first
  (pick's own search over IEC 60063 pairs is the reference; the divider law).
- A non-inverting stage, gain 1 + rf/rg = 5 within 1 % (the non-inverting
  amplifier's closed form, any op-amp text), with the ratio rule on its input
  port (zin/zout >= 10, common practice): the written file passes `check`; the
  current goal picks the largest rf + rg in the window (the test's own
  enumeration of E24 pairs, IEC 60063 table from memory).
- A battery tap into a 12-bit converter whose port budget is half an LSB
  (LSB = ref / 2^bits): the written file passes `check`, and the sag computed
  here from the divider law with the converter's input resistance stays
  within LSB/2.
- The same tap with a converter input too low in resistance: no standard
  values meet the budget; exit 1, the closest candidate and its miss named.
- The yield goal draws the trials `tol` draws: on a circuit whose only check
  is an expect on one node, fit's yield equals tol's yield for the same seed.
- E-series: n values per decade of E-n and the E6 table (IEC 60063, from memory).
- Bad usage and bad circuits: exit 2 with file:line:col and a caret.
"""
import json
import os
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tol"))
from lsrun import TMP, circuit, run, run_json, check, close, finish  # noqa: E402

E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]


def e24_in(lo, hi):
    return sorted(round(m * 10 ** d, 6) for d in range(-1, 8) for m in E24 if lo * (1 - 1e-9) <= m * 10 ** d <= hi * (1 + 1e-9))


def fit_json(args, rc_expected=0, env=None):
    rc, out, err = run(["fit"] + args + ["--format", "json"], env=env)
    check(rc == rc_expected, f"fit {' '.join(args)}: exit {rc}, expected {rc_expected}\n{err}")
    try:
        return json.loads(out)
    except json.JSONDecodeError:
        check(False, f"fit {' '.join(args)}: no JSON\n{out}\n{err}")
        return None


def divider_like_pick():
    """The unique pair within 1 % of the ratio and under the zout limit is pick's first."""
    rc, out, err = run(["pick", "ratio", "0.2345", "--total", "10k..100k", "--zout", "5k", "--format", "json"],
                       check_rc=0)
    items = json.loads(out)["items"]
    first = items[0]
    check(abs(first["error_rel"]) < 0.01 < min(abs(i["error_rel"]) for i in items[1:]),
          "premise: only pick's first pair comes within 1 %")
    path = circuit("ratio.stack", """\
title "Reference tap for a comparator"
ground gnd
voltage  vref  gnd -> top 1 V
resistor r_top top -> out 10k free=10k..100k
resistor r_bot out -> gnd 10k free=1k..100k
port     p_out out -> cmp
resistor r_cmp cmp -> gnd 1G
expect out = 0.2345 V within 1%
expect p_out.zout <= 5k
""")
    j = fit_json([path])
    if j:
        v = j["chosen"]["values"]
        check(v["r_top"] == first["rtop"] and v["r_bot"] == first["rbot"],
              f"fit chose {v}, pick's first is {first['rtop']} / {first['rbot']}")
        close(j["chosen"]["checks"][1]["value"], first["zout"], rel=1e-9, what="zout of the pair (r_top || r_bot)")


def non_inverting():
    path = circuit("gain.stack", """\
title "Strain amplifier, gain 5"
ground gnd
voltage  v_cc  gnd -> vcc 12 V
voltage  vsig  gnd -> sig 0.5 V
resistor rs    sig -> in 1k
port     p_in  in -> amp_in             # the source into the amplifier: ratio rule
opamp    u1    plus=amp_in minus=fb out=out rails=gnd..vcc headroom=1V
resistor rf    out -> fb 10k free=1k..1M
resistor rg    fb -> gnd 10k free=1k..1M
resistor rload out -> gnd 100k
expect 1 + rf.value / rg.value = 5 within 1%
expect out = 2.5 V within 1%
rule ratio >= 10
""")
    chosen = os.path.join(TMP, "gain_chosen.stack")
    j = fit_json([path, "--write", chosen])
    if j and j["chosen"]:
        rf, rg = j["chosen"]["values"]["rf"], j["chosen"]["values"]["rg"]
        close(1 + rf / rg, 5, rel=0.01, what="non-inverting gain 1 + rf/rg (closed form)")
        check(rf in e24_in(1e3, 1e6) and rg in e24_in(1e3, 1e6), f"rf {rf} and rg {rg} are E24 values")
        rc, out, err = run(["check", chosen])
        check(rc == 0, f"check passes on the written file\n{out}\n{err}")
        text = open(chosen, encoding="utf-8").read()
        check("# the source into the amplifier: ratio rule" in text and 'title "Strain amplifier, gain 5"' in text,
              "comments and layout are kept")
        check(open(path, encoding="utf-8").read().count("10k free=1k..1M") == 2, "the input file is untouched")
        s = run_json(["solve", chosen])
        if s:
            close(s["nodes"]["out"], 0.5 * (1 + rf / rg), rel=1e-9, what="out = vsig (1 + rf/rg) on the written file")
    # least current: the largest rf + rg whose gain is within 1 % of 5 (the op-amp supplies out/(rf+rg) + out/rload)
    pairs = [(rf, rg) for rf in e24_in(1e3, 1e6) for rg in e24_in(1e3, 1e6) if abs(1 + rf / rg - 5) <= 0.05 * (1 + 1e-9)]
    best = max(pairs, key=lambda p: p[0] + p[1])
    j = fit_json([path, "--goal", "current"])
    if j and j["chosen"]:
        v = j["chosen"]["values"]
        check((v["rf"], v["rg"]) == best, f"current goal chose {v}, the largest rf + rg in the window is {best}")
        out = 0.5 * (1 + best[0] / best[1])
        close(j["chosen"]["current"], out / (best[0] + best[1]) + out / 100e3, rel=1e-6,
              what="supply current = the op-amp's output current, drawn from v_cc through its rails (Ohm's law)")


ADC_TAP = """\
title "Pack tap into a 12-bit converter"
ground gnd
voltage  vbat  gnd -> bat 8.4 V
resistor r_hi  bat -> tap 100k free=10k..1M tol=1%
resistor r_lo  tap -> gnd 47k  free=10k..1M tol=1%
port     p_adc tap -> ain       # budget: half an LSB, from the converter on its load
adc      a1    in=ain ref=3.3V bits=12 rin={rin}
expect ain between 2.5 V and 3.2 V
"""


def adc_chain():
    path = circuit("tap.stack", ADC_TAP.format(rin="100M"))
    chosen = os.path.join(TMP, "tap_chosen.stack")
    j = fit_json([path, "--write", chosen])
    if not (j and j["chosen"]):
        return
    hi, lo = j["chosen"]["values"]["r_hi"], j["chosen"]["values"]["r_lo"]
    lsb = 3.3 / 2 ** 12
    v_open = 8.4 * lo / (hi + lo)
    rl = lo * 100e6 / (lo + 100e6)
    v_loaded = 8.4 * rl / (hi + rl)
    check(v_open - v_loaded <= lsb / 2, f"sag {v_open - v_loaded} V within half an LSB ({lsb / 2} V), divider law")
    check(2.5 <= v_loaded <= 3.2, f"ain {v_loaded} V between 2.5 V and 3.2 V")
    rc, out, err = run(["check", chosen])
    check(rc == 0, f"check passes on the written file\n{out}\n{err}")
    s = run_json(["solve", chosen])
    if s:
        close(s["ports"]["p_adc"]["budget"], lsb / 2, rel=1e-12, what="the port's budget is half an LSB (ref / 2^bits / 2)")
        close(s["ports"]["p_adc"]["sag"], v_open - v_loaded, rel=1e-6, abs_=1e-12, what="sag, divider law")
    # the infeasible tap: a 1 Mohm converter input needs a source below about 100 ohm for half an LSB
    bad = circuit("tap_bad.stack", ADC_TAP.format(rin="1M"))
    never = os.path.join(TMP, "never.stack")
    j = fit_json([bad, "--write", never], rc_expected=1)
    if j:
        check(j["chosen"] is None and j["why"]["chosen"] == "none", "no candidate is chosen")
        cl = j["closest"]
        miss = [c for c in cl["checks"] if not c["pass"]]
        check(any(c["text"].startswith("port p_adc") for c in miss), f"the closest misses the port's budget: {miss}")
        for c in miss:
            if c.get("miss") is not None:
                beyond = c["value"] - c["hi"] if c["hi"] is not None and c["value"] > c["hi"] else c["lo"] - c["value"]
                close(c["miss"], beyond, rel=1e-12, what=f"miss of {c['text']}: how far beyond its limit")
        check(not os.path.exists(never), "--write writes nothing when nothing fits")
    rc, out, err = run(["fit", bad], check_rc=1)
    check("The closest:" in out and "port p_adc" in out and "misses by" in out, f"the text names the closest miss\n{out}")


def yield_as_tol():
    path = circuit("yield.stack", """\
title "Heater sense divider"
ground gnd
voltage  vs   gnd -> vin 5 V
resistor r1   vin -> mid 10k free=4.7k..22k tol=5%
resistor r2   mid -> gnd 10k tol=5%
expect mid between 2.3 V and 2.6 V
""")
    j = fit_json([path, "--goal", "yield", "--trials", "500", "--seed", "7", "--series", "E12"])
    if not (j and j["chosen"]):
        return
    best = j["chosen"]
    chosen = os.path.join(TMP, "yield_chosen.stack")
    run(["fit", path, "--goal", "yield", "--trials", "500", "--seed", "7", "--series", "E12", "--write", chosen],
        check_rc=0)
    t = run_json(["tol", chosen, "mid", "--trials", "500", "--seed", "7"])
    if t:
        close(best["yield"], t["yield"], rel=0, abs_=0, what="fit's yield = tol's yield, same trials and seed")
    ys = [c["yield"] for c in j["candidates"] if c["meets"]]
    check(all(ys[0] >= y for y in ys), f"candidates ranked by yield: {ys}")


def series_tables():
    """IEC 60063: the E-n series has n values per decade, so a range over three decades
    (ends included) holds 3n + 1 of them; E6 is 1.0 1.5 2.2 3.3 4.7 6.8 (the standard's
    table, from memory).  fit's candidates for one free part are exactly those values."""
    path = circuit("one.stack", "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> b 10k free=1k..1M\n"
                   "resistor rl b -> gnd 10k\nexpect b between 0.1 V and 0.9 V\n")
    for n in (6, 12, 24, 48, 96, 192):
        j = fit_json([path, "--series", f"E{n}", "--top", "1"])
        if j:
            check(j["free"][0]["values"] == 3 * n + 1, f"E{n} over 1k..1M: {3 * n + 1} values, got {j['free'][0]['values']}")
    j = fit_json([path, "--series", "E6", "--top", "19"])
    if j:
        got = sorted(c["values"]["r"] for c in j["candidates"])
        want = sorted(round(m * 10 ** d) for d in (3, 4, 5) for m in (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)) + [1e6]
        check(got == want, f"E6 candidates over 1k..1M are the IEC 60063 table: {got}")


def bad_usage():
    path = circuit("plain.stack", "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1k free=100..10k\n")
    run(["fit", path, "--write", path], check_rc=2)
    run(["fit", path, "--write", os.path.join(TMP, "x.txt")], check_rc=2)
    run(["fit", path, "--goal", "speed"], check_rc=2)
    run(["fit", path, "--top", "0"], check_rc=2)
    run(["fit", path, "--series", "E7"], check_rc=2)
    none = circuit("none.stack", "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1k\n")
    rc, out, err = run(["fit", none], check_rc=2)
    check("free=" in err, "no free part is named as the reason")
    empty = circuit("empty.stack", "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1.1k free=1.01k..1.4k\n")
    rc, out, err = run(["fit", empty, "--series", "E6"], check_rc=2)
    check("empty.stack:3:" in err and "^" in err and "E6" in err, f"an empty range is an error at its place\n{err}")
    outside = circuit("outside.stack", "ground gnd\nvoltage v gnd -> a 1 V\nresistor r a -> gnd 1k free=2k..3k\n")
    rc, out, err = run(["solve", outside], check_rc=2)
    check("outside.stack:3:" in err and "outside its free= range" in err, f"a start outside the range\n{err}")
    block = circuit("block.stack", "ground gnd\nblock leg a\n  resistor r a -> ground 1k free=100..10k\nend\n"
                    "voltage v gnd -> x 1 V\nuse leg l1 a=x\n")
    rc, out, err = run(["fit", block, "--write", os.path.join(TMP, "b.stack")], check_rc=2)
    check("block.stack:3:" in err and "block" in err, f"--write refuses a free value written in a block\n{err}")


def linear_candidates_refactor_once():
    """Every candidate of this stage keeps its op-amp linear: out = vref (1 + rf/rg)
    (the non-inverting gain, any op-amp text) lies between 2.02 V and 4 V for
    rf in 1k..10k and rg in 10k..100k, inside the rails less headroom (0.5 V ..
    11.5 V).  A candidate then starts from op-amp states its solution agrees
    with, so it is solved with one numeric factorization (docs/fit.md), not
    iterated; the choice is the test's own enumeration: the margin of out in
    2.5 V .. 3.5 V is largest at out = 3 V, so at rf/rg = 0.5."""
    lo, hi = e24_in(1e3, 10e3), e24_in(10e3, 100e3)
    outs = [2 * (1 + rf / rg) for rf in lo for rg in hi]
    check(min(outs) > 0.5 and max(outs) < 11.5, "every candidate's output inside the rails less headroom")
    path = circuit("linear_stage.stack", """\
title "Buffer with a little gain for a reference"
ground gnd
voltage  v_cc  gnd -> vcc 12 V
voltage  vref  gnd -> ref 2 V
opamp    u1    plus=ref minus=fb out=out rails=gnd..vcc headroom=0.5V
resistor rf    out -> fb 4.7k free=1k..10k
resistor rg    fb -> gnd 10k free=10k..100k
resistor rload out -> gnd 10k
expect out between 2.5 V and 3.5 V
""")
    j = fit_json([path, "--top", "1"])
    if not j:
        return
    s = j["search"]
    check(s["solved"] == len(outs), f"every combination solved ({s['solved']})")
    check(s["factorizations"] <= 1.05 * s["solved"],
          f"one factorization per candidate, not an iteration each: {s['factorizations']} for {s['solved']}")
    v = j["chosen"]["values"]
    close(2 * (1 + v["rf"] / v["rg"]), 3.0, rel=1e-9, what="out = vref (1 + rf/rg) at the chosen pair")


def main():
    divider_like_pick()
    non_inverting()
    adc_chain()
    yield_as_tol()
    linear_candidates_refactor_once()
    series_tables()
    bad_usage()
    finish()


if __name__ == "__main__":
    main()
