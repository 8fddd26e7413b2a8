#!/usr/bin/python3
"""--digits N reaches every number a text report prints (cli.md: "--digits N for more
significant digits in text").

Each command runs on one circuit that gives every kind of fixed-format number a
value with many digits (a port's sag in %, an ADC's error in LSB, a thermistor's
body temperature and self-heating, thevenin's meter error in %, sag's shares,
tol's worst case in % and its yield, pick's ratio and error).  With --digits 8,
every decimal number in the text (a number written with a point) must show at
least 8 significant digits: the value, an irrational result of a solve, has them.
Numbers without a point are whole or exact (counts, 0, the user's tol=1%) and are
left as they are.  Not counted, and documented in docs/cli.md: the solver line's
reciprocal condition and residual and the formula's self-check (estimates, good to
a digit or two), the warnings (diagnostics), and the percentile labels (2.5%: ...).

Then the default (no --digits) text of each command must be the same as with
--digits given as nothing at all changed: checked against the fixed precisions the
reports had before (a port's sag at 3 digits, the yield at two decimals).
"""
import re

from clitest import check, circuit, report, run

CIRCUIT = """title "Digits"
let rtop = 10k
ground gnd
voltage  vs    gnd -> top 3.3 V
resistor rt    top -> mid rtop tol=1%
resistor rb    mid -> gnd 22k tol=1%
port     p_adc mid -> pin
resistor rpin  pin -> gnd 330k
adc      in1   in=pin ref=3.3V bits=12 rin=1M leak=100nA
current  ith   gnd -> t 100uA
ntc      th1   t -> gnd r25=10k beta=3950 celsius=40 dissipation=2mW
voltage  vsup  gnd -> vcc 5 V
opamp    u1    plus=pin minus=o out=o rails=gnd..vcc
resistor rl    o -> gnd 7k
expect   mid between 2.2 V and 2.3 V
"""

NUMBER = re.compile(r"(?<![\w.])[-+]?(\d+\.\d*|\.\d+)(e[-+]?\d+)?")


def sig_digits(mantissa):
    """Significant digits of a decimal mantissa with a point ('0.0012340' -> 5)."""
    d = mantissa.replace(".", "").lstrip("0")
    return len(d)


def short_numbers(text, want):
    """Decimal numbers in the report's lines that count, with fewer than `want` digits."""
    bad = []
    in_warnings = False
    for line in text.splitlines():
        s = line.strip()
        if s == "Warnings":
            in_warnings = True
        elif line and not line.startswith(" "):
            in_warnings = False
        if in_warnings or s.startswith("solved:") or "self-check" in s or "warning:" in s:
            continue
        s = re.sub(r"\d+(\.\d+)?%:", "", s)   # percentile labels
        s = s.replace("between 2.2 V and 2.3 V", "")   # the expect's own text
        s = re.sub(r"abs\(sag\) <= \S+ \S+ \(", "(", s)   # a budget check's name (its value is in the ports table)
        if s.startswith("Dividers of"):   # pick's header repeats the ratio asked for
            continue
        for m in NUMBER.finditer(s):
            if sig_digits(m.group(1)) < want and sig_digits(m.group(1)) > 0:   # 0.0000000 is an exact zero
                bad.append("%s  (in: %s)" % (m.group(0), s))
    return bad


c = circuit("digits.stack", CIRCUIT)
COMMANDS = [
    ["solve", c],
    ["check", c],
    ["sag", c, "pin"],
    ["thevenin", c, "mid", "--load", "47k", "--meter", "1M"],
    ["thevenin", c, "p_adc"],
    ["influence", c, "pin"],
    ["tol", c, "mid", "--trials", "300"],
    ["sweep", c, "rtop", "9k", "11k", "mid", "--steps", "3"],
    ["chain", c],
    ["formula", c, "mid"],
    ["pick", "ratio", "0.3141"],
]
for args in COMMANDS:
    rc, out, err = run(args + ["--digits", "8", "--quiet"])
    text = out.decode("utf-8")
    check(rc in (0, 1) and text.strip() != "", "%s --digits 8 runs" % " ".join(args[:1]), err)
    seen = len([m for m in NUMBER.finditer(text)])
    check(seen > 0, "%s --digits 8 prints decimal numbers" % args[0], text)
    bad = short_numbers(text, 8)
    check(not bad, "%s --digits 8: every decimal number has 8 significant digits" % " ".join(args[:1]),
          "\n".join(bad[:12]) + "\n" + text)

# the fixed formats that --digits now reaches, seen at 8 digits (each had its own precision)
def has8(pattern, text):
    """Does `pattern` (its group 1 a number) match somewhere with 8 significant digits?"""
    return any(sig_digits(m.group(1).lstrip("+-")) == 8 for m in re.finditer(pattern, text))


rc, out, _ = run(["solve", c, "--digits", "8"])
t = out.decode()
check(has8(r"\(([-+]?[\d.]+)%\)", t), "solve: a port's sag in % with 8 digits", t)
check(has8(r"([-+][\d.]+) LSB", t), "solve: the ADC's error in LSB with 8 digits", t)
check(has8(r"([\d.]+) degC", t), "solve: the thermistor's body temperature with 8 digits", t)
check(has8(r"([\d.]+) K\b", t), "solve: the thermistor's self-heating with 8 digits", t)
rc, out, _ = run(["thevenin", c, "mid", "--meter", "1M", "--digits", "8"])
check(has8(r", ([-+]?[\d.]+)%\)", out.decode()), "thevenin: the meter's error in % with 8 digits", out.decode())
rc, out, _ = run(["tol", c, "mid", "--trials", "300", "--digits", "8", "--quiet"])
check(has8(r"\(([-+][\d.]+)% \.\.", out.decode()), "tol: the worst case in % with 8 digits", out.decode())
rc, out, _ = run(["sag", c, "pin", "--digits", "8"])
check(has8(r"\(([\d.]+)% of alone\)", out.decode()), "sag: the sag in % of alone with 8 digits", out.decode())
rc, out, _ = run(["chain", c, "--digits", "8"])
check(has8(r"zout \S+ ([\d.]+) ", out.decode()), "chain: the fix's zout with 8 digits", out.decode())

# the default text keeps each number's own precision (the golden outputs rely on it)
rc, out, _ = run(["solve", c])
t = out.decode()
check(re.search(r"\(\d\.\d\d%\)", t) is not None, "solve default: a port's sag in % at 3 digits", t)
check(re.search(r"[-+]\d\d\.\d LSB", t) is not None, "solve default: the ADC's error at 3 digits", t)
rc, out, _ = run(["tol", c, "mid", "--trials", "300", "--quiet"])
check(re.search(r"Yield \d+\.\d\d%", out.decode()) is not None, "tol default: the yield with two decimals",
      out.decode())
rc, out, _ = run(["pick", "ratio", "0.3141"])
check(re.search(r" 0\.\d{6} ", out.decode()) is not None, "pick default: the ratio with six decimals", out.decode())

report()
