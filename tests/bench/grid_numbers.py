#!/usr/bin/python3
"""Every number of a large report against Python's repr of the same double.

The report phase of a grid writes millions of numbers through the shortest
round-trip conversion (src/base/numfmt.cc).  This check reads the JSON report
of a grid (gen.py grid N, a 100 x 100 mesh by default: some 70 000 numbers)
and compares each number's text, byte for byte, with the text Python's repr
gives for the double it stands for, laid out as the machine formats write
numbers (docs/cli.md: plain digits from 1e-6 up to 1e21, an exponent with its
sign outside, no trailing ".0", negative zero as 0).

Outside references:
  - Python's repr of a float: the shortest decimal that reads back to the same
    double, the nearest such when there are several (Python documentation,
    "Floating Point Arithmetic: Issues and Limitations"; David Gay's
    correctly rounded conversions);
  - the doubles themselves from the library through its Python binding
    (python/loadstack, ctypes): each node voltage and part current, voltage
    and power of the report is compared with the double the library holds,
    bit for bit, so a text that is short but reads back to another double
    fails too;
  - Python's json module (RFC 8259) reads the report.
The report is also written with LOADSTACK_AHEAD=0 (every number formatted in
place, no helper thread: src/report/numahead.c) and must be the same bytes.

Usage: grid_numbers.py LOADSTACK LIBRARY [N]

LIBRARY "-" leaves out the comparison with the library's doubles: a library
built with AddressSanitizer cannot be loaded into python3, so the sanitizer
build checks the texts, their shortness and the helper thread only.
"""
import json
import os
import struct
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))


def ecma(v):
    """repr(v) laid out as the machine formats write numbers."""
    if v == 0:
        return "0"
    r = repr(v)
    sign = "-" if r.startswith("-") else ""
    r = r.lstrip("-")
    mant, _, exp = r.partition("e")
    e = int(exp) if exp else 0
    ip, _, fp = mant.partition(".")
    if fp == "0":
        fp = ""
    digits = (ip + fp).lstrip("0")
    # position of the decimal point relative to the first significant digit
    point = len(ip) + e if ip != "0" else e - (len(fp) - len(fp.lstrip("0")))
    digits = digits.rstrip("0") or "0"
    k, n = len(digits), point
    if -6 < n <= 21:
        if n >= k:
            text = digits + "0" * (n - k)
        elif n > 0:
            text = digits[:n] + "." + digits[n:]
        else:
            text = "0." + "0" * (-n) + digits
    else:
        text = digits[0] + ("." + digits[1:] if k > 1 else "") + "e" + ("-" if n - 1 < 0 else "+") + str(abs(n - 1))
    return sign + text


def bits(x):
    return struct.pack("<d", x)


def main():
    if len(sys.argv) < 3:
        print(__doc__)
        return 2
    exe = os.path.abspath(sys.argv[1])
    lib = None if sys.argv[2] == "-" else os.path.abspath(sys.argv[2])
    n = int(sys.argv[3]) if len(sys.argv) > 3 else 100
    fails, checked = [], 0
    # the layout function against known texts (docs/cli.md's examples)
    for v, t in [(0.1, "0.1"), (1e-6, "0.000001"), (1e-7, "1e-7"), (1.5e21, "1.5e+21"), (-0.0, "0"),
                 (411023691723370140000.0, "411023691723370140000"), (12345.0, "12345"), (5e-324, "5e-324"),
                 (1.7976931348623157e308, "1.7976931348623157e+308"), (0.000001234, "0.000001234")]:
        if ecma(v) != t:
            fails.append(f"layout of {v!r}: {ecma(v)!r}, want {t!r}")
    with tempfile.TemporaryDirectory() as tmp:
        stack = os.path.join(tmp, "grid.stack")
        subprocess.run([sys.executable, os.path.join(HERE, "gen.py"), "grid", str(n), "--out", stack], check=True)
        p = subprocess.run([exe, "solve", stack, "--format", "json"], capture_output=True, timeout=300)
        if p.returncode != 0:
            print(f"FAIL: solve exited {p.returncode}: {p.stderr.decode(errors='replace')[:300]}")
            return 1
        # the same report with every number formatted in place (no helper thread)
        q = subprocess.run([exe, "solve", stack, "--format", "json"], capture_output=True, timeout=300,
                           env=dict(os.environ, LOADSTACK_AHEAD="0"))
        if q.returncode != 0 or q.stdout != p.stdout:
            fails.append("the report with numbers formatted ahead differs from the one formatted in place")
        texts = []

        def num(t):
            texts.append(t)
            return float(t)

        rep = json.loads(p.stdout.decode("utf-8"), parse_float=num, parse_int=num)
        for t in texts:
            checked += 1
            want = ecma(float(t))
            if t != want:
                fails.append(f"{t!r}: repr's text is {want!r}")
        if lib is None:
            same = differ = None
        else:
            same, differ = library_doubles(lib, stack, rep, n, fails)
    for f in fails[:20]:
        print("FAIL:", f)
    print(f"{checked} numbers of the {n}x{n} grid's report each repr's text; " +
          ("the library's doubles not compared (LIBRARY -)" if same is None else
           f"{same} node and part values equal the library's doubles bit for bit, {differ} not"))
    return 1 if fails else 0


def library_doubles(lib, stack, rep, n, fails):
    """Each node and part value of the report against the double the library holds."""
    sys.path.insert(0, os.path.join(HERE, "..", "..", "python"))
    os.environ["LOADSTACK_LIBRARY"] = lib
    import loadstack
    with loadstack.Circuit.from_file(stack) as c:
        op = c.solve()
    tally = [0, 0]   # equal, not

    def compare(what, v, lv):
        if bits(float(v)) == bits(lv) or (v == 0 and lv == 0):
            tally[0] += 1
            return
        tally[1] += 1
        if tally[1] <= 5:
            fails.append(f"{what}: report {v!r}, library {lv!r}")

    for name, v in rep["nodes"].items():
        compare(f"node {name}", v, op.nodes[name])
    for name, pr in rep["parts"].items():
        for f in ("current", "voltage", "power"):
            compare(f"part {name}.{f}", pr[f], getattr(op.parts[name], f))
    same, differ = tally
    if same < 4 * n * n:
        fails.append(f"only {same} values compared with the library")
    return same, differ


if __name__ == "__main__":
    sys.exit(main())
