#!/usr/bin/python3
"""A command added by the steps of DEVELOPERS.md "Adding a command".

usage: toy_command.py LOADSTACK_TOY LOADSTACK SOURCE_ROOT

LOADSTACK_TOY is the program built with the test-only command `tally`
(tests/house/tally_cmd.c, its rows in src/cli/main.c under LS_TEST_COMMANDS):
the power each part absorbs, the largest first, and their sum.  Nothing else
of the program knows it; this runs it through the whole program and checks:
  - step 1 (a command file reading the circuit through the session and
    reporting through the writer): a divider's powers against Joule's law
    P = I^2 R with I from Ohm's law (worked out beside the check), and the sum
    over every part of every circuit in circuits/ against conservation of
    energy (the powers a circuit's parts absorb add up to zero);
    the same report as text, JSON (parsed by Python's json) and CSV (parsed by
    Python's csv); bad input through the shared loader (file:line:col, exit 2);
  - step 2 (one row in commands[], its name in the word list of the options it
    takes): --help lists it, its --help lists --top and the options of every
    circuit command and not another command's (--trials), which is refused;
    solve still refuses --top; the ordinary program knows no `tally`;
  - step 3 (docs, man page, completion): the man-page and completion tests,
    run on the test program, fail and name `tally`, so a command added without
    them cannot pass the suite.
"""
import csv
import io
import json
import os
import subprocess
import sys
import tempfile

toy, plain, root = sys.argv[1:4]
failed = 0


def expect(what, ok):
    global failed
    print("%s %s" % ("ok  " if ok else "FAIL", what))
    failed += not ok


def run(exe, *args):
    return subprocess.run([exe] + list(args), capture_output=True, text=True)


def near(what, got, want, source, rel=1e-9):
    expect("%s: %r, want %r (%s)" % (what, got, want, source),
           got is not None and abs(got - want) <= rel * max(abs(want), 1e-15))


DIVIDER = """title "tally divider"
ground gnd
voltage vs gnd -> top 10 V
resistor r1 top -> mid 1k
resistor r2 mid -> gnd 4k
"""

# Two sources, a current source and a VCVS into a resistor network.
MIXED = """title "tally mixed"
ground gnd
voltage v1 gnd -> a 12 V
voltage v2 gnd -> d 5 V
current i1 gnd -> b 1m
resistor r1 a -> b 2.2k
resistor r2 b -> gnd 4.7k
resistor r3 b -> c 1k
vcvs e1 gnd -> c gain=0.5 cplus=a cminus=gnd
resistor r4 c -> d 330
"""
CONSERVING = ["strain_bridge.stack", "tank_level.stack", "bench_monitor.stack", "photodiode_tia.stack", "demo.stack",
              "ebike_pack_monitor.stack", "level_shifter.stack"]

with tempfile.TemporaryDirectory() as tmp:
    div = os.path.join(tmp, "divider.stack")
    with open(div, "w") as f:
        f.write(DIVIDER)

    # Step 1: the report, against closed forms.  I = 10 V / (1k + 4k) = 2 mA
    # (Ohm's law); P = I^2 R (Joule's law): r1 4 mW, r2 16 mW; the source
    # absorbs -V I = -20 mW.
    p = run(toy, "tally", div, "--format", "json")
    expect("tally --format json exits 0 (%d: %s)" % (p.returncode, p.stderr.strip()), p.returncode == 0)
    rep = json.loads(p.stdout) if p.returncode == 0 else {"parts": []}
    got = {r["part"]: r["power"] for r in rep["parts"]}
    near("r1 absorbs", got.get("r1"), (2e-3) ** 2 * 1e3, "Joule's law, I from Ohm's law")
    near("r2 absorbs", got.get("r2"), (2e-3) ** 2 * 4e3, "Joule's law, I from Ohm's law")
    near("vs absorbs", got.get("vs"), -10 * 2e-3, "P = -V I for a source delivering I")
    near("the sources supply", rep.get("supplied"), 20e-3, "P = V I")
    expect("the largest first: %s" % [r["part"] for r in rep["parts"]],
           [r["part"] for r in rep["parts"]] == ["r2", "r1", "vs"])
    expect("JSON meta names the command", rep.get("meta", {}).get("command") == "tally")

    p = run(toy, "tally", div, "--format", "csv", "--top", "2")
    rows = list(csv.reader(io.StringIO(p.stdout))) if p.returncode == 0 else []
    expect("CSV: a header and --top 2 rows: %r" % rows, len(rows) == 3 and rows[0] == ["part", "kind", "power"])
    if len(rows) == 3:
        near("CSV r2", float(rows[1][2]), 16e-3, "Joule's law")

    p = run(toy, "tally", div, "--top", "1", "--ascii")
    lines = [l for l in p.stdout.splitlines() if l.strip()]
    expect("text: the summary line and a one-row table (%r)" % lines,
           p.returncode == 0 and len(lines) == 3 and "20.00 mW" in lines[0] and lines[2].split()[0] == "r2")

    # Conservation of energy: the powers of every part, summed, on circuits of
    # sources, controlled sources, resistors, junctions and op-amps (an op-amp's
    # power counts its inputs and the rails it draws on).
    mixed = os.path.join(tmp, "mixed.stack")
    with open(mixed, "w") as f:
        f.write(MIXED)
    circuits = [mixed] + [os.path.join(root, "circuits", n) for n in CONSERVING]
    for path in circuits:
        p = run(toy, "tally", path, "--format", "json")
        if p.returncode != 0:
            expect("%s: tally exits 0 (%d: %s)" % (os.path.basename(path), p.returncode, p.stderr[:200]), False)
            continue
        r = json.loads(p.stdout)
        expect("%s: the parts absorb %.3g W in sum of %.3g W supplied (conservation of energy)"
               % (os.path.basename(path), r["sum"], r["supplied"]),
               r["supplied"] > 0 and abs(r["sum"]) <= 1e-9 * r["supplied"])

    # Bad input goes through the one loader: the place, a caret, exit 2.
    bad = os.path.join(tmp, "bad.stack")
    with open(bad, "w") as f:
        f.write("ground gnd\nresistor r1 a -> gnd 1 kV\n")
    p = run(toy, "tally", bad)
    expect("a unit error: exit 2 at its place (%r)" % p.stderr.splitlines()[:1],
           p.returncode == 2 and "bad.stack:2:" in p.stderr and "^" in p.stderr)
    p = run(toy, "tally", os.path.join(tmp, "missing.stack"))
    expect("a missing file: exit 2, saying it cannot be read", p.returncode == 2 and "cannot read" in p.stderr)

# Step 2: the rows in main.c.
p = run(toy, "--help")
expect("--help lists tally", "  tally FILE" in p.stdout)
p = run(toy, "tally", "--help")
opts = [l.split()[0] for l in p.stdout.splitlines() if l.startswith("  --")]
expect("tally --help: --top, --set and --format, not --trials (%s)" % " ".join(opts),
       "--top" in opts and "--set" in opts and "--format" in opts and "--trials" not in opts)
p = run(toy, "tally", "circuits/demo.stack", "--trials", "5")
expect("tally refuses --trials, exit 2", p.returncode == 2 and "'tally' takes no option --trials" in p.stderr)
p = run(toy, "solve", "circuits/demo.stack", "--top", "5")
expect("solve still refuses --top", p.returncode == 2 and "'solve' takes no option --top" in p.stderr)
p = run(plain, "tally", "circuits/demo.stack")
expect("the ordinary program knows no tally (exit 2)", p.returncode == 2 and "unknown command 'tally'" in p.stderr)

# Step 3: the documentation tests name the undocumented command.
for script, args in (("test_man.sh", [root, toy]),
                     ("test_completion.sh", [os.path.join(root, "completion", "loadstack.bash"), toy, root])):
    p = subprocess.run(["bash", os.path.join(root, "tests", "api", script)] + args, capture_output=True, text=True)
    expect("%s on the test program fails naming tally" % script,
           p.returncode != 0 and "tally" in p.stdout + p.stderr)

print("%d failures" % failed)
sys.exit(1 if failed else 0)
