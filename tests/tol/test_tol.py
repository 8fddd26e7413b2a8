#!/usr/bin/python3
"""End-to-end checks of `loadstack tol` against outside references.

Sources of the expected values (all computed here, none copied from our output):
- Divider law Vout = V*Rb/(Rt+Rb) (Ohm's and Kirchhoff's laws) and its partial
  derivatives, for the worst case and the first-order ("linear") propagation of
  uncertainty:  sigma_Q^2 = sum (dQ/dp_i * sigma_i)^2  (GUM, JCGM 100:2008, eq. 10).
- A uniform distribution on [-a, a] has standard deviation a/sqrt(3) (GUM 4.3.7).
- Common practice: a "normal" tolerance reads tol as 3 sigma.
- Quantiles of a uniform law (closed form) and of a normal law
  (scipy.stats.norm.ppf, Debian's python3-scipy).
- Standard errors used for the allowances: of a mean sigma/sqrt(N); of a
  p-quantile sqrt(p(1-p)/N)/f(x_p) (asymptotic result for sample quantiles).
"""
import math
import sys
import os

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lsrun import circuit, run, run_json, check, close, fail, finish  # noqa: E402

from scipy.stats import norm  # noqa: E402


def divider(v, rt, rb, tv=0.0, tt=0.0, tb=0.0):
    def opt(t):
        return f" tol={t}" if t else ""
    return circuit(f"div_{rt}_{rb}_{tt}_{tb}_{tv}.stack", f"""\
title "Bench supply monitor divider"
ground gnd
voltage  vs    gnd -> vin {v} V{opt(tv)}
resistor r_top vin -> mid {rt}{opt(tt)}
resistor r_bot mid -> gnd {rb}{opt(tb)}
""")


# ---- worst case by corners: the analytic extremes ----------------------------------------
def test_corners():
    v, rt, rb, tv, tt, tb = 5.0, 10e3, 4.7e3, 0.05, 0.01, 0.02
    path = divider(v, rt, rb, tv, tt, tb)
    j = run_json(["tol", path, "mid", "--trials", "200"])
    if not j:
        return
    wc = j["worst_case"]
    check(wc["method"] == "corners", f"3 varying parts use corners, got {wc['method']}")
    # Divider law: lowest with the supply low, top high, bottom low; highest the reverse.
    lo = v * (1 - tv) * rb * (1 - tb) / (rt * (1 + tt) + rb * (1 - tb))
    hi = v * (1 + tv) * rb * (1 + tb) / (rt * (1 - tt) + rb * (1 + tb))
    close(wc["min"], lo, rel=1e-12, what="corner min = divider law, top +t, bottom -t, supply -t")
    close(wc["max"], hi, rel=1e-12, what="corner max = divider law, top -t, bottom +t, supply +t")
    close(j["nominal"], v * rb / (rt + rb), rel=1e-12, what="nominal = divider law")
    mc = j["monte_carlo"]
    check(lo <= mc["min"] and mc["max"] <= hi,
          "every Monte Carlo trial lies inside the corners (the divider is monotonic in each part)")
    check(j["yield"] is None, "no expect on mid: yield is null")


# ---- worst case from sensitivities when more than 16 parts vary -------------------------
def test_sensitivity_method():
    v, ntop, nbot, r, tt, tb = 10.0, 9, 8, 1e3, 0.01, 0.02
    lines = ['title "Ladder of 17 toleranced resistors"', "ground gnd", f"voltage vs gnd -> n0 {v} V"]
    for i in range(ntop):
        nxt = "mid" if i == ntop - 1 else f"n{i + 1}"
        lines.append(f"resistor rt{i} n{i} -> {nxt} {r} tol={tt}")
    for i in range(nbot):
        a = "mid" if i == 0 else f"b{i}"
        b = "gnd" if i == nbot - 1 else f"b{i + 1}"
        lines.append(f"resistor rb{i} {a} -> {b} {r} tol={tb}")
    path = circuit("ladder17.stack", "\n".join(lines) + "\n")
    j = run_json(["tol", path, "mid", "--trials", "500"])
    if not j:
        return
    T, B = ntop * r, nbot * r
    S = T + B
    # dV/dRt_i = -V*B/S^2, dV/dRb_i = V*T/S^2 (divider law); deviation = |dV/dp|*p*tol
    dev = [v * B / S**2 * r * tt] * ntop + [v * T / S**2 * r * tb] * nbot
    v0 = v * B / S
    wc = j["worst_case"]
    check(wc["method"] == "sensitivity", f"17 varying parts use the sensitivity method, got {wc['method']}")
    close(wc["min"], v0 - sum(dev), rel=1e-9, what="linear worst case min = V0 - sum|dV/dp|*p*t")
    close(wc["max"], v0 + sum(dev), rel=1e-9, what="linear worst case max = V0 + sum|dV/dp|*p*t")
    close(wc.get("rss"), math.sqrt(sum(d * d for d in dev)), rel=1e-9, what="root-sum-square of the deviations")
    # A port's zout (no adjoint form: central differences).  zout = T || B; d/dRt_i = B^2/S^2,
    # d/dRb_i = T^2/S^2 (derivative of the parallel law).
    path = circuit("ladder17_port.stack", "\n".join(lines) + "\nport p_mid mid -> load\nresistor r_load load -> gnd 1M\n")
    j = run_json(["tol", path, "p_mid.zout", "--trials", "200"])
    if not j:
        return
    z0 = T * B / S
    lin = ntop * (B / S) ** 2 * r * tt + nbot * (T / S) ** 2 * r * tb
    close(j["nominal"], z0, rel=1e-9, what="zout = T || B")
    close(j["worst_case"]["max"], z0 + lin, rel=1e-6, what="linear worst case of zout by central differences")
    close(j["worst_case"]["min"], z0 - lin, rel=1e-6, what="linear worst case of zout (min)")


# ---- Monte Carlo mean and std against first-order propagation ----------------------------
def first_order(v, rt, rb, st, sb):
    """Mean (first order: the nominal), its second-order bias, and sigma of a divider."""
    S = rt + rb
    d_rt, d_rb = -v * rb / S**2, v * rt / S**2
    sigma = math.sqrt((d_rt * st) ** 2 + (d_rb * sb) ** 2)
    d2_rt, d2_rb = 2 * v * rb / S**3, -2 * v * rt / S**3
    bias = 0.5 * (d2_rt * st**2 + d2_rb * sb**2)
    return v * rb / S, bias, sigma


def test_mc_moments():
    v, rt, rb, n = 5.0, 10e3, 4.7e3, 20000
    for dist, t in (("uniform", 0.01), ("uniform", 0.05), ("normal", 0.01), ("normal", 0.05)):
        path = divider(v, rt, rb, 0, t, t)
        j = run_json(["tol", path, "mid", "--trials", str(n), "--seed", "5", "--dist", dist])
        if not j:
            continue
        # uniform +-t: sigma = R*t/sqrt(3) (GUM 4.3.7); normal: tol is 3 sigma (common practice)
        s_of = (lambda R: R * t / math.sqrt(3)) if dist == "uniform" else (lambda R: R * t / 3)
        mean, bias, sigma = first_order(v, rt, rb, s_of(rt), s_of(rb))
        mc = j["monte_carlo"]
        check(mc["trials"] == n and mc["seed"] == 5, "trials and seed echoed")
        # mean: 5 standard errors plus the neglected second-order term
        close(mc["mean"], mean, abs_=5 * sigma / math.sqrt(n) + 2 * abs(bias),
              what=f"{dist} +-{t}: mean vs first-order propagation")
        # std: sampling error of a std is ~ sigma*sqrt((kurtosis-1)/(4N)) < 1 %; first-order error O(t^2)
        close(mc["std"], sigma, rel=0.03 + 2 * t * t, what=f"{dist} +-{t}: std vs first-order propagation")


# ---- percentiles and yield against closed-form quantiles ----------------------------------
def single_source(dist, t, expects=""):
    return circuit(f"single_{dist}_{t}.stack", f"""\
title "Soil probe excitation"
ground gnd
current  i_exc gnd -> probe 1 mA tol={t}
resistor r_probe probe -> gnd 1k
{expects}
""")


def test_percentiles_uniform():
    t, n = 0.1, 20000
    path = single_source("uniform", t, "expect probe between 0.95 V and 1.05 V\n"
                         "expect probe > 0.98 V\n"
                         "expect r_probe.power < 1 uW                   # another quantity: must not count\n")
    j = run_json(["tol", path, "probe", "--trials", str(n)])
    if not j:
        return
    mc = j["monte_carlo"]
    # V = I*R with I uniform on 1 mA*(1 +- t): V uniform on [1-t, 1+t] V, quantile x_p = 1-t+2tp, density 1/(2t)
    for key, p in (("0.1", 0.001), ("1", 0.01), ("50", 0.5), ("99", 0.99), ("99.9", 0.999)):
        se = math.sqrt(p * (1 - p) / n) * 2 * t
        close(mc["percentiles"][key], 1 - t + 2 * t * p, abs_=5 * se + 1e-12, what=f"uniform percentile {key}")
    check(1 - t <= mc["min"] <= 1 - t + 2 * t * 10 / n, "uniform: min just above 1 - t")
    check(1 + t - 2 * t * 10 / n <= mc["max"] <= 1 + t, "uniform: max just below 1 + t")
    # yield: P(0.98 < V <= 1.05) for V uniform on [0.9, 1.1] = 0.07/0.2 = 0.35
    close(j["yield"], 0.35, abs_=5 * math.sqrt(0.35 * 0.65 / n), what="yield = uniform probability of the window")


def test_percentiles_normal():
    t, n = 0.09, 20000
    path = single_source("normal", t, "expect probe between 0.97 V and 1.03 V\n")
    j = run_json(["tol", path, "probe", "--trials", str(n), "--dist", "normal", "--seed", "11"])
    if not j:
        return
    mc = j["monte_carlo"]
    sigma = t / 3  # tol = 3 sigma (common practice)
    for key, p in (("0.1", 0.001), ("1", 0.01), ("50", 0.5), ("99", 0.99), ("99.9", 0.999)):
        z = norm.ppf(p)
        se = math.sqrt(p * (1 - p) / n) / norm.pdf(z) * sigma
        close(mc["percentiles"][key], 1 + sigma * z, abs_=5 * se, what=f"normal percentile {key} (scipy norm.ppf)")
    py = norm.cdf(1) - norm.cdf(-1)  # the window is +-1 sigma
    close(j["yield"], py, abs_=5 * math.sqrt(py * (1 - py) / n), what="yield = normal probability of +-1 sigma")


# ---- determinism: the same seed, any number of threads -----------------------------------
def test_threads():
    path = divider(12.0, 22e3, 6.8e3, 0.05, 0.01, 0.01)
    outs = {}
    for th in ("1", "2", "3"):
        rc, out, err = run(["tol", path, "mid", "--trials", "7001", "--seed", "42", "--format", "json"],
                           env={"LOADSTACK_THREADS": th}, check_rc=0)
        outs[th] = out
    check(outs["1"] == outs["2"] == outs["3"], "seed 42 gives byte-identical JSON with 1, 2 and 3 threads")
    rc, other, err = run(["tol", path, "mid", "--trials", "7001", "--seed", "43", "--format", "json"], check_rc=0)
    check(other != outs["1"], "another seed gives other numbers (the check above can fail)")
    rc, again, err = run(["tol", path, "mid", "--trials", "7001", "--seed", "42", "--format", "json"], check_rc=0)
    check(again == outs["1"], "the default thread count gives the same output too")
    # the seed is a 64-bit unsigned number (docs/cli.md): JSON (RFC 8259 numbers, read by
    # Python's json) and CSV echo all its bits, not a negative two's-complement reading
    top = 2**64 - 1
    j = run_json(["tol", path, "mid", "--trials", "50", "--seed", str(top)])
    check(j["monte_carlo"]["seed"] == top, "seed 2^64-1 echoed unsigned in JSON")
    rc, out, err = run(["tol", path, "mid", "--trials", "50", "--seed", str(top), "--format", "csv"], check_rc=0)
    check("monte_carlo.seed,%d" % top in out, "seed 2^64-1 echoed unsigned in CSV")


# ---- the designer's question in one command -------------------------------------------------
def test_vent_sender():
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "vent_sender.stack")
    j = run_json(["tol", path, "adc", "--trials", "4000"])
    if not j:
        return
    # Divider law by hand (the 1 Mohm ADC input loads r_bot): extremes with the bus at +-5 %,
    # r_pull and r_top against the others.
    def adc(v, rp, rtrk, rtop, rbot, rin=1e6):
        rb = rbot * rin / (rbot + rin)
        rx = rtrk * (rtop + rb) / (rtrk + rtop + rb)
        sense = v * rx / (rp + rx)
        return sense * rb / (rtop + rb)
    lo = adc(12 * 0.95, 680 * 1.01, 470 * 0.99, 10e3 * 1.01, 15e3 * 0.99)
    hi = adc(12 * 1.05, 680 * 0.99, 470 * 1.01, 10e3 * 0.99, 15e3 * 1.01)
    close(j["worst_case"]["min"], lo, rel=1e-12, what="vent sender worst-case min (hand formula)")
    close(j["worst_case"]["max"], hi, rel=1e-12, what="vent sender worst-case max (hand formula)")
    check(0.2 <= lo and hi <= 3.1, "the hand formula itself stays inside 0.2..3.1 V")
    check(j["yield"] == 1.0, f"every trial inside 0.2..3.1 V: yield 1, got {j['yield']}")
    rc, text, err = run(["tol", path, "adc", "--trials", "1000"], check_rc=0)
    check("worst case inside" in text, "the text report answers the question (worst case inside)")


# ---- bad input ------------------------------------------------------------------------------
def test_bad_input():
    path = divider(5.0, 10e3, 4.7e3, 0, 0.01, 0.01)
    rc, out, err = run(["tol", path, "mid +"], check_rc=2)
    check("quantity:1:" in err and "error:" in err and "^" in err, "a bad QUANTITY gets file:line:col, caret")
    rc, out, err = run(["tol", path, "nowhere"], check_rc=2)
    check("error:" in err and "nowhere" in err, "an unknown name in QUANTITY is named")
    for args, what in ((["--trials", "0"], "--trials 0"), (["--trials", "ten"], "--trials ten"),
                       (["--dist", "triangle"], "--dist triangle"), (["--seed", "-3"], "--seed -3"),
                       (["--plot", os.path.join(os.path.dirname(path), "h.bmp")], "--plot .bmp")):
        rc, out, err = run(["tol", path, "mid"] + args)
        check(rc == 2 and "error" in err, f"{what}: exit 2 with a message (got {rc})")
    check(not os.path.exists(os.path.join(os.path.dirname(path), "h.bmp")), "no file left for a bad --plot")
    rc, out, err = run(["tol", os.path.join(os.path.dirname(path), "missing.stack"), "mid"], check_rc=2)
    nf = circuit("notol.stack", "ground gnd\nvoltage vs gnd -> a 1 V\nresistor r a -> gnd 1k\n")
    j = run_json(["tol", nf, "a", "--trials", "10"])
    if j:
        check(j["worst_case"]["min"] == j["worst_case"]["max"] == 1.0 and j["monte_carlo"]["std"] == 0,
              "nothing varies: a zero spread")


def main():
    test_corners()
    test_sensitivity_method()
    test_mc_moments()
    test_percentiles_uniform()
    test_percentiles_normal()
    test_threads()
    test_vent_sender()
    test_bad_input()
    finish()


if __name__ == "__main__":
    main()
