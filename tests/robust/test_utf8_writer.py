#!/usr/bin/python3
"""The report writer never emits invalid UTF-8.

Reference: CPython's UTF-8 decoder with errors="replace" (Debian's python3),
which replaces each maximal ill-formed subpart with U+FFFD as the Unicode
Standard (section 3.9, "U+FFFD Substitution of Maximal Subparts") recommends;
well-formedness as in RFC 3629.  The filter under test (tests/robust/u8_filter,
built on src/output.c) must give exactly data.decode("utf-8", "replace")
re-encoded, for random byte strings rich in broken sequences, split across
writes at random places.  Then the program end to end: a circuit whose title
holds invalid bytes (if the front end lets them through) gives a report that
decodes as strict UTF-8 in every format.
"""
import os
import random
import subprocess
import sys
import tempfile

FILTER, LOADSTACK = sys.argv[1], os.environ.get("LOADSTACK")
failures = []
rng = random.Random(21)
pieces = [b"a", b"\xc3\xa9", b"\xe2\x82\xac", b"\xf0\x9f\x98\x80", b"\x80", b"\xbf", b"\xc0\xaf", b"\xc1",
          b"\xe0\x80\x80", b"\xed\xa0\x80", b"\xed\x9f\xbf", b"\xf4\x90\x80\x80", b"\xf5", b"\xff", b"\xfe",
          b"\xe2\x82", b"\xf0\x9f\x98", b"\xf0", b"\xc3", b"\n", b"\"", b"\\",
          # ASCII runs of 8 bytes and more: the filter skips them a word at a time
          b"0123456789abcdef", b"plain ascii text", b"12345678"]
for case in range(300):
    data = b"".join(rng.choice(pieces) for _ in range(rng.randrange(0, 60)))
    if case % 3 == 0:
        data = bytes(rng.randrange(256) for _ in range(rng.randrange(0, 80)))
    want = data.decode("utf-8", "replace").encode("utf-8")
    p = subprocess.run([FILTER, str(case + 1)], input=data, capture_output=True, timeout=30)
    if p.returncode != 0 or p.stdout != want:
        failures.append(f"case {case}: {data!r} -> {p.stdout!r}, expected {want!r}")
        if len(failures) > 5:
            break

if LOADSTACK:
    d = tempfile.mkdtemp(prefix="ls_utf8_")
    path = os.path.join(d, "t.stack")
    with open(path, "wb") as f:
        f.write(b'title "soil probe \xb0C \xff\xfe \xed\xa0\x80"\nground gnd\n'
                b'voltage v1 gnd -> a 1 V\nresistor r1 a -> gnd 1k\n')
    for fmt in ("text", "json", "csv"):
        p = subprocess.run([LOADSTACK, "solve", path, "--format", fmt], capture_output=True, timeout=60)
        if p.returncode == 2:
            continue  # the front end refuses bytes that are not UTF-8: nothing reaches the writer
        try:
            p.stdout.decode("utf-8", "strict")
        except UnicodeDecodeError as e:
            failures.append(f"solve --format {fmt}: the report is not UTF-8: {e}")
if LOADSTACK:
    # The front end's check of the circuit file: one error a line, at the
    # first byte that does not start a well-formed sequence (the start of the
    # error CPython's strict decoder reports for that line), wherever it lies
    # within or after runs of ASCII (the check skips ASCII eight bytes a step).
    d = tempfile.mkdtemp(prefix="ls_utf8_src_")
    path = os.path.join(d, "t.stack")
    for case in range(40):
        lines, want = [], []
        for ln in range(1, rng.randrange(2, 7)):
            body = b"".join(rng.choice(pieces) for _ in range(rng.randrange(0, 12))).replace(b"\n", b" ")
            text = b"# " + body
            lines.append(text)
            try:
                text.decode("utf-8", "strict")
            except UnicodeDecodeError as e:
                want.append((ln, text[: e.start].decode("utf-8").__len__() + 1))
        with open(path, "wb") as f:
            f.write(b"\n".join(lines) + b"\nground g\nvoltage v1 g -> a 1 V\nresistor r1 a -> g 1k\n")
        p = subprocess.run([LOADSTACK, "solve", path], capture_output=True, timeout=60)
        got = []
        for line in p.stderr.decode("utf-8", "replace").splitlines():
            if "is not UTF-8" in line:
                parts = line.split(":")
                got.append((int(parts[1]), int(parts[2])))
        if got != want or (p.returncode == 2) != bool(want):
            failures.append(f"source case {case}: errors at {got} (exit {p.returncode}), expected {want}")
            if len(failures) > 5:
                break

for f in failures:
    print("FAIL:", f)
print(f"{len(failures)} failures" if failures else "the writer gave well-formed UTF-8 in every case")
sys.exit(1 if failures else 0)
