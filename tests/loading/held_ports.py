#!/usr/bin/python3
"""Held ports against numpy, and the held ports' fast path against the general one.

Usage: held_ports.py LOADSTACK_BINARY [--count 30] [--seed 11] [--verbose]

A voltage-mode port whose load side has no DC path once it is opened (the
load end is only an input that a controlled source senses) is reported
"held" (docs/loading.md, "Values that do not exist"): the load end is held at
its loaded voltage while the driver side's `open` and `zout` are computed,
`zin` and `ratio` are unbounded and the JSON carries `"load_held": true`.

Networks come from the generator of tests/ref/random_mna.py (fixed seed),
sometimes with ordinary ports split into resistors as in
tests/loading/test_sens_random.py.  Then held ports are made: a control input
X of a vcvs or vccs, or the `plus` input X of an ideal op-amp, is re-pointed
to a new node hdK_l and `port hdK X -> hdK_l` joins it to X.  Each network
also gets a stage of its own whose sensed input is held and whose output
feeds back into X through a resistor (a vcvs, or an ideal op-amp amplifier),
so the held voltage enters the driver side; some held load ends also take a
current from a current source or a vccs, so the port carries current and
`open` differs from `loaded`.

1. numpy (Debian /usr/bin/python3; the modified nodal analysis `Mna` of
   tests/loading/test_sens_random.py, written from the spec's sign
   conventions, with refined solves): `loaded` = V(X) and `current` = the
   port's branch current in the circuit as written; `open` = V(X) in the
   circuit with the port removed and hdK_l held by an ideal voltage source at
   its loaded voltage; `zout` = that circuit's inverse's diagonal entry at X
   (the change of V(X) per unit current injected at X, the hold a 0 V
   source); sag = open - loaded, sag_rel = sag / open.  Compared with
   `solve --format json` to 1e-9 relative, plus 1e-9 of the network's
   largest voltage (current; the independent sources' values included) for
   voltages (currents), 1e-12 of its largest resistance for zout, and 1e-9 of
   its largest voltage over open for sag_rel (compared where abs(open) is
   above 1e-3 of the largest voltage); and load_held true, zin and ratio
   null with why "unbounded", and where zout is above that floor verdict
   "ok" (no budget; docs/loading.md).  Where the held circuit is singular
   (condition number above 1e14) the report must say so: open and zout
   null with why "undefined".  A zout of 0 (a driver at an op-amp's
   output or a source) can come out as round-off of either sign, and a
   negative one gives ratio -unbounded and the verdict "loading": such ports
   are counted and printed, not failed.  Networks where nothing excites the
   ports (every node below 1 uV) are not used.  Held circuits whose matrix has a 2-norm
   condition number above 1e9 (numpy.linalg.cond) are not compared.
2. The general path: every network, and every circuits/**/*.stack and
   docs/examples/**/*.stack, is solved with LOADSTACK_PORT_HELD=general (the
   general low-rank update) and without it (the closed form where it
   applies), and once more with LOADSTACK_SELINV_MIN_N=0 (the closed form
   from the selected inverse's entries, the path of 2000 unknowns and up);
   every port field must agree by tests/scale/fast_paths.py's
   `compare` (imported): to 1e-12 relative (100 eps / rcond where the
   report's rcond is below 1e-6), or within that fraction of the report's
   largest node voltage, current or resistance for a voltage, current or
   impedance,
   the fields derived from zout (fix) to what zout got (Higham, Accuracy and
   Stability of Numerical Algorithms, 2nd ed., sec. 7.1: a backward-stable
   solve's forward error is bounded in norm; the general update misses
   1e-12 of a small open voltage in a large network, by 1e-15 V of 1.5 uV
   in a 3.3 V one); exit codes, stderr, the JSON warnings and the text
   report's notes equal.  (The text report's numbers
   are not compared: where a held port carries no current the closed form
   prints a sag of 0 V and the general update its round-off, -87 fV.)
3. Power: fewer than 60 held ports compared against numpy, or fewer than 20
   where the held voltage reaches V(X) (numpy: the held circuit's inverse
   entry from the hold's row to X is not zero), or fewer than 10 that carry
   current, fails the test.
"""

import argparse
import glob
import json
import os
import random
import subprocess
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))
sys.path.insert(0, os.path.join(ROOT, "tests", "ref"))
sys.path.insert(0, os.path.join(ROOT, "tests", "loading"))
sys.path.insert(0, os.path.join(ROOT, "tests", "scale"))
import random_mna  # noqa: E402  (the network generator)
from test_sens_random import Mna, add_ports  # noqa: E402  (the independent MNA)
from fast_paths import compare  # noqa: E402  (the comparison of two reports)

RTOL = 1e-9
ZFLOOR = 1e-12        # of the network's largest resistance: a zout of 0 to round-off
SINGULAR = 1e14      # numpy's condition number of a held circuit with no DC solution
MIN_HELD = 60
MIN_FEEDBACK = 20
MIN_CARRYING = 10


# ---------------------------------------------------------------------------
# held ports in a generated network

def retoken(line, key, old, new):
    """The part line with its option `key=old` replaced by `key=new`."""
    toks = line.split(" ")
    want = "%s=%s" % (key, old)
    assert toks.count(want) == 1, (line, want)
    toks[toks.index(want)] = "%s=%s" % (key, new)
    return " ".join(toks)


class Holder:
    """Makes held ports in one network: new nodes hdK_l and ports hdK."""

    def __init__(self, net, rng):
        self.net, self.rng = net, rng
        self.ports = []          # port dicts, as the MNA reads them
        self.extra = []          # (part, line) added after the generator's parts
        self.k = 0

    def drivers(self):
        """Nodes a held port may be driven from: off ground, not a held end."""
        return [nd for nd in self.net.nodes if nd != self.net.ground and not nd.startswith("hd")]

    def hold(self, part, key, line_key, index=None):
        """Re-point part[key] (option line_key= on its line) to a new held node."""
        net = self.net
        x = part[key]
        self.k += 1
        name = "hd%d" % self.k
        load = net.node(name + "_l")
        part[key] = load
        if index is not None:
            net.lines[index] = retoken(net.lines[index], line_key, x, load)
        port = {"kind": "port", "name": name, "a": x, "b": load}
        self.ports.append(port)
        self.extra.append((port, "port %s %s -> %s" % (name, x, load)))
        if self.rng.random() < 0.4:
            self.inject(load)
        return load

    def inject(self, load):
        """A current into the held end: the port then carries it."""
        rng, net = self.rng, self.net
        src = rng.choice(self.drivers() + [net.ground])
        mant, e = random_mna.sig3(rng, -5, -2)
        if rng.random() < 0.6:
            itxt, i = random_mna.signed(rng, *random_mna.eng(mant, e, "A", rng))
            nm = "hdi%d" % self.k
            self.extra.append(({"kind": "current", "name": nm, "a": src, "b": load, "i": i},
                               "current %s %s -> %s %s" % (nm, src, load, itxt)))
        else:
            gtxt, gm = random_mna.signed(rng, *random_mna.eng(mant, e, "S", rng))
            cp, cm = rng.sample(self.drivers() + [net.ground], 2)
            nm = "hdg%d" % self.k
            self.extra.append(({"kind": "vccs", "name": nm, "a": src, "b": load, "gm": gm, "cp": cp, "cm": cm},
                               "vccs %s %s -> %s gm=%s cplus=%s cminus=%s" % (nm, src, load, gtxt, cp, cm)))

    def existing(self):
        """Hold some control inputs of the generator's vcvs, vccs and ideal op-amps."""
        g = self.net.ground
        for i, p in enumerate(list(self.net.parts)):
            if p["kind"] in ("vcvs", "vccs"):
                for key, opt in (("cp", "cplus"), ("cm", "cminus")):
                    if p[key] != g and self.rng.random() < 0.5:
                        self.hold(p, key, opt, i)
            elif p["kind"] == "opamp" and p["ideal"] and p["plus"] != g and self.rng.random() < 0.7:
                self.hold(p, "plus", "plus", i)

    def feedback_stage(self):
        """A stage that senses a held copy of X and drives X back through a resistor."""
        rng, net = self.rng, self.net
        g = net.ground
        x = rng.choice(self.drivers())
        s = self.k + 1
        out = net.node("hdw%d" % s)
        rtxt, r = random_mna.resistance(rng)
        back = {"kind": "resistor", "name": "hdr%d" % s, "a": out, "b": x, "r": r}
        if rng.random() < 0.5:
            ktxt, k = random_mna.signed(rng, *random_mna.eng(*random_mna.sig3(rng, -1, 1), "", rng))
            cm = rng.choice([g, g] + self.drivers())
            part = {"kind": "vcvs", "name": "hde%d" % s, "a": g, "b": out, "gain": k, "cp": x, "cm": cm}
            self.hold(part, "cp", "cplus")
            line = "vcvs %s %s -> %s gain=%s cplus=%s cminus=%s" % (part["name"], g, out, ktxt, part["cp"], cm)
            stage = [(part, line)]
        else:
            fb = net.node("hdf%d" % s)
            ratxt, ra = random_mna.resistance(rng, 3, 5)
            rftxt, rf = random_mna.resistance(rng, 3, 6)
            part = {"kind": "opamp", "name": "hdu%d" % s, "plus": x, "minus": fb, "out": out, "ideal": True}
            self.hold(part, "plus", "plus")
            stage = [({"kind": "resistor", "name": "hda%d" % s, "a": fb, "b": g, "r": ra},
                      "resistor hda%d %s -> %s %s" % (s, fb, g, ratxt)),
                     ({"kind": "resistor", "name": "hdb%d" % s, "a": out, "b": fb, "r": rf},
                      "resistor hdb%d %s -> %s %s" % (s, out, fb, rftxt)),
                     (part, "opamp %s plus=%s minus=%s out=%s" % (part["name"], part["plus"], fb, out))]
        stage.append((back, "resistor %s %s -> %s %s" % (back["name"], out, x, rtxt)))
        self.extra[:0] = stage

    def finish(self):
        net = self.net
        for part, line in self.extra:
            net.parts.append(part)
            net.lines.append(line)
        head = net.text.split("\n")[:3]
        net.text = "\n".join(head + net.lines) + "\n"
        return self.ports


def make_network(rng, index):
    net = random_mna.generate(rng, rng.randint(4, 30), index)
    add_ports(net, rng, count=rng.randint(0, 2))
    h = Holder(net, rng)
    h.existing()
    for _ in range(rng.randint(1, 2)):
        h.feedback_stage()
    return net, h.finish()


# ---------------------------------------------------------------------------
# the reference

def reference(net, port):
    """The held port's fields and the network's scales by numpy; "singular"
    when the held circuit has no DC solution, None when a system is too
    ill-conditioned to be a fair reference."""
    base = Mna(net.nodes, net.ground, net.parts)
    if not base.ok():
        return None
    xb = base.solve()
    hold = {"kind": "voltage", "name": "__hold", "a": net.ground, "b": port["b"],
            "v": base.v(xb, port["b"]), "rs": 0.0}
    parts = [p for p in net.parts if p is not port] + [hold]
    held = Mna(net.nodes, net.ground, parts)
    if not np.isfinite(held.cond) or held.cond > SINGULAR:
        return "singular"
    if not held.ok():
        return None
    xh = held.solve()
    f = {"loaded": base.v(xb, port["a"]), "current": float(xb[base.br[port["name"]]]),
         "open": held.v(xh, port["a"]), "zout": held.z(port["a"])}
    f["sag"] = f["open"] - f["loaded"]
    f["sag_rel"] = f["sag"] / f["open"] if f["open"] else None
    # does the held voltage reach V(X)?  The inverse's entry from the hold's row to X.
    e = np.zeros(held.n)
    e[held.br["__hold"]] = 1.0
    reach = held.refined(e)[held.idx[port["a"]]]
    f["_feedback"] = abs(reach) > 1e-9
    scales = {"v": max([abs(base.v(xb, nd)) for nd in net.nodes] + [abs(f["open"]), 1e-300] +
                       [abs(p["v"]) for p in net.parts if p["kind"] == "voltage"]),
              "i": max([abs(base.v(xb, p["a"]) - base.v(xb, p["b"])) / p["r"] for p in net.parts
                        if p["kind"] == "resistor"] +
                       [abs(p["i"]) for p in net.parts if p["kind"] == "current"] + [1e-300]),
              "r": max(p["r"] for p in net.parts if p["kind"] == "resistor")}
    return f, scales


FLOOR = {"open": "v", "loaded": "v", "sag": "v", "current": "i", "zout": "r"}


def singular_network():
    """A held port whose held circuit has no DC solution, every run (the
    random networks make one only now and then).  An ideal op-amp's output y
    drives the port; a vcvs senses the port's load end and sets m - y; a
    source sets p (the op-amp's plus) from m; minus sits between m and y.
    Connected, the load end is y and the loop closes.  Held, m - y and p - m
    are fixed, so plus - minus no longer depends on y: the op-amp has nothing
    to adjust, and the equations are singular.  (With these values the
    closed form's determinant is rounding, not an exact 0: a closed form that
    trusted it would print an open voltage of -574 V.)"""
    net = random_mna.Net("gnd")
    for nd in ("y", "m", "p", "fb", "h"):
        net.node(nd)
    parts = [
        ({"kind": "opamp", "name": "u1", "plus": "p", "minus": "fb", "out": "y", "ideal": True},
         "opamp u1 plus=p minus=fb out=y"),
        ({"kind": "vcvs", "name": "e1", "a": "y", "b": "m", "gain": 1.37, "cp": "h", "cm": "gnd"},
         "vcvs e1 y -> m gain=1.37 cplus=h cminus=gnd"),
        ({"kind": "voltage", "name": "vs", "a": "m", "b": "p", "v": 98.1, "rs": 0.0}, "voltage vs m -> p 98.1 V"),
        ({"kind": "resistor", "name": "r1", "a": "m", "b": "fb", "r": 4.7e3}, "resistor r1 m -> fb 4.7k"),
        ({"kind": "resistor", "name": "r2", "a": "fb", "b": "y", "r": 33e3}, "resistor r2 fb -> y 33k"),
        ({"kind": "resistor", "name": "rp", "a": "p", "b": "gnd", "r": 1e3}, "resistor rp p -> gnd 1k"),
        ({"kind": "port", "name": "ph", "a": "y", "b": "h"}, "port ph y -> h"),
    ]
    for part, line in parts:
        net.add(part, line)
    net.text = "title \"held and singular\"\nground gnd\n" + "\n".join(net.lines) + "\n"
    return net, [parts[-1][0]]


def check_held(net, ports, report, noise, stats):
    """Differences between the report's held ports and numpy; (bad, compared, feedback, carrying, skipped).
    Appends to noise the held ports with a zero zout (driven from 0 ohm)."""
    bad, done, fb, carry, skipped = [], 0, 0, 0, 0
    for port in ports:
        ref = reference(net, port)
        got = report["ports"].get(port["name"])
        if ref is None or got is None:
            skipped += ref is None
            bad += [] if got else ["port %s missing" % port["name"]]
            continue
        if ref == "singular":
            stats["singular"] += 1
            why = got.get("why", {})
            for key in ("open", "zout"):
                if got.get(key, 0) is not None or why.get(key) != "undefined":
                    bad.append("port %s %s: %r, but with the load end held the circuit has no DC solution "
                               "(numpy: condition number above 1e14)" % (port["name"], key, got.get(key)))
            continue
        f, sc = ref
        done += 1
        fb += f["_feedback"]
        carry += abs(f["current"]) > 1e-9 * sc["i"]
        for key, floor in FLOOR.items():
            g = got.get(key)
            tol = RTOL * abs(f[key]) + (ZFLOOR if key == "zout" else RTOL) * sc[floor]
            if not isinstance(g, (int, float)) or isinstance(g, bool) or abs(g - f[key]) > tol:
                bad.append("port %s %s: loadstack %r, numpy %r" % (port["name"], key, g, f[key]))
        why = got.get("why", {})
        # no DC current can flow into a held load side, so nothing loads the
        # driver: the verdict is ok whatever zout's value or sign (a zout of 0,
        # a driver at an op-amp's output, must not turn on its rounding's sign)
        expect = [("load_held", True), ("zin", None), ("ratio", None), ("verdict", "ok")]
        if abs(f["zout"]) <= ZFLOOR * sc["r"]:
            noise.append(port["name"])
        for key, want in expect:
            if got.get(key, "absent") != want:
                bad.append("port %s %s: %r, the held report has %r" % (port["name"], key, got.get(key, "absent"), want))
        # sag_rel where open is not a cancellation: the floor is the voltages' over open
        if f["sag_rel"] is not None and abs(f["open"]) > 1e-3 * sc["v"]:
            g = got.get("sag_rel")
            tol = RTOL * abs(f["sag_rel"]) + RTOL * sc["v"] / abs(f["open"])
            if not isinstance(g, (int, float)) or isinstance(g, bool) or abs(g - f["sag_rel"]) > tol:
                bad.append("port %s sag_rel: loadstack %r, numpy %r" % (port["name"], g, f["sag_rel"]))
        for key in ("zin", "ratio"):
            if why.get(key) != "unbounded":
                bad.append("port %s why.%s: %r, not unbounded" % (port["name"], key, why.get(key)))
    return bad, done, fb, carry, skipped


# ---------------------------------------------------------------------------
# the general path against the fast one

def run(binary, path, general, fmt, selinv=False):
    env = dict(os.environ)
    env.pop("LOADSTACK_PORT_HELD", None)
    env.pop("LOADSTACK_SELINV_MIN_N", None)
    if general:
        env["LOADSTACK_PORT_HELD"] = "general"
    if selinv:       # A^-1's entries from the selected inverse at any size (tests/scale/fast_paths.py)
        env["LOADSTACK_SELINV_MIN_N"] = "0"
    p = subprocess.run([binary, "solve", path, "--format", fmt, "--quiet"], env=env,
                       capture_output=True, text=True, timeout=120)
    return p.returncode, p.stdout, p.stderr


def nums(xs):
    """The magnitudes of the numbers among xs."""
    return [abs(x) for x in xs if isinstance(x, (int, float)) and not isinstance(x, bool)]


def report_norms(d):
    """The report's largest voltage, current and resistance (a port's zout or
    zin, or a resistor's voltage over its current)."""
    parts = d.get("parts", {}).values()
    ohms = nums(p.get(k) for p in d.get("ports", {}).values() for k in ("zout", "zin"))
    ohms += [abs(p["voltage"] / p["current"]) for p in parts if p.get("kind") == "resistor"
             and nums([p.get("voltage")]) and nums([p.get("current")]) and p["current"]]
    return {"volts": max(nums(d.get("nodes", {}).values()) + [1e-300]),
            "amps": max(nums(p.get("current") for p in parts) + [1e-300]),
            "ohms": max(ohms + [1e-300])}


def both_paths(binary, path, label, counts):
    """Compare the general and the fast path on one file: (bad, the fast JSON report, held ports)."""
    (rg, og, eg), (rf, of, ef) = run(binary, path, True, "json"), run(binary, path, False, "json")
    if rg != rf:
        return ["%s: exit %d (general) against %d" % (label, rg, rf)], None, 0
    bad = [] if eg == ef else ["%s: the diagnostics differ" % label]
    try:
        jg, jf = (json.loads(og) if og.strip() else None), (json.loads(of) if of.strip() else None)
    except json.JSONDecodeError:
        return bad + ["%s: not JSON" % label], None, 0
    if jg is None:
        return bad + compare(label, jg, jf, counts), None, 0
    bad += compare(label, jg, jf, counts, floors=report_norms(jg))
    if jg.get("warnings") != jf.get("warnings"):
        bad.append("%s: the warnings differ" % label)
    # the closed form from the selected inverse's entries (large circuits'
    # path, forced here at any size) against the general update as well
    rs, os_, _ = run(binary, path, False, "json", selinv=True)
    try:
        js_ = json.loads(os_) if os_.strip() else None
    except json.JSONDecodeError:
        js_ = None
    if rs != rg or js_ is None:
        bad.append("%s: exit %d or no JSON from the selected inverse's path" % (label, rs))
    else:
        bad += ["%s (selected inverse)" % x for x in compare(label, jg, js_, counts, floors=report_norms(jg))]
    held = sum(1 for p in jg.get("ports", {}).values() if p.get("load_held"))
    notes = [[ln for ln in run(binary, path, general, "text")[1].splitlines() if ln.strip().startswith("note:")]
             for general in (True, False)]
    if notes[0] != notes[1]:
        bad.append("%s: the text reports' notes differ" % label)
    return bad, jf, held


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("--count", type=int, default=30)
    ap.add_argument("--seed", type=int, default=11)
    ap.add_argument("--verbose", action="store_true")
    args = ap.parse_args()
    bad = []
    counts = {"strict": 0, "loose": 0}
    files = sorted(glob.glob(os.path.join(ROOT, "circuits", "**", "*.stack"), recursive=True) +
                   glob.glob(os.path.join(ROOT, "docs", "examples", "**", "*.stack"), recursive=True))
    held_paths = 0
    for path in files:
        b, _, held = both_paths(args.binary, path, os.path.relpath(path, ROOT), counts)
        bad += b
        held_paths += held
    rng = random.Random(args.seed)
    made = compared = feedback = carrying = skipped = 0
    noise, stats = [], {"singular": 0}
    with tempfile.TemporaryDirectory(prefix="loadstack_held_") as tmp:
        net, ports = singular_network()
        path = os.path.join(tmp, "singular.stack")
        with open(path, "w", encoding="utf-8") as f:
            f.write(net.text)
        b, report, held = both_paths(args.binary, path, "the singular network", counts)
        held_paths += held
        if report is None:
            bad += b or ["the singular network: no report"]
        else:
            hb, done, _, _, _ = check_held(net, ports, report, noise, stats)
            bad += b + ["the singular network: %s" % x for x in hb]
            if stats["singular"] != 1 or done != 0:
                bad.append("the singular network: numpy does not find its held circuit singular")
        for i in range(1, 20 * args.count):
            if made >= args.count:
                break
            net, ports = make_network(rng, i)
            base = Mna(net.nodes, net.ground, net.parts)
            if not base.ok():
                continue
            xb = base.solve()
            if max(abs(base.v(xb, nd)) for nd in net.nodes) < 1e-6:
                continue                     # nothing excites the network: nothing to compare
            path = os.path.join(tmp, "net%03d.stack" % i)
            with open(path, "w", encoding="utf-8") as f:
                f.write(net.text)
            b, report, held = both_paths(args.binary, path, "random net %d" % i, counts)
            held_paths += held
            if report is None:
                bad += b or ["random net %d: no report" % i]
                continue
            made += 1
            hb, done, fb, carry, skip = check_held(net, ports, report, noise, stats)
            compared, feedback, carrying, skipped = compared + done, feedback + fb, carrying + carry, skipped + skip
            b += ["random net %d: %s" % (i, x) for x in hb]
            if b and args.verbose:
                print(net.text)
            bad += b
    print("%d held ports of %d random networks against numpy (%d where the held voltage reaches the "
          "driver, %d carrying current; %d with no DC solution when held; %d left out, ill-conditioned); "
          "general and fast paths on %d files "
          "and those networks, %d held ports; %d reports held to 1e-12, %d to 100 eps / rcond (the larger)"
          % (compared, made, feedback, carrying, stats["singular"], skipped, len(files), held_paths, counts["strict"],
             counts["loose"]))
    if noise:
        print("  %d held ports driven from a 0 ohm node (zout 0 to numpy), every one with the verdict ok"
              % len(noise))
    for b in bad[:20]:
        print("  " + b)
    if compared < MIN_HELD or feedback < MIN_FEEDBACK or carrying < MIN_CARRYING:
        print("too few held ports compared: the test lost its power")
        return 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
