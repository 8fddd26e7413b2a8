#!/usr/bin/python3
"""The conventions a Unix user expects of a command-line tool (issue 14, section 2;
shared/spec/cli.md version 2).  Each check names where the expectation comes from:
the spec, POSIX utility conventions (the Utility Syntax Guidelines: '-' for
standard input, '--' ends the options), RFC 3629 (UTF-8) and the Unicode
standard's byte-order mark, the no-color.org convention (NO_COLOR), or common
practice of command-line tools (progress on a terminal only).
"""
import csv
import io
import json
import os
import shutil
import stat
import subprocess
import time

from clitest import LOADSTACK, TMP, check, circuit, report, run
from ptyrun import run_pty

DIVIDER = ("title \"Greenhouse vent sensor\"\nground gnd\nvoltage vs gnd -> top 12 V\n"
           "resistor rt top -> mid 30k tol=1%\nresistor rb mid -> gnd 10k tol=1%\n"
           "expect mid = 3 V within 5%\n")


def strict_json(b):
    """Parse JSON, refusing NaN and Infinity (they are not JSON, RFC 8259)."""
    def bad(c):
        raise ValueError("not JSON: " + c)
    return json.loads(b.decode("utf-8"), parse_constant=bad)


# ---- '-' is standard input; '--' ends the options (POSIX Utility Syntax Guidelines 10, 13) -----
rc, out, err = run(["solve", "-", "--format", "json"], stdin=DIVIDER.encode())
d = strict_json(out) if rc == 0 else {}
check(rc == 0 and abs(d["nodes"]["mid"] - 3.0) < 1e-12, "solve - reads the circuit from standard input "
      "(mid = 12 V * 10k/40k = 3 V, divider rule)", err)
rc, out, err = run(["solve", "-"], stdin=b"ground gnd\nresistor r gnd -> ")
check(rc == 2 and err.startswith("<stdin>:2:19: error:"), "errors in standard input are placed as <stdin>:LINE:COL", err)
# includes of a circuit on standard input resolve from the current directory
os.makedirs(os.path.join(TMP, "lib"), exist_ok=True)
circuit("lib/load.stack", "resistor rl mid -> gnd 10k\n")
rc, out, err = run(["solve", "-", "--format", "json"], stdin=(DIVIDER + 'include "lib/load.stack"\n').encode(),
                   cwd=TMP)
d = strict_json(out) if rc == 0 else {}
check(rc == 0 and abs(d["nodes"]["mid"] - 12 * 5e3 / 35e3) < 1e-12,
      "an include in standard input resolves from the current directory (mid = 12 V * 5k/35k)", err)
# sweep elaborates the circuit at every point: standard input is read once and reused
rc, out, err = run(["sweep", "-", "rt_v", "10k", "30k", "mid", "--steps", "3", "--format", "json"],
                   stdin=DIVIDER.replace("30k tol=1%", "rt_v").replace("title", "let rt_v = 30k\ntitle").encode())
d = strict_json(out) if rc == 0 else {"points": []}
want = [12 * 10e3 / (r + 10e3) for r in (10e3, 20e3, 30e3)]
check(rc == 0 and len(d["points"]) == 3 and all(abs(p["mid"] - w) < 1e-12 for p, w in zip(d["points"], want)),
      "sweep - reads standard input once and solves every point (divider rule)", err + str(d))
# '--' ends the options: a file whose name starts with '-' is then a file
dash = circuit("-odd.stack", DIVIDER)
rc, out, err = run(["solve", "--format", "json", "--", "-odd.stack"], cwd=TMP)
check(rc == 0 and "mid" in strict_json(out)["nodes"], "after '--' an argument starting with '-' is a FILE", err)
rc, out, err = run(["solve", "-odd.stack"], cwd=TMP)
check(rc == 2, "without '--' such an argument is an unknown option (exit 2)", err)
rc, out, err = run(["solve", "--", "-", "--format", "json"], stdin=DIVIDER.encode())
check(rc == 2 and "unexpected argument '--format'" in err, "after '--' even '--format' is an argument", err)

# ---- byte-order mark and UTF-8 (RFC 3629; the spec: "every output is valid UTF-8") ----------------
bom = circuit("bom.stack", "\ufeff" + DIVIDER)
rc, out, err = run(["solve", bom, "--format", "json"])
d = strict_json(out) if rc == 0 else {}
check(rc == 0 and d.get("title") == "Greenhouse vent sensor", "a UTF-8 byte-order mark at the start is skipped",
      err)
rc, out, err = run(["solve", "-", "--format", "json"], stdin=b"\xef\xbb\xbf" + DIVIDER.encode())
check(rc == 0, "a byte-order mark on standard input is skipped too", err)
bad_line = b"ground gnd\nvoltage vs gnd -> top 12 V\nresistor rt top -> mid 30k\nresistor rb mid -> gnd 10k\n"
latin = circuit("latin1.stack", b'title "Kiln 1200\xb0C probe"\n' + bad_line, mode="wb")
for fmt in ("text", "json", "csv"):
    rc, out, err = run(["solve", latin, "--format", fmt])
    first = err.splitlines()[0] if err else ""
    check(rc == 2 and first.startswith(latin + ":1:17: error:") and "0xB0" in first and "UTF-8" in first,
          "a Latin-1 byte is an error at its column (line 1, column 17) [%s]" % fmt, err)
    check(out == b"", "nothing is written to stdout when the file is not UTF-8 [%s]" % fmt, repr(out[:200]))
    try:
        err_bytes = subprocess.run([LOADSTACK, "solve", latin], capture_output=True).stderr
        err_bytes.decode("utf-8")
        ok = True
    except UnicodeDecodeError:
        ok = False
    check(ok, "the diagnostic itself (with the source line) is valid UTF-8 [%s]" % fmt)
# each malformed sequence kind of RFC 3629: overlong, surrogate, above U+10FFFF, truncated
for name, seq in (("overlong", b"\xc0\xaf"), ("surrogate", b"\xed\xa0\x80"), ("beyond", b"\xf4\x90\x80\x80"),
                  ("truncated", b"\xe2\x82")):
    p = circuit("bad_%s.stack" % name, b"# note " + seq + b"\n" + bad_line, mode="wb")
    rc, out, err = run(["check", p])
    check(rc == 2 and err.startswith(p + ":1:8: error:"), "RFC 3629 %s sequence is an error at 1:8" % name, err)
# command-line text is held to the same rule: a --set value and a QUANTITY
plain = circuit("plain.stack", "let x = 1\n" + bad_line.decode())
for argv, what in (([b"solve", plain.encode(), b"--set", b"x=1\xb0"], "--set:1:4: error:"),
                   ([b"influence", plain.encode(), b"mid\xb0"], "quantity:1:4: error:")):
    p = subprocess.run([LOADSTACK.encode()] + argv, capture_output=True)
    check(p.returncode == 2 and p.stderr.decode("utf-8", "strict").startswith(what) and b"0xB0" in p.stderr,
          "a Latin-1 byte on the command line is an error at its column (%s)" % what, repr(p.stderr[:300]))
ok_utf8 = circuit("utf8.stack", 'title "Kiln 1200 °C probe — µA range, 4.7 kΩ"\n' + bad_line.decode())
rc, out, err = run(["solve", ok_utf8, "--format", "json"])
check(rc == 0 and strict_json(out)["title"] == "Kiln 1200 °C probe — µA range, 4.7 kΩ",
      "well-formed UTF-8 (°, —, µ, Ω) passes through unchanged", err)

# ---- a file that cannot be read: one error, no follow-on (cli.md "Diagnostics") -----------------
for what, path in (("missing", os.path.join(TMP, "no_such.stack")), ("a directory", TMP)):
    rc, out, err = run(["solve", path])
    lines = [l for l in err.splitlines() if l.strip()]
    check(rc == 2 and len(lines) == 1 and lines[0].startswith("loadstack: error: cannot read"),
          "an unreadable file (%s) gets exactly one error, exit 2" % what, err)
    check("ground" not in err, "no follow-on 'no ground' for %s" % what, err)
unreadable = circuit("secret.stack", DIVIDER)
os.chmod(unreadable, 0)
if os.geteuid() != 0:   # root reads a mode-000 file anyway; only a user can see this one
    rc, out, err = run(["solve", unreadable])
    lines = [l for l in err.splitlines() if l.strip()]
    check(rc == 2 and len(lines) == 1 and "Permission denied" in err, "a file without read permission: one error",
          err)
os.chmod(unreadable, stat.S_IRUSR | stat.S_IWUSR)

# ---- each command's --help lists only the options it takes (cli.md) -----------------------------
def help_options(cmd):
    rc, out, err = run([cmd, "--help"])
    return rc, [l.split()[0] for l in out.decode().splitlines() if l.startswith("  --")]

rc, opts = help_options("pick")
check(rc == 0 and "--series" in opts and not {"--set", "--solver", "--derate", "--min-ratio"} & set(opts),
      "pick --help lists --series but not --set, --solver, --derate, --min-ratio (it reads no circuit)", str(opts))
rc, opts = help_options("check")
check("--fail-on" in opts and "--trials" not in opts, "check --help lists --fail-on, not --trials", str(opts))
rc, opts = help_options("solve")
check("--fail-on" not in opts and "--set" in opts, "solve --help lists --set, not --fail-on", str(opts))
# every option a command's help lists is accepted by it, every other one refused by name
ALL = {"--set": "x=1", "--format": "text", "--output": "-", "--min-ratio": "10", "--ascii": None, "--digits": "5",
       "--quiet": None, "--solver": "auto", "--derate": "1", "--fail-on": "warnings", "--load": "1k",
       "--meter": "10M", "--trials": "10", "--seed": "2", "--dist": "normal", "--plot": "p.svg", "--steps": "3",
       "--log": None, "--series": "E12", "--total": "1k..100k", "--zout": "10k", "--what-if": None,
       "--symbols": "rt", "--ideal": None, "--goal": "yield", "--top": "3", "--write": "w.stack"}
for cmd in ("solve", "check", "sag", "thevenin", "influence", "tol", "sweep", "formula", "fit", "pick", "demo"):
    rc, listed = help_options(cmd)
    for o, v in ALL.items():
        args = [cmd, o] + ([v] if v else []) + ["--help"]
        rc2, out2, err2 = run(args)
        if o in listed:
            check(rc2 == 0, "%s accepts %s, which its --help lists" % (cmd, o), err2)
        else:
            check(rc2 == 2 and ("takes no option " + o) in err2, "%s refuses %s by name" % (cmd, o), err2)

# options may come before the command word too (cli.md: "before or after the arguments")
rc, out, err = run(["--format", "json", "--set", "x=1", "--digits", "6", "solve", circuit("x.stack",
                    "let x = 2\n" + DIVIDER)])
check(rc == 0 and "mid" in strict_json(out)["nodes"], "options before the command word are taken", err)
rc, out, err = run(["--trials", "5", "solve", "x.stack"])
check(rc == 2 and "takes no option --trials" in err, "an option of another command before the word is refused",
      err)

# ---- --digits, --trials with SI prefixes (cli.md) ------------------------------------------------
p = circuit("div.stack", DIVIDER.replace("30k", "33k"))
v = 12 * 10e3 / 43e3   # divider rule
rc, out4, err = run(["solve", p])
rc, out8, err = run(["solve", p, "--digits", "8"])
check(("%.4g V" % v) in out4.decode(), "solve shows mid = %.4g V with 4 digits" % v, out4.decode())
check(("%.8g V" % v) in out8.decode(), "solve --digits 8 shows mid = %.8g V" % v, out8.decode())
rc, out, err = run(["solve", p, "--digits", "0"])
check(rc == 2 and "--digits" in err, "--digits 0 is refused (exit 2)", err)
rc, out, err = run(["tol", p, "mid", "--trials", "2k", "--format", "json", "--quiet"])
check(rc == 0 and strict_json(out)["monte_carlo"]["trials"] == 2000, "--trials 2k runs 2000 trials (SI prefix)",
      err)
rc, out, err = run(["tol", p, "mid", "--trials", "1.5", "--quiet"])
check(rc == 2 and "--trials" in err, "--trials 1.5 is refused (not a whole number)", err)
rc, out, err = run(["tol", p, "mid", "--trials", "100M", "--quiet"])
check(rc == 2 and "--trials" in err, "--trials 100M is refused (above 10M)", err)

# ---- tol with nothing to vary runs no trials ------------------------------------------------------
fixed = circuit("fixed.stack", DIVIDER.replace(" tol=1%", ""))
t0 = time.monotonic()
rc, out, err = run(["tol", fixed, "mid", "--trials", "10M", "--format", "json"])
dt = time.monotonic() - t0
d = strict_json(out) if rc == 0 else {}
check(rc == 0 and d["monte_carlo"]["trials"] == 0 and d["monte_carlo"]["std"] == 0 and d["yield"] == 1,
      "tol with nothing to vary: 0 trials, spread 0, the nominal meets its expect (yield 1)", err + out.decode())
check(dt < 5, "tol --trials 10M with nothing to vary returns at once (%.2f s)" % dt)

# ---- check --fail-on (cli.md: CODE,...|warnings; exit 1) -----------------------------------------
hot = circuit("hot.stack", "title \"Dropper for a 12 V heater strip\"\nground gnd\nvoltage v gnd -> a 12 V\n"
              "resistor r_drop a -> b 47 rating=0.25W\nresistor r_load b -> gnd 100\nexpect b > 1 V\n")
# P(r_drop) = (12 V * 47/147)^2 / 47 = 0.3132 W > 0.25 W (Joule's law with the divider rule)
rc, out, err = run(["check", hot])
check(rc == 0, "an over-rated resistor alone passes check (exit 0) without --fail-on", err)
for spec in ("over-rating", "warnings", "opamp-saturated,over-rating"):
    rc, out, err = run(["check", hot, "--fail-on", spec, "--format", "json"])
    d = strict_json(out) if out else {}
    check(rc == 1 and d.get("failed_warnings") == ["over-rating"],
          "--fail-on %s: exit 1 and failed_warnings [over-rating]" % spec, err + out.decode())
rc, out, err = run(["check", hot, "--fail-on", "over-voltage", "--format", "json"])
check(rc == 0 and strict_json(out).get("failed_warnings") == [], "--fail-on another code: exit 0, no failed warnings",
      err)
rc, out, err = run(["check", hot, "--fail-on", "over-ratng"])
check(rc == 2 and "did you mean 'over-rating'" in err, "an unknown --fail-on code is bad usage naming the nearest",
      err)
rc, out, err = run(["check", hot, "--fail-on", "over-rating", "--format", "csv"])
rows = list(csv.reader(io.StringIO(out.decode())))
check(rc == 1 and any("over-rating" in r[3] and r[5] == "false" for r in rows[1:]),
      "check CSV has a failed row for the warning", out.decode())
rc, out, err = run(["check", hot, "--fail-on", "over-rating"])
check(rc == 1 and "FAIL" in out.decode() and "over-rating" in out.decode(), "check text shows the failing warning",
      out.decode())
sat = circuit("sat.stack", "title \"Sensor amplifier, gain 101\"\nground gnd\nvoltage vsup gnd -> vcc 5 V\n"
              "voltage vin gnd -> in 1 V\nopamp u plus=in minus=fb out=o rails=gnd..vcc\n"
              "resistor rf o -> fb 100k\nresistor rg fb -> gnd 1k\n")
# a non-inverting gain of 1 + 100k/1k = 101 asks 101 V of a 5 V rail: saturated
rc, out, err = run(["check", sat])
check(rc == 0, "a saturated op-amp alone passes check", err)
rc, out, err = run(["check", sat, "--fail-on", "opamp-saturated", "--format", "json"])
check(rc == 1 and strict_json(out).get("failed_warnings") == ["opamp-saturated"],
      "--fail-on opamp-saturated: exit 1", err + out.decode())

# ---- the terminal: warnings once, progress, no colour ---------------------------------------------
env = dict(os.environ)
env.pop("NO_COLOR", None)
rc, tty, _, _ = run_pty([LOADSTACK, "solve", hot], env=env, cwd=TMP)
text = tty.decode("utf-8", "replace")
check(rc == 0 and text.count("dissipates") == 1, "on a terminal the warning is shown once (report, not stderr too)",
      text)
rc, tty, errp, _ = run_pty([LOADSTACK, "solve", hot], env=env, cwd=TMP, stderr_pipe=True)
check(tty.decode().count("dissipates") == 1 and errp.decode().count("dissipates") == 1,
      "with stderr redirected the warning is in the report and on stderr", errp.decode())
check(b"\x1b" not in tty, "no escape sequences (no colour) on a terminal", repr(tty[:300]))
for args, what in ((["--fail-on", "over-rating"], "check --fail-on lists the warning: not again on stderr"),
                   ([], "check without --fail-on: the warning on stderr only")):
    rc, tty, _, _ = run_pty([LOADSTACK, "check", hot] + args, env=env, cwd=TMP)
    check(tty.decode("utf-8", "replace").count("dissipates") == 1, "on a terminal, " + what, tty.decode())

# progress: a tol run long enough (doubling the trials until one takes over 1.25 s: the line shows after 1 s)
trials, seen = 160000, None
big = circuit("big.stack", DIVIDER)
while trials <= 2560000:
    rc, tty, _, dt = run_pty([LOADSTACK, "tol", big, "mid", "--trials", str(trials), "--format", "json"],
                             env=env, cwd=TMP)
    if dt > 1.25:
        seen = (rc, tty, dt)
        break
    trials *= 2
if check(seen is not None, "a tol run of over 1.25 s could be made"):
    rc, tty, dt = seen
    check(rc == 0 and b"\rloadstack tol: " in tty and b" trials (" in tty,
          "progress on a terminal for a run of %.1f s (%d trials)" % (dt, trials), repr(tty[-400:]))
    # the JSON report is intact after the progress line is erased
    body = tty[tty.find(b"{"):].replace(b"\r\n", b"\n")
    try:
        strict_json(body)
        ok = True
    except ValueError:
        ok = False
    check(ok, "the report after the progress line is whole JSON", repr(body[:200]))
    rc, tty, _, dt = run_pty([LOADSTACK, "tol", big, "mid", "--trials", str(trials), "--quiet"], env=env, cwd=TMP)
    check(rc == 0 and b"trials (" not in tty, "--quiet hides the progress line", repr(tty[-300:]))
    rc, out, err = run(["tol", big, "mid", "--trials", str(trials)])
    check(rc == 0 and "\r" not in err, "no progress when stderr is not a terminal (a pipe)", repr(err[-300:]))

# progress for sweep points, the same way (doubling the points until a run takes over 1.25 s).  The
# points are a 400-section ladder's, so the time goes to solving them, where the progress line is
# kept, and not to writing the table (a tiny circuit's 64 000 rows under a busy machine's load
# could take most of a run's time after the last point, and no line was due)
ladder = "".join("resistor s%d l%d -> l%d 1k\nresistor h%d l%d -> gnd r\n" % (i, i, i + 1, i, i + 1)
                 for i in range(400))
swp = circuit("sweep.stack", "let r = 10k\nground gnd\nvoltage v gnd -> l0 12 V\n" + ladder +
              "resistor rt l400 -> m 1k\nresistor rb m -> gnd 10k\n")
steps, seen = 250, None
while steps <= 100000:
    rc, tty, _, dt = run_pty([LOADSTACK, "sweep", swp, "r", "1k", "100k", "m", "--steps", str(steps)], env=env,
                             cwd=TMP)
    if dt > 1.25:
        seen = (rc, tty, dt)
        break
    steps = min(steps * 2, 100000) if steps < 100000 else 100001
if check(seen is not None, "a sweep of over 1.25 s could be made"):
    rc, tty, dt = seen
    check(rc == 0 and b"\rloadstack sweep: " in tty and b" points (" in tty,
          "sweep shows progress on a terminal for a run of %.1f s (%d points)" % (dt, steps), repr(tty[-300:]))
    rc, tty, _, dt = run_pty([LOADSTACK, "sweep", swp, "r", "1k", "100k", "m", "--steps", str(steps), "--quiet"],
                             env=env, cwd=TMP)
    check(rc == 0 and b" points (" not in tty, "sweep --quiet hides it", repr(tty[-300:]))

report()
