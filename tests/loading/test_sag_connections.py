#!/usr/bin/python3
"""`sag` by connection and `thevenin` of a port, against outside references.

Usage: test_sag_connections.py LOADSTACK_BINARY [--count 36] [--seed 7]

1. Substitution theorem and superposition (any circuit-theory text): on COUNT
   random linear networks with 2-6 ports, each port's share
   I_p * (Z(NODE, driver) - Z(NODE, load)) and their sum, the sag, against an
   independent modified-nodal computation in numpy (Z from numpy.linalg.solve
   of the transposed system); the culprit is the port with the largest share
   in the direction of the sag.
2. Known culprits, closed forms by Ohm's and Kirchhoff's laws: a divider
   driving an ADC input and a pull-down; a reference whose stray load drives a
   buffer into its current limit (the Shapley value over the four exact
   combinations, by hand); a supply rail whose indicator LED shifts a sensor
   half-bridge.  The true load ranks first and no setter (a part that sets
   the node's voltage) is ever ranked.
3. thevenin of a port against the loaded divider's closed form
   (vth = V*rb/(rt+rb), rth = rt||rb); --load into an op-amp at its current
   limit gives the limited current (imax), not the linear estimate; --load and
   --meter reject values that are not resistances (exit 2).
4. sag --what-if: a row whose linear estimate crosses a limit (a feedback
   resistor removed, the op-amp then at its rail) is re-solved: the closed form
   (rail - headroom) * rb/(rt+rb), never a value beyond the supplies.

Exit 0 when every check holds, 1 otherwise.
"""

import math
import os
import random
import sys

import numpy as np

from lscheck import js, near, run, run_tests, truth, write, par  # noqa: E402



# ---------------------------------------------------------------------------
# 1. random linear networks against numpy

def random_network(rng):
    """A connected resistive network with sources, and 2-6 ports whose load
    sides are new nodes (some chained: a load side drives the next port).
    Returns (text, parts, nodes, ports) for the reference."""
    nb = rng.randint(3, 7)
    nodes = ["n%d" % i for i in range(nb)]
    parts = []   # (kind, name, a, b, value)
    # a spanning tree of resistors from ground
    seen = ["gnd"]
    for k, n in enumerate(nodes):
        parts.append(("r", "rt%d" % k, rng.choice(seen), n, rng.randint(100, 999) * 10.0 ** rng.randint(0, 3)))
        seen.append(n)
    for k in range(rng.randint(0, 3)):
        a, b = rng.sample(seen, 2)
        parts.append(("r", "rx%d" % k, a, b, rng.randint(100, 999) * 10.0 ** rng.randint(0, 3)))
    # one voltage source behind its own resistor, and sometimes a current source
    parts.append(("v", "vs", "gnd", "src", rng.randint(100, 2400) / 100.0))
    parts.append(("r", "rsrc", "src", rng.choice(nodes), rng.randint(100, 999) * 1.0))
    if rng.random() < 0.6:
        parts.append(("i", "is", "gnd", rng.choice(nodes), rng.randint(1, 999) / 1e6))
    np_ = rng.randint(2, 6)
    drivers = list(nodes)
    ports = []
    for k in range(np_):
        d = rng.choice(drivers)
        ld = "l%d" % k
        ports.append(("p%d" % k, d, ld))
        parts.append(("r", "rl%d" % k, ld, "gnd", rng.randint(100, 999) * 10.0 ** rng.randint(1, 3)))
        if rng.random() < 0.3:   # the load side leaks back into the network
            parts.append(("r", "rb%d" % k, ld, rng.choice(nodes), rng.randint(100, 999) * 10.0 ** rng.randint(2, 4)))
        if rng.random() < 0.4:   # the next stage hangs on this load side
            drivers.append(ld)
    lines = ['title "random ports"', "ground gnd"]
    for kind, name, a, b, v in parts:
        word = {"r": "resistor", "v": "voltage", "i": "current"}[kind]
        unit = {"r": "", "v": " V", "i": " A"}[kind]
        lines.append("%s %s %s -> %s %s%s" % (word, name, a, b, repr(v), unit))
    for name, d, ld in ports:
        lines.append("port %s %s -> %s" % (name, d, ld))
    allnodes = nodes + ["src"] + ["l%d" % k for k in range(np_)]
    return "\n".join(lines) + "\n", parts, allnodes, ports


def mna(parts, nodes, ports, buffered):
    """The MNA matrix and rhs: node voltages, then a branch current per voltage
    source and per port.  A port is a zero-volt branch from driver to load;
    buffered, its load side is held at the driver's voltage and the current
    enters the load side without leaving the driver (every port 'opened' for
    sag: the driver supplies nothing, the next stage still sees its voltage)."""
    idx = {n: i for i, n in enumerate(nodes)}
    vsrc = [p for p in parts if p[0] == "v"]
    n = len(nodes) + len(vsrc) + len(ports)
    A = np.zeros((n, n))
    b = np.zeros(n)

    def ni(x):
        return None if x == "gnd" else idx[x]

    for kind, name, a, c, v in parts:
        ia, ic = ni(a), ni(c)
        if kind == "r":
            g = 1.0 / v
            for i, j, s in ((ia, ia, g), (ic, ic, g), (ia, ic, -g), (ic, ia, -g)):
                if i is not None and j is not None:
                    A[i, j] += s
        elif kind == "i":   # current v flows through the part from a into c
            if ia is not None:
                b[ia] -= v
            if ic is not None:
                b[ic] += v
    k = len(nodes)
    for kind, name, a, c, v in vsrc:   # V(c) - V(a) = v; branch current a -> c through the source
        ia, ic = ni(a), ni(c)
        if ia is not None:
            A[ia, k] += 1
            A[k, ia] -= 1
        if ic is not None:
            A[ic, k] -= 1
            A[k, ic] += 1
        b[k] = v
        k += 1
    for name, d, ld in ports:          # V(d) - V(l) = 0; current d -> l
        idd, il = ni(d), ni(ld)
        if idd is not None and not buffered:
            A[idd, k] += 1
        A[il, k] -= 1
        if idd is not None:
            A[k, idd] += 1
        A[k, il] -= 1
        k += 1
    return A, b


def reference(parts, nodes, ports, node):
    A, b = mna(parts, nodes, ports, False)
    x = np.linalg.solve(A, b)
    Ab, bb = mna(parts, nodes, ports, True)
    xb = np.linalg.solve(Ab, bb)
    idx = {n: i for i, n in enumerate(nodes)}
    e = np.zeros(len(bb))
    e[idx[node]] = 1.0
    z = np.linalg.solve(Ab.T, e)       # row NODE of the buffered network's inverse
    base = len(nodes) + sum(1 for p in parts if p[0] == "v")
    out = {"voltage": x[idx[node]], "alone": xb[idx[node]], "ports": {}}
    for k, (name, d, ld) in enumerate(ports):
        cur = x[base + k]
        zt = (z[idx[d]] if d != "gnd" else 0.0) - z[idx[ld]]
        out["ports"][name] = {"current": cur, "transfer": zt, "share": cur * zt}
    return out


def test_random(b, tmp, count, seed):
    rng = random.Random(seed)
    done = 0
    while done < count:
        text, parts, nodes, ports = random_network(rng)
        node = rng.choice(nodes)
        try:
            ref = reference(parts, nodes, ports, node)
        except np.linalg.LinAlgError:
            continue
        done += 1
        f = write(tmp, "rand%d.stack" % done, text)
        d = js(b, ["sag", f, node])
        if not d:
            continue
        scale = max(abs(ref["alone"]), abs(ref["voltage"]), 1e-3)
        sag = ref["alone"] - ref["voltage"]
        tag = "net %d node %s" % (done, node)
        src = "substitution theorem and superposition, numpy MNA"
        near(tag + " voltage", d["voltage"], ref["voltage"], atol=1e-12 * scale, source=src)
        near(tag + " alone", d["alone"], ref["alone"], atol=1e-12 * scale, source=src)
        near(tag + " sag", d["sag"], sag, atol=1e-11 * scale, source=src)
        total = 0.0
        for p in d["ports"]:
            want = ref["ports"][p["name"]]
            total += p["share"]
            near(tag + " %s current" % p["name"], p["current"], want["current"],
                 atol=1e-12 * max(abs(v["current"]) for v in ref["ports"].values()), source=src)
            near(tag + " %s share" % p["name"], p["share"], want["share"], rtol=1e-9, atol=1e-11 * scale, source=src)
        near(tag + " shares add up to the sag", total, d["sag"], rtol=0, atol=1e-9 * max(abs(sag), 1e-3 * scale),
             source="superposition (a linear circuit)")
        truth(tag + " method substitution", d["method"] == "substitution", "a linear circuit")
        # the culprit: the largest share in the direction of the sag
        cands = [(abs(v["share"]), k) for k, v in ref["ports"].items()
                 if v["share"] * sag > 0 and abs(v["share"]) > 1e-6 * abs(sag)]
        if cands and abs(sag) > 1e-9 * scale:
            best = max(cands)
            second = sorted(cands)[-2][0] if len(cands) > 1 else 0
            if best[0] > second * (1 + 1e-6):
                truth(tag + " culprit %r, want %r" % (d["culprit"], best[1]), d["culprit"] == best[1],
                      "largest share in the direction of the sag (numpy)")
    return done


# ---------------------------------------------------------------------------
# 2. known culprits

def test_divider_adc_pulldown(b, tmp):
    # 3.3 V into 47k/47k; the ADC input (rin 1M) and a 100k pull-down hang on
    # the middle through ports.  Every port open, the middle is 1.65 V and its
    # Thevenin resistance 23.5k; the shares are I_p * 23.5k (Ohm's law).
    vs, ru, rd, radc, rpull = 3.3, 47e3, 47e3, 1e6, 100e3
    f = write(tmp, "div.stack", 'title "d"\nground gnd\nvoltage vs gnd -> top 3.3 V\n'
              "resistor r_up top -> mid 47k\nresistor r_dn mid -> gnd 47k\n"
              "port p_adc mid -> adc_pin\nadc a1 in=adc_pin ref=3.3V bits=12 rin=1M\n"
              "port p_pull mid -> pull\nresistor r_pull pull -> gnd 100k\n")
    d = js(b, ["sag", f, "mid"])
    if not d:
        return
    rp = par(rd, radc, rpull)
    v = vs * rp / (ru + rp)
    alone = vs * rd / (ru + rd)
    src = "Ohm's law: loaded and unloaded divider"
    near("divider voltage", d["voltage"], v, source=src)
    near("divider alone", d["alone"], alone, source=src)
    names = [p["name"] for p in d["ports"]]
    truth("ports ranked p_pull, p_adc: %s" % names, names == ["p_pull", "p_adc"], "the 100k draws 10x the 1M")
    truth("culprit p_pull", d["culprit"] == "p_pull", "the pull-down draws the most")
    sh = {p["name"]: p for p in d["ports"]}
    near("p_pull share", sh["p_pull"]["share"], v / rpull * par(ru, rd), source="I_pull * (r_up||r_dn)")
    near("p_adc share", sh["p_adc"]["share"], v / radc * par(ru, rd), source="I_adc * (r_up||r_dn)")
    near("p_pull transfer", sh["p_pull"]["transfer"], par(ru, rd), source="Thevenin resistance of the divider")
    lp = sh["p_pull"]["load_parts"]
    truth("p_pull's current is drawn by r_pull", len(lp) == 1 and lp[0]["name"] == "r_pull", "KCL at the load node")
    near("r_pull draws I_pull", lp[0]["current"] if lp else None, v / rpull, source="Ohm's law")
    text, _ = run(b, ["sag", f, "mid"])
    truth("text names the culprit", "Culprit: port 'p_pull'" in text, "cli spec: culprit named in text")
    for setter in ("r_up", "r_dn", "vs"):
        truth("setter %s never ranked" % setter, setter not in names and ("'%s'" % setter) not in text,
              "cli spec: setters are not loads")


def test_buffer_current_limit(b, tmp):
    # A 2.5 V reference (1k output resistance) into an ideal follower that
    # sources at most 10 mA; the intended load is 100k, a stray 100 ohm load
    # wants 25 mA.  Combinations, exact (Ohm's law, the limit):
    #   none or meas only: 2.5 V; stray only: 10 mA * 100 = 1.0 V;
    #   both: 10 mA * (100 || 100k).
    # Shapley (two players that matter; p_ref carries no current):
    #   stray = ((2.5 - 1.0) + (2.5 - both)) / 2, meas = (0 + (1.0 - both)) / 2.
    f = write(tmp, "buf.stack", 'title "b"\nground gnd\nvoltage vsup gnd -> vcc 5 V\n'
              "voltage vref gnd -> raw 2.5 V\nresistor r_ref raw -> ref 1k\nport p_ref ref -> buf_in\n"
              "opamp u1 plus=buf_in minus=buf_out out=buf_out rails=gnd..vcc imax=10mA\n"
              "port p_meas buf_out -> meas\nresistor r_meas meas -> gnd 100k\n"
              "port p_stray buf_out -> stray\nresistor r_stray stray -> gnd 100\n")
    d = js(b, ["sag", f, "buf_out"])
    if not d:
        return
    both = 10e-3 * par(100.0, 100e3)
    src = "Shapley value over exact solves (hand computation with the current limit)"
    near("limited voltage", d["voltage"], both, rtol=1e-8, source="10 mA into 100 || 100k")
    near("alone", d["alone"], 2.5, rtol=1e-9, source="the follower unloaded")
    truth("method shapley: %s" % d["method"], d["method"] == "shapley", "the buffer enters its current limit")
    sh = {p["name"]: p["share"] for p in d["ports"]}
    near("stray share", sh.get("p_stray"), ((2.5 - 1.0) + (2.5 - both)) / 2, rtol=1e-8, source=src)
    near("meas share", sh.get("p_meas"), (1.0 - both) / 2, rtol=1e-6, source=src)
    near("ref share", sh.get("p_ref"), 0.0, atol=1e-12, source="an ideal input draws nothing")
    near("shares add up", sum(sh.values()), 2.5 - both, rtol=1e-9, source="Shapley efficiency")
    truth("culprit p_stray", d["culprit"] == "p_stray", "the stray load drives the buffer into its limit")


def test_led_rail_bridge(b, tmp):
    # 5 V behind 2 ohm feeds an indicator LED (150 ohm, vf 2.0 V at 20 mA) and a
    # 10k/10k sensor half-bridge, each through a port.  The bridge's middle
    # follows half the rail: its sag is (I_led + I_bridge) * 2 ohm / 2, and each
    # port's share is its current times 1 ohm (Ohm's law, superposition).
    f = write(tmp, "rail.stack", 'title "r"\nground gnd\nvoltage vbat gnd -> cell 5 V\n'
              "resistor r_int cell -> rail 2\nport p_led rail -> led_feed\n"
              "resistor r_led led_feed -> led_a 150\nled d_ind led_a -> gnd vf=2.0V at=20mA\n"
              "port p_bridge rail -> br_top\nresistor r_s1 br_top -> br_mid 10k\nresistor r_s2 br_mid -> gnd 10k\n")
    d = js(b, ["sag", f, "br_mid"])
    if not d:
        return
    names = [p["name"] for p in d["ports"]]
    truth("p_led ranks first: %s" % names, names[:1] == ["p_led"], "the LED draws ~20 mA, the bridge 0.25 mA")
    truth("culprit p_led", d["culprit"] == "p_led", "the indicator LED is the true load")
    for setter in ("r_s1", "r_s2", "r_int", "vbat"):
        truth("setter %s not ranked" % setter, setter not in names, "cli spec")
    cur = {p["name"]: p["current"] for p in d["ports"]}
    sh = {p["name"]: p["share"] for p in d["ports"]}
    near("alone", d["alone"], 2.5, source="unloaded rail, half-bridge")
    near("sag", d["sag"], (cur["p_led"] + cur["p_bridge"]) * 1.0, rtol=1e-9, source="Ohm's law, 2 ohm / 2")
    near("p_led share", sh["p_led"], cur["p_led"] * 1.0, rtol=1e-9, source="I_led * 2 ohm / 2")
    near("bridge current", cur["p_bridge"], 2 * (2.5 - d["sag"]) / 20e3, rtol=1e-9, source="Ohm's law")


def test_sampled_shapley(b, tmp):
    # The same follower (10 mA limit) with twelve light loads (100k..111k) and
    # one 100 ohm stray: 13 ports, so the Shapley value is averaged over
    # sampled orders.  The game is known in closed form (the output is
    # min(2.5 V, 10 mA * R_connected)), so the exact values over all 8192
    # combinations are computed here and the sampled ones compared; whatever
    # the sample, the shares add up to the sag (each order telescopes).
    rs = [(100 + k) * 1e3 for k in range(12)] + [100.0]
    lines = ['title "many"', "ground gnd", "voltage vsup gnd -> vcc 5 V", "voltage vref gnd -> ref 2.5 V",
             "opamp u1 plus=ref minus=o out=o rails=gnd..vcc imax=10mA"]
    for k in range(12):
        lines += ["port p%d o -> l%d" % (k, k), "resistor rl%d l%d -> gnd %dk" % (k, k, 100 + k)]
    lines += ["port p_stray o -> s", "resistor r_stray s -> gnd 100"]
    f = write(tmp, "many.stack", "\n".join(lines) + "\n")
    d = js(b, ["sag", f, "o"])
    if not d:
        return
    P = len(rs)

    def out(mask):
        g = sum(1 / rs[k] for k in range(P) if mask >> k & 1)
        return 2.5 if g == 0 else min(2.5, 10e-3 / g)

    vals = [out(m) for m in range(1 << P)]
    w = [math.factorial(k) * math.factorial(P - k - 1) / math.factorial(P) for k in range(P)]
    stray = sum(w[bin(m).count("1")] * (vals[m] - vals[m | 1 << (P - 1)])
                for m in range(1 << (P - 1)))
    truth("13 ports: method shapley", d["method"] == "shapley", "the buffer enters its current limit")
    truth("13 ports: culprit p_stray", d["culprit"] == "p_stray", "the 100 ohm load")
    sh = {p["name"]: p["share"] for p in d["ports"]}
    near("13 ports: sampled stray share", sh.get("p_stray"), stray, rtol=1e-3,
         source="exact Shapley value over 8192 combinations of the closed-form game")
    near("13 ports: shares add up to the sag", sum(sh.values()), d["sag"], rtol=1e-9,
         source="each sampled order telescopes to the sag")
    near("13 ports: sag", d["sag"], 2.5 - vals[-1], rtol=1e-8, source="10 mA into every load in parallel")
    again = js(b, ["sag", f, "o"])
    truth("13 ports: the same answer twice", again == d, "deterministic seed")


def test_no_port(b, tmp):
    f = write(tmp, "noport.stack", 'title "n"\nground gnd\nvoltage vs gnd -> top 5 V\n'
              "resistor r1 top -> mid 10k\nresistor r2 mid -> gnd 10k\nresistor rl mid -> gnd 47k\n")
    text, _ = run(b, ["sag", f, "mid"])
    truth("no port: said clearly", "No port is in the way" in text, "cli spec")
    truth("no port: loads at the node listed", "'rl'" in text and "'r2'" in text and "'r1'" not in text,
          "removing r2 or rl raises mid; removing r1 lowers it (Ohm's law)")
    truth("no port: a port suggested", "port p_NAME mid -> NEW_NODE" in text, "cli spec: suggest where a port goes")
    d = js(b, ["sag", f, "mid"])
    truth("no port: culprit null with why", d and d["culprit"] is None and "culprit" in d.get("why", {}),
          "cli spec: every null says why")


# ---------------------------------------------------------------------------
# 3. thevenin of a port, --load with limits, units

def test_thevenin_port(b, tmp):
    v, rt, rb, rl = 12.0, 10e3, 22e3, 47e3
    f = write(tmp, "tp.stack", 'title "t"\nground gnd\nvoltage v gnd -> a 12 V\nresistor rt a -> m 10k\n'
              "resistor rb m -> gnd 22k\nport p_out m -> q\nresistor rl q -> gnd 47k\n")
    d = js(b, ["thevenin", f, "p_out", "--load", "4.7k"])
    if d:
        src = "Thevenin of a divider: V*rb/(rt+rb), rt||rb"
        near("port driver vth", d["driver"]["vth"], v * rb / (rt + rb), source=src)
        near("port driver rth", d["driver"]["rth"], par(rt, rb), source=src)
        near("port driver norton", d["driver"]["norton"], v * rb / (rt + rb) / par(rt, rb), source="vth / rth")
        near("port driver --load", d["driver"]["load"]["v"], v * rb / (rt + rb) * 4.7e3 / (4.7e3 + par(rt, rb)),
             source="Thevenin into a load")
        near("port load vth", d["load"]["vth"], 0.0, atol=1e-15, source="nothing drives the load side alone")
        near("port load rth", d["load"]["rth"], rl, source="the load resistor alone")
        truth("limited none in a linear circuit", d["driver"]["load"]["limited"] == "none", "no limits")
    # NODE form unchanged: the loaded node's equivalent
    d = js(b, ["thevenin", f, "m"])
    if d:
        near("node vth", d["vth"], v * par(rb, rl) / (rt + par(rb, rl)), source="loaded divider")
        near("node rth", d["rth"], par(rt, rb, rl), source="rt||rb||rl")


def test_thevenin_limits(b, tmp):
    # A follower of 2.5 V that sources at most 25 mA: into 10 ohm it delivers
    # 25 mA (0.25 V), not 2.5 V / 10 ohm; its short-circuit current is 25 mA.
    f = write(tmp, "lim.stack", 'title "l"\nground gnd\nvoltage vsup gnd -> vcc 5 V\nvoltage vin gnd -> a 2.5 V\n'
              "opamp u1 plus=a minus=o out=o rails=gnd..vcc imax=25mA rout=0.04\nresistor rl o -> gnd 10k\n")
    _, err = run(b, ["thevenin", f, "o", "--load", "5V"], want_rc=2)
    truth("--load 5V names the unit: %r" % err.strip(), "resistance" in err and "voltage" in err,
          "cli spec: units checked (ohms)")
    _, err = run(b, ["thevenin", f, "o", "--meter", "10mA"], want_rc=2)
    truth("--meter 10mA names the unit", "resistance" in err and "current" in err, "cli spec")
    run(b, ["thevenin", f, "o", "--load", "4.7kohm"], want_rc=0)
    run(b, ["thevenin", f, "o", "--load", "0"], want_rc=2)
    d = js(b, ["thevenin", f, "o", "--load", "10", "--meter", "10M"])
    if d:
        near("--load current at the limit", d["load"]["i"], 25e-3 * 10e3 / (10e3 + 10), rtol=1e-6,
             source="the op-amp's imax, split between the 10 ohm load and rl (current divider)")
        near("--load voltage", d["load"]["v"], 25e-3 * par(10.0, 10e3), rtol=1e-6,
             source="imax into 10 ohm || 10k (Ohm's law)")
        lim = d["load"].get("limited", "")
        truth("limit named: %r" % lim, "u1" in lim and "current" in lim, "issue 12: the limit is named")
        near("norton is the current limit", d["norton"], 25e-3, rtol=1e-6, source="a short draws imax, not vth/rth")
        near("a 10M meter reads the follower", d["meter"]["reading"], 2.5, rtol=1e-6, source="far below the limit")


# ---------------------------------------------------------------------------
# 4. what-if rows past a limit

def test_what_if(b, tmp):
    # x2 non-inverting stage on a 5 V single supply (0.1 V headroom) into a
    # 10k/22k divider.  Without rf the op-amp has no feedback and sits at its
    # upper rail: out = 4.9 V, node = 4.9 * 22/32 (the linear estimate of the
    # open loop is gain * input, far beyond the supply).
    f = write(tmp, "wi.stack", 'title "w"\nground gnd\nvoltage vcc_src gnd -> vcc 5 V\n'
              "voltage vin gnd -> a 1 V\n"
              "opamp u1 plus=a minus=fb out=o gain=200k rails=gnd..vcc headroom=0.1V\n"
              "resistor rf o -> fb 10k\nresistor rg fb -> gnd 10k\nport p o -> top\n"
              "resistor r_top top -> n 10k\nresistor r_bot n -> gnd 22k\n")
    d = js(b, ["sag", f, "n", "--what-if"])
    if not d:
        return
    rows = {r["name"]: r for r in d["what_if"]}
    rf = rows.get("rf")
    truth("rf row flagged beyond_limit", rf is not None and rf["beyond_limit"], "issue 12: crosses the rail")
    near("rf row re-solved at the rail", rf["without"] if rf else None, 4.9 * 22 / 32, rtol=1e-6,
         source="(rail - headroom) * rb/(rt+rb)")
    for r in d["what_if"]:
        if r["without"] is not None:
            truth("row %s within the supply: %r" % (r["name"], r["without"]), abs(r["without"]) <= 5.0 + 1e-9,
                  "nothing in the circuit exceeds its 5 V supply")
    # the same stage with no rails: nothing stops the open loop, so the
    # estimate (gain times the input, far beyond 5 V) is flagged and not given
    f2 = write(tmp, "wi2.stack", open(f).read().replace(" rails=gnd..vcc headroom=0.1V", ""))
    d2 = js(b, ["sag", f2, "n", "--what-if"])
    rf2 = {r["name"]: r for r in d2["what_if"]}.get("rf") if d2 else None
    truth("no rails: rf row flagged without a value: %r" % rf2,
          rf2 is not None and rf2["beyond_limit"] and rf2["without"] is None and rf2["why"]["without"] == "unbounded",
          "issue 12: never printed as if physical")
    truth("sag JSON without --what-if has no what_if", "what_if" not in (js(b, ["sag", f, "n"]) or {}), "cli spec")
    text, _ = run(b, ["sag", f, "n", "--what-if"])
    truth("what-if table labelled", "What-if table" in text, "cli spec: labelled as such")


def main():
    args = sys.argv[1:]
    if not args or not os.access(args[0], os.X_OK):
        print(__doc__)
        return 2
    b = args[0]
    count = int(args[args.index("--count") + 1]) if "--count" in args else 36
    seed = int(args[args.index("--seed") + 1]) if "--seed" in args else 7
    tests = [("random networks", lambda tmp: test_random(b, tmp, count, seed)),
             ("divider, ADC and pull-down", lambda tmp: test_divider_adc_pulldown(b, tmp)),
             ("buffer in its current limit", lambda tmp: test_buffer_current_limit(b, tmp)),
             ("LED on the bridge's rail", lambda tmp: test_led_rail_bridge(b, tmp)),
             ("Shapley over sampled orders", lambda tmp: test_sampled_shapley(b, tmp)),
             ("no port in the way", lambda tmp: test_no_port(b, tmp)),
             ("thevenin of a port", lambda tmp: test_thevenin_port(b, tmp)),
             ("thevenin --load limits", lambda tmp: test_thevenin_limits(b, tmp)),
             ("what-if past a limit", lambda tmp: test_what_if(b, tmp))]
    return run_tests(tests, "loadstack_sag_", width=32, shown=60)


if __name__ == "__main__":
    sys.exit(main())
