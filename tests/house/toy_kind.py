#!/usr/bin/python3
"""A part kind with a limit, added as one family file plus one table entry.

usage: toy_kind.py LOADSTACK_TOY LOADSTACK

LOADSTACK_TOY is the program built with the test-only kind `testsink`
(tests/house/testsink_kind.c, its entry in src/parts/kinds.c under
LS_TEST_KINDS): a current sink drawing VALUE while the voltage across it is at
least its compliance, else the resistance compliance / VALUE.  Nothing else of
the program knows it; this solves it through the whole pipeline and checks:
  - regulating and saturated operating points against Ohm's law and the
    voltage divider (closed forms, worked out beside each check);
  - the port report and `sag` remove it as the table says (opened: the node
    goes back to the supply voltage, as with no load);
  - the iteration settles its limit without the junction machinery (the
    table's .is_junction is false for it) and the suite's self-check
    (LOADSTACK_SELFCHECK=1: KCL at every node) passes;
  - the ordinary program does not know the kind (exit 2 at its keyword).
"""
import json
import os
import subprocess
import sys
import tempfile

CIRCUIT = """title "bench sink"
ground gnd
voltage vs gnd -> top {vs} V
resistor r1 top -> mid {r}
port p1 mid -> a
testsink s1 a -> gnd {i} A compliance={vc} V
"""

failed = 0


def expect(what, ok):
    global failed
    print("%s %s" % ("ok  " if ok else "FAIL", what))
    failed += not ok


def near(what, got, want, source, rel=1e-9):
    expect("%s: %r, want %r (%s)" % (what, got, want, source),
           got is not None and abs(got - want) <= rel * max(abs(want), 1e-12))


def run(exe, tmp, args, **values):
    path = os.path.join(tmp, "sink.stack")
    with open(path, "w") as f:
        f.write(CIRCUIT.format(**values))
    p = subprocess.run([exe] + [args[0], path] + args[1:] + ["--format", "json"], capture_output=True, text=True)
    if p.returncode != 0:
        global failed
        failed += 1
        print("FAIL %s exited %d:\n%s" % (" ".join(args), p.returncode, p.stderr))
        return None
    return json.loads(p.stdout)


def main():
    toy, plain = sys.argv[1], sys.argv[2]
    with tempfile.TemporaryDirectory() as tmp:
        # Regulating: 5 V through 1 kOhm into a 2 mA sink: V(a) = 5 - 2 mA * 1 k = 3 V,
        # above its 1 V compliance (Ohm's law).
        d = run(toy, tmp, ["solve"], vs=5, r=1000, i=0.002, vc=1)
        if d:
            near("regulating V(a)", d["nodes"]["a"], 3.0, "Ohm's law: 5 V - 2 mA x 1 kOhm")
            near("regulating current", d["parts"]["s1"]["current"], 0.002, "the sink's value")
            port = d["ports"]["p1"]
            near("port open (sink removed as open)", port["open"], 5.0, "no load current: no drop in r1")
            near("port loaded", port["loaded"], 3.0, "as above")
            near("port zout", port["zout"], 1000.0, "r1 behind an ideal source")
            near("port current", port["current"], 0.002, "the sink's value")
        # Saturated: through 4.7 kOhm, 2 mA would need V(a) = 5 - 9.4 < 1 V, so the sink is
        # the resistance 1 V / 2 mA = 500 Ohm: V(a) = 5 * 500 / (4700 + 500) (voltage divider).
        d = run(toy, tmp, ["solve"], vs=5, r=4700, i=0.002, vc=1)
        if d:
            near("saturated V(a)", d["nodes"]["a"], 5 * 500 / 5200, "divider 4.7 kOhm over 500 Ohm")
            near("saturated current", d["parts"]["s1"]["current"], 5 / 5200, "5 V / 5.2 kOhm")
            expect("the limit was found by iterating (%d solves)" % d["solver"]["iterations"],
                   d["solver"]["iterations"] >= 2)
        # sag at a: with the sink removed (opened) a returns to the supply, 5 V; the sag is
        # 2 mA x 1 kOhm = 2 V (Ohm's law).
        d = run(toy, tmp, ["sag", "a"], vs=5, r=1000, i=0.002, vc=1)
        if d:
            near("sag alone", d["alone"], 5.0, "no load current")
            near("sag", d["sag"], 2.0, "2 mA x 1 kOhm")
        # The ordinary program has no such kind: an error at the keyword, exit 2.
        path = os.path.join(tmp, "sink.stack")
        p = subprocess.run([plain, "check", path], capture_output=True, text=True)
        expect("the ordinary program rejects the test-only kind (exit %d)" % p.returncode,
               p.returncode == 2 and ":6:1: error:" in p.stderr and "testsink" in p.stderr)
    print("%d failed" % failed)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
