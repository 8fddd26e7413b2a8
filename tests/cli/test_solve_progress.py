#!/usr/bin/python3
"""Progress of a large single solve on a terminal (cli.md: progress on stderr for
runs longer than about a second when stderr is a terminal, hidden by --quiet;
common practice of command-line tools: nothing on a pipe or in a log).

A grid of one-ohm resistors with 317 x 317 = 100 489 nodes (the size at which the
program announces each phase at once: docs/cli.md) is generated here and solved
three times, with the JSON report going to a file:
  * stdout and stderr on a pseudo-terminal (Python's pty): the line names the
    phases (assembling the equations, factoring, ...) in place ("\\r") and is
    erased at the end; the report file is whole JSON with every node;
  * stderr a pipe: nothing of the kind on it;
  * on the terminal with --quiet: nothing either.
A small circuit on the terminal shows no progress at all (it takes far less than
a second).
"""
import json
import os

from clitest import LOADSTACK, TMP, check, circuit, report
from ptyrun import run_pty

N = 317
lines = ["title \"progress grid\"", "ground g", "voltage vin g -> n0_0 1 V"]
name = lambda i, j: "g" if (i, j) == (N - 1, N - 1) else "n%d_%d" % (i, j)
for i in range(N):
    for j in range(N):
        if j + 1 < N:
            lines.append("resistor rh%d_%d %s -> %s 1" % (i, j, name(i, j), name(i, j + 1)))
        if i + 1 < N:
            lines.append("resistor rv%d_%d %s -> %s 1" % (i, j, name(i, j), name(i + 1, j)))
grid = circuit("grid.stack", "\n".join(lines) + "\n")
out_json = os.path.join(TMP, "grid.json")

rc, tty, _, dt = run_pty([LOADSTACK, "solve", grid, "--format", "json", "--output", out_json], cwd=TMP)
text = tty.decode("utf-8", "replace")
check(rc == 0, "the grid solves (exit 0)", text[-400:])
for phase in ("assembling the equations", "factoring", "solving", "error bounds"):
    check(("loadstack solve: 100489 nodes" in text) and (phase in text),
          "a terminal sees the phase '%s' of a 100 489-node solve (%.1f s)" % (phase, dt), repr(text[-600:]))
check("\r" in text and text.endswith("\r"),
      "the line is rewritten in place and erased at the end", repr(text[-200:]))
with open(out_json) as f:
    rep = json.load(f, parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c)))
check(len(rep["nodes"]) == N * N, "the report file is whole JSON with every node", str(len(rep["nodes"])))

rc, tty, err, _ = run_pty([LOADSTACK, "solve", grid, "--format", "json", "--output", out_json], cwd=TMP,
                          stderr_pipe=True)
err = err.decode("utf-8", "replace")
check(rc == 0 and "\r" not in err and "factoring" not in err and "factoring" not in tty.decode(),
      "no progress when stderr is not a terminal (a pipe)", repr(err[-300:]))

rc, tty, _, _ = run_pty([LOADSTACK, "solve", grid, "--quiet", "--format", "json", "--output", out_json], cwd=TMP)
check(rc == 0 and b"factoring" not in tty and b"\r" not in tty.replace(b"\r\n", b""),
      "--quiet hides the progress line", repr(tty[-300:]))

small = circuit("small.stack", "ground gnd\nvoltage v1 gnd -> a 1 V\nresistor r1 a -> gnd 1k\n")
rc, tty, _, _ = run_pty([LOADSTACK, "solve", small], cwd=TMP)
check(rc == 0 and b"loadstack solve:" not in tty, "a small solve shows no progress", repr(tty[-300:]))
report()
