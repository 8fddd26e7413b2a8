#!/usr/bin/python3
"""Random garbage never crashes or hangs the program.

Usage: garbage.py LOADSTACK

Deterministic inputs (a fixed seed, so a failure can be rerun): random byte
strings, soups of the language's own tokens, and random edits of a valid
circuit.  Each goes through `loadstack check FILE`, the soups and edits also
through `loadstack solve FILE --format json`, and the edits that still solve
through sag, thevenin, influence, tol and sweep as well, each under a timeout.  Passing
means: the program ends by itself, with an exit code of the CLI contract (0..3,
shared/spec/cli.md), never by a signal and with no sanitizer report; an exit of
2 or 3 comes with an "error:" message; and an exit of 0 from `--format json`
prints one strictly valid JSON document (RFC 8259: no NaN or Infinity).
"""
import json
import os
import random
import subprocess
import sys
import tempfile

SEED = 20261201
TIMEOUT_S = 20

TOKENS = ["resistor", "voltage", "current", "port", "vcvs", "vccs", "cccs", "ccvs", "opamp",
          "title", "let", "ground", "include", "block", "end", "use", "expect", "rule", "ratio",
          "within", "between", "and", "gnd", "ground", "a", "b", "vcc", "out", "x.y", "d1.mid",
          "->", "..", "||", "+", "-", "*", "/", "^", "(", ")", ",", "=", "<", "<=", ">", ">=",
          "1", "0", "-1", "4k7", "0R47", "47R", "2M2", "1e999", "1e-320", "1e308", ".5", "5",
          "V", "mV", "A", "uA", "µA", "ohm", "kΩ", "W", "S", "%", "ppm", "k", "K",
          "tol=", "rating=", "rint=", "rbulk=", "isat=", "ideality=", "celsius=", "gain=", "gm=", "rm=", "via=", "cplus=", "cminus=",
          "plus=", "minus=", "out=", "rin=", "rout=", "mode=", "current", "voltage",
          "sqrt(", "ln(", "exp(", "min(", "max(", "abs(", "log10(",
          "\"str\"", "\"", "#", "\\", "\t", "\r", "\x00", "\xff", "é", ".open", ".zout", ".ratio"]
SEPS = [" ", " ", " ", "", "\n", "\\\n", "  "]

VALID = """title "Rain-gauge sender"
let vref = 3.3 V
ground gnd
voltage vs gnd -> vcc vref rint=1
resistor r1 vcc -> mid 10k tol=1%
resistor r2 mid -> gnd 4k7
port p mid -> buf
opamp u plus=buf minus=o out=o
resistor rl o -> gnd 10k
block div top mid bottom rt=10k rb=10k
  resistor up top -> mid rt
  resistor lo mid -> bottom rb
  expect mid < top
end
use div d1 top=o mid=adc bottom=gnd
cccs f gnd -> z gain=2 via=rl
resistor rz z -> gnd 1k
expect adc = 0.5 V within 50%
expect p.ratio >= 10
rule ratio >= 10
"""


def soups(rng, n):
    for _ in range(n):
        k = rng.randint(1, 60)
        yield "".join(rng.choice(TOKENS) + rng.choice(SEPS) for _ in range(k)).encode("utf-8", "surrogatepass")


def edits(rng, n):
    base = VALID.encode()
    for _ in range(n):
        b = bytearray(base)
        for _ in range(rng.randint(1, 3)):
            op = rng.randrange(4)
            i = rng.randrange(len(b) + 1)
            lines = bytes(b).split(b"\n")
            if op == 0 and len(b) > 1:      # delete a few bytes
                del b[i % len(b):i % len(b) + rng.randint(1, 3)]
            elif op == 1:                   # insert a token between words
                b[i:i] = b" " + rng.choice(TOKENS).encode() + b" "
            elif op == 2:                   # repeat a line elsewhere
                k = rng.randrange(len(lines))
                lines.insert(rng.randrange(len(lines) + 1), lines[k])
                b = bytearray(b"\n".join(lines))
            else:                           # drop a line
                del lines[rng.randrange(len(lines))]
                b = bytearray(b"\n".join(lines))
        yield bytes(b)


def run(args):
    try:
        p = subprocess.run(args, stdin=subprocess.DEVNULL, capture_output=True, timeout=TIMEOUT_S)
    except subprocess.TimeoutExpired:
        return None, "hang: no exit within %d s" % TIMEOUT_S
    err = p.stderr.decode("utf-8", "replace")
    if p.returncode < 0:
        return p, "killed by signal %d" % -p.returncode
    if p.returncode not in (0, 1, 2, 3):
        return p, "exit code %d is not one of 0..3" % p.returncode
    if "runtime error:" in err or "Sanitizer" in err:
        return p, "sanitizer report: " + err[:1500]
    if p.returncode in (2, 3) and "error:" not in err:
        return p, "exit %d without an error message" % p.returncode
    return p, None


def strict_json(text):
    def no_constant(c):
        raise ValueError("non-standard JSON constant " + c)
    json.loads(text, parse_constant=no_constant)


def main():
    exe = os.path.abspath(sys.argv[1])
    rng = random.Random(SEED)
    inputs = [("bytes", bytes(rng.randrange(256) for _ in range(rng.randint(0, 400)))) for _ in range(150)]
    inputs += [("soup", s) for s in soups(rng, 150)]
    inputs += [("edit", s) for s in edits(rng, 100)]
    failed = 0
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "garbage.stack")
        for i, (kind, data) in enumerate(inputs):
            with open(path, "wb") as f:
                f.write(data)
            why = run([exe, "check", path])[1]
            if not why and kind != "bytes":
                p, why = run([exe, "solve", path, "--format", "json"])
                if not why and p.returncode == 0:
                    try:
                        strict_json(p.stdout.decode("utf-8"))
                    except ValueError as e:
                        why = "invalid JSON on stdout: %s" % e
            if not why and kind == "edit" and p.returncode == 0:
                # a circuit that solves: every other analysis must end cleanly on it too
                for args in (["sag", path, "mid"], ["thevenin", path, "mid", "--load", "1k"],
                             ["influence", path, "mid"], ["tol", path, "mid", "--trials", "50"],
                             ["sweep", path, "vref", "1", "5", "mid", "--steps", "5"]):
                    why = run([exe] + args)[1]
                    if why:
                        why = "%s: %s" % (args[0], why)
                        break
            if why:
                failed += 1
                keep = os.path.join(os.getcwd(), "garbage-failure-%d.stack" % i)
                with open(keep, "wb") as f:
                    f.write(data)
                print("FAIL input %d (%s, kept as %s): %s" % (i, kind, keep, why))
    print("%d inputs (seed %d), %d failed" % (len(inputs), SEED, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
