#!/usr/bin/python3
"""Version 2 names (shared/spec/language.md and cli.md, "Changes from version 1").

Every earlier spelling is an error at its own column whose message names the
new spelling, with exit code 2 (cli.md "Exit codes"); the new spellings work.
`influence` replaces `sens`: its JSON keys and order follow cli.md, and its
numbers are checked against derivatives of the loaded divider's closed form
(the voltage-divider rule, differentiated symbolically by sympy).
"""
import csv
import io
import json
import math

import sympy

from clitest import circuit, run, check, report

# ---- earlier spellings: one error each, at the old word, naming the new one ----------------
BASE = "ground gnd\nvoltage v gnd -> a 5 V\nresistor r a -> k 1k\n"
OLD = [
    # (circuit text, the old word as written, the new spelling the message must name)
    ("ground gnd\nparam vin = 5 V\nvoltage v gnd -> a vin\nresistor r a -> gnd 1k\n", "param", "let"),
    ("ground gnd\nvoltage v gnd -> a 5 V rs=2\nresistor r a -> gnd 1k\n", "rs=", "rint="),
    (BASE + "diode d k -> gnd is=2n\n", "is=", "isat="),
    (BASE + "diode d k -> gnd isat=2n n=1.8\n", "n=", "ideality="),
    (BASE + "diode d k -> gnd rs=0.5\n", "rs=", "rbulk="),
    (BASE + "led d k -> gnd vf=2V n=2\n", "n=", "ideality="),
    (BASE + "led d k -> gnd vf=2V rs=5\n", "rs=", "rbulk="),
    (BASE + "zener z gnd -> k vz=3.3V is=1p\n", "is=", "isat="),
    (BASE + "zener z gnd -> k vz=3.3V n=1.2\n", "n=", "ideality="),
    (BASE + "zener z gnd -> k vz=3.3V rs=8\n", "rs=", "rbulk="),
    (BASE + "ntc t k -> gnd r25=10k beta=3950 temp=40\n", "temp=", "celsius="),
]
for i, (text, old, new) in enumerate(OLD):
    path = circuit("old%d.stack" % i, text)
    rc, out, err = run(["check", path])
    lines = text.split("\n")
    # where the old word starts (the last statement that holds it)
    ln = max(k for k, l in enumerate(lines) if (" " + old) in (" " + l))
    col = (" " + lines[ln]).rfind(" " + old) + 1
    where = "%s:%d:%d: error:" % (path, ln + 1, col)
    first = next((l for l in err.splitlines() if ": error:" in l), "")
    check(rc == 2, "old spelling %r: exit 2 (cli.md exit codes)" % old, "exit %d\n%s" % (rc, err))
    check(first.startswith(where), "old spelling %r: the first error is at %s" % (old, where), err)
    check("'%s'" % new in first, "old spelling %r: the message names '%s'" % (old, new), first)
    check(err.count(": error:") == 1, "old spelling %r: one error, no follow-on errors" % old, err)

rc, out, err = run(["sens", "x.stack", "q"])
check(rc == 2 and "'influence'" in err, "the command 'sens' is refused and names 'influence'", err)

# ---- the new spellings do what the old ones did ------------------------------------------------
# A source with internal resistance: V(out) = 5 V * 1k / (1k + 250) (voltage-divider rule).
p = circuit("rint.stack", "ground gnd\nlet vs = 5 V\nvoltage v gnd -> out vs rint=250\n"
            "resistor r out -> gnd 1k\n")
rc, out, err = run(["solve", p, "--format", "json"])
d = json.loads(out) if rc == 0 else {}
check(rc == 0 and math.isclose(d["nodes"]["out"], 5 * 1000 / 1250, rel_tol=1e-12),
      "let and rint= solve: V(out) = Vs*R/(R+Rint) (voltage-divider rule)", err)
# ntc at celsius=25 is its r25 (the Beta equation's reference point, R(T25) = R25).
p = circuit("ntc.stack", "ground gnd\nvoltage v gnd -> a 2 V\nresistor r a -> t 10k\n"
            "ntc th t -> gnd r25=10k beta=3950 celsius=25\n")
rc, out, err = run(["solve", p, "--format", "json"])
d = json.loads(out) if rc == 0 else {}
check(rc == 0 and math.isclose(d["nodes"]["t"], 1.0, rel_tol=1e-12),
      "ntc celsius=25 is r25 (Beta equation reference point)", err)
# A diode with isat= and ideality=: the junction voltage for the solved current
# satisfies Shockley's equation V = n Vt ln(I/Is + 1).
p = circuit("diode.stack", "ground gnd\nvoltage v gnd -> a 5 V\nresistor r a -> k 1k\n"
            "diode d k -> gnd isat=2n ideality=1.8\n")
rc, out, err = run(["solve", p, "--format", "json"])
d = json.loads(out) if rc == 0 else {}
if check(rc == 0, "diode with isat= and ideality= solves", err):
    vt = 1.380649e-23 * 298.15 / 1.602176634e-19   # kT/q at 25 degC, SI 2019 exact constants
    i = d["parts"]["d"]["current"]
    check(math.isclose(d["nodes"]["k"], 1.8 * vt * math.log(i / 2e-9 + 1), rel_tol=1e-6),
          "diode obeys Shockley's equation with Is = isat=, n = ideality=")

# ---- influence: keys, order and values against sympy derivatives ------------------------------
vs_, rt_, rb_, rl_ = 9.0, 4.7e3, 2.2e3, 15e3
p = circuit("div.stack", "ground gnd\nvoltage vs gnd -> top %g V\nresistor rt top -> mid %g\n"
            "resistor rb mid -> gnd %g\nresistor rl mid -> gnd %g\n" % (vs_, rt_, rb_, rl_))
Vs, Rt, Rb, Rl = sympy.symbols("vs rt rb rl", positive=True)
rp = Rb * Rl / (Rb + Rl)
Q = Vs * rp / (Rt + rp)                      # loaded divider (voltage-divider rule)
subs = {Vs: vs_, Rt: rt_, Rb: rb_, Rl: rl_}
q0 = float(Q.subs(subs))
want = {}
for name, sym in (("vs", Vs), ("rt", Rt), ("rb", Rb), ("rl", Rl)):
    dq = float(sympy.diff(Q, sym).subs(subs))
    want[name] = (float(subs[sym]), dq, float(subs[sym]) / q0 * dq)

rc, out, err = run(["influence", p, "mid", "--format", "json"])
d = json.loads(out, parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c))) if rc == 0 else {}
check(rc == 0, "influence runs (exit 0)", err)
if d:
    check(math.isclose(d["value"], q0, rel_tol=1e-12), "influence value = the loaded divider's voltage")
    items = d["items"]
    check([list(it.keys())[:5] for it in items[:1]] == [["part", "kind", "part_value", "per_unit",
                                                          "percent_per_percent"]],
          "influence item keys as cli.md lists them", str(items[:1]))
    pp = [abs(it["percent_per_percent"]) for it in items]
    check(pp == sorted(pp, reverse=True), "items sorted by |percent_per_percent| (cli.md)", str(pp))
    for it in items:
        w = want.get(it["part"])
        if not check(w is not None, "influence item %s is a part of the circuit" % it["part"]):
            continue
        check(it["kind"] == ("voltage" if it["part"] == "vs" else "resistor"), "%s: kind" % it["part"])
        check(math.isclose(it["part_value"], w[0], rel_tol=1e-15), "%s: part_value" % it["part"])
        check(math.isclose(it["per_unit"], w[1], rel_tol=1e-9), "%s: per_unit = dQ/dp (sympy)" % it["part"],
              "%r vs %r" % (it["per_unit"], w[1]))
        check(math.isclose(it["percent_per_percent"], w[2], rel_tol=1e-9),
              "%s: percent_per_percent = (p/Q) dQ/dp (sympy)" % it["part"])

# CSV carries the same numbers
rc, out, err = run(["influence", p, "mid", "--format", "csv"])
rows = list(csv.reader(io.StringIO(out.decode())))
check(rows and rows[0] == ["part", "kind", "part_value", "per_unit", "percent_per_percent"], "influence CSV header",
      str(rows[:1]))
for r in rows[1:]:
    w = want.get(r[0])
    check(w and math.isclose(float(r[3]), w[1], rel_tol=1e-9) and math.isclose(float(r[4]), w[2], rel_tol=1e-9),
          "influence CSV row %s matches sympy" % r[0], str(r))

# Text: the columns the spec names, and a row per part with % per % to 4 digits
rc, out, err = run(["influence", p, "mid"])
text = out.decode()
head = next((l for l in text.splitlines() if l.strip().startswith("part")), "")
for col in ("part", "kind", "value", "change per unit", "% per %"):
    check(col in head, "influence text has the column '%s' (cli.md)" % col, head)
for name, w in want.items():
    row = next((l for l in text.splitlines() if l.split()[:1] == [name]), "")
    got = row.split()[-1] if row else "nan"
    check(row and math.isclose(float(got), w[2], rel_tol=1e-3), "text row %s: %% per %% %s vs %.4g" % (name, got, w[2]))
check("mV/V" in text and ("µV/Ω" in text or "uV/ohm" in text), "change per unit carries the units (V/V, V/Ω)", text)

# A quantity that is 0: % per % is undefined and the JSON says why
p0 = circuit("zero.stack", "ground gnd\nvoltage vs gnd -> a 0 V\nresistor r1 a -> b 1k\nresistor r2 b -> gnd 1k\n")
rc, out, err = run(["influence", p0, "b", "--format", "json"])
d = json.loads(out) if rc == 0 else {"items": []}
it = next((x for x in d["items"] if x["part"] == "vs"), {})
check(it.get("percent_per_percent", 1) is None and it.get("why", {}).get("percent_per_percent") == "undefined"
      and math.isclose(it.get("per_unit", 0), 0.5, rel_tol=1e-12),
      "Q = 0: percent_per_percent null with why 'undefined'; per_unit = 1/2 (divider rule)", str(it))

report()
