#!/usr/bin/python3
"""Large and deep inputs, generated at test time: each must end by itself, soon,
with the exit code and the first error this file expects.

Usage: pathological.py LOADSTACK

The time limit (120 s per input, where each takes at most a few seconds) is
there to catch a quadratic or exponential step, not to measure speed: the
inputs are big enough that such a step would take many minutes.  Expected
results come from the language's rules (shared/spec/language.md) and the limits
of docs/limits.md.
"""
import os
import subprocess
import sys
import tempfile

TIMEOUT_S = 120


def floating_parts(n):
    """n resistors, none connected to ground: n floating components (exit 3)."""
    return ["ground gnd", "voltage v gnd -> x 1 V", "resistor r x -> gnd 1k"] + \
        ["resistor r%d a%d -> b%d 1k" % (i, i, i) for i in range(n)]


def big_ladder(n):
    """A ladder of n sections (2n resistors): solves (exit 0)."""
    lines = ["ground gnd", "voltage v gnd -> n0 5 V"]
    for i in range(n):
        lines += ["resistor rs%d n%d -> n%d 100" % (i, i, i + 1), "resistor rp%d n%d -> gnd 10k" % (i, i + 1)]
    return lines


def cccs_chain(n, loop):
    """n current-controlled sources each controlled by the previous one; with
    loop, the first is controlled by the last (an error either way past 32)."""
    lines = ["ground gnd", "current i0 gnd -> a 1 mA", "resistor r0 a -> gnd 1k"]
    for k in range(1, n + 1):
        via = ("f%d" % n if loop else "r0") if k == 1 else "f%d" % (k - 1)
        lines += ["cccs f%d gnd -> n%d gain=1 via=%s" % (k, k, via), "resistor rn%d n%d -> gnd 1k" % (k, k)]
    return lines


def parallel_sources(n):
    """n ideal voltage sources all across one node pair: n - 1 loops (exit 3)."""
    return ["ground gnd"] + ["voltage v%d gnd -> a 1 V" % i for i in range(n)] + ["resistor r a -> gnd 1k"]


CASES = [
    # name, lines, exit code, text the first error must contain (None: no error)
    ("100000 floating resistors", floating_parts(100000), 3, "no DC path to ground from nodes 'a0', 'b0'"),
    ("a ladder of 50000 sections", big_ladder(50000), 0, None),
    ("5000 chained cccs", cccs_chain(5000, False), 2, "more than 32 deep from 'f34'"),
    ("a loop of 5000 cccs", cccs_chain(5000, True), 2, "more than 32 deep"),
    ("a loop of 3 cccs", cccs_chain(3, True), 2, "control each other in a loop"),
    ("20000 sources in parallel", parallel_sources(20000), 3, "closes a loop made only of voltage-defined branches"),
    ("10000 nested parentheses", ["ground gnd", "let x = " + "(" * 10000 + "1" + ")" * 10000], 2,
     "expression nested more than 200 deep"),
    ("10000 unary minus signs", ["ground gnd", "let x = " + "-" * 10000 + "1"], 2,
     "expression nested more than 200 deep"),
    ("a sum of 100000 terms (once a stack overflow in the evaluator)",
     ["ground gnd", "let x = " + " + ".join(["1"] * 100000)], 2, "expression nested more than 200 deep"),
    ("a sum of 199 terms", ["ground gnd", "let x = " + " + ".join(["1 V"] * 199),
                            "voltage v gnd -> a x", "resistor r a -> gnd 1k", "expect a = 199 V within 1e-12"], 0, None),
    ("a line of 240000 bytes", ["ground gnd", "let x = " + (" " * 4000 + "+ 1").join(["1"] * 60)], 2,
     "line is longer than 100000 bytes"),
    ("200000 errors", ["ground gnd"] + ["resistor r%d a -> b %d V" % (i, i) for i in range(200000)], 2,
     "resistance expected"),
]


def main():
    exe = os.path.abspath(sys.argv[1])
    failed = 0
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "big.stack")
        for name, lines, code, first in CASES:
            with open(path, "w") as f:
                f.write("\n".join(lines) + "\n")
            try:
                p = subprocess.run([exe, "check", path], capture_output=True, timeout=TIMEOUT_S)
            except subprocess.TimeoutExpired:
                failed += 1
                print("FAIL %s: no exit within %d s" % (name, TIMEOUT_S))
                continue
            err = p.stderr.decode("utf-8", "replace")
            errors = [l for l in err.split("\n") if ": error: " in l]
            why = None
            if p.returncode != code:
                why = "exit %d, expected %d: %s" % (p.returncode, code, err[:300])
            elif "runtime error:" in err or "Sanitizer" in err:
                why = "sanitizer report: " + err[:1500]
            elif first and (not errors or first not in errors[0]):
                why = "first error %r does not say %r" % (errors[0][:200] if errors else None, first)
            elif name.startswith("100000 floating") and (
                    len(errors) < 21 or "from node 'a20' (and the 1 other node joined to it)" not in errors[20]):
                # past the first 20 components the report is short, but still names each one
                why = "error 21 is %r" % (errors[20][:200] if len(errors) > 20 else None)
            if why:
                failed += 1
                print("FAIL %s: %s" % (name, why))
            else:
                print("ok   %s" % name)
    print("%d inputs, %d failed" % (len(CASES), failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
