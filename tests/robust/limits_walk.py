#!/usr/bin/python3
"""Walk docs/limits.md and hit each limit exactly at its bound and one past it.

Every row of the limits tables that gives a number is found here by the start
of its first cell; the number is read from the document, the inputs are built
from that number at test time, and:
  - at the bound the input is accepted (no error about that limit);
  - one past the bound the program ends with exit 2 (3 for the solver limits)
    and the message the document quotes for that row.
So the document and the code cannot drift apart.  A numeric row with no
generator here fails the test unless it is in SKIP with the reason (inputs
that take gigabytes cannot be made "fast"; tests/robust/oom_prlimit.py covers
the large circuit).  The expected behaviour is the project's own contract
(docs/limits.md), not an outside source.
"""
import json
import os
import re
import subprocess
import sys
import tempfile

LOADSTACK = os.environ.get("LOADSTACK") or sys.argv[1]
ROOT = os.environ.get("SOURCE_ROOT") or os.path.join(os.path.dirname(__file__), "..", "..")
LET = "let"  # the top-level value statement (spec version 2)
TMP = tempfile.mkdtemp(prefix="ls_limits_")
failures = []


def fail(msg):
    failures.append(msg)
    print("FAIL:", msg[:600])


def put(name, text):
    p = os.path.join(TMP, name)
    with open(p, "w", encoding="utf-8") as f:
        f.write(text)
    return p


def run(args):
    p = subprocess.run([LOADSTACK] + args, capture_output=True, text=True, timeout=120, cwd=TMP)
    return p.returncode, p.stdout, p.stderr


BASE = "ground gnd\nvoltage v1 gnd -> a 1 V\nresistor r1 a -> gnd 1k\n"


# ---- generators: N -> (args, files) for a circuit that sits at N -----------------------------------

def g_line(n):
    return ["check", put("c.stack", BASE + "#" + "x" * (n - 1) + "\n")]


def g_name(n):
    return ["check", put("c.stack", BASE + "resistor " + "r" * n + " a -> gnd 2k\n")]


def g_digits(n):
    return ["check", put("c.stack", BASE + f"{LET} k = 0." + "0" * (n - 3) + "1\n")]


def g_options(n):
    params = " ".join(f"k{i}=1" for i in range(n))
    return ["check", put("c.stack", BASE + f"block b x {params}\n  resistor r x -> gnd 1k\nend\n")]


def g_use_options(n):
    pins = min(n, 256)
    nparams = n - pins
    body = "".join(f"  resistor r{i} p{i} -> p0 1k\n" for i in range(1, 256))
    block = "block big " + " ".join(f"p{i}" for i in range(256)) + " " + \
        " ".join(f"k{i}=1" for i in range(64)) + "\n" + body + "end\n"
    conns = [f"p{i}=n{i}" for i in range(pins)] + [f"k{i}=2" for i in range(nparams)]
    return ["check", put("c.stack", BASE + block + "use big u1 " + " ".join(conns) + "\nresistor rg n0 -> gnd 1k\n")]


def g_pins(n):
    body = "".join(f"  resistor r{i} p{i} -> p0 1k\n" for i in range(1, n))
    return ["check", put("c.stack", BASE + "block big " + " ".join(f"p{i}" for i in range(n)) + "\n" + body + "end\n")]


def g_args(n):
    return ["check", put("c.stack", BASE + f"{LET} k = max(" + ", ".join(str(i) for i in range(n)) + ")\n")]


def g_errors(n):
    return ["check", put("c.stack", BASE + "".join(f"resistor rb{i} a -> gnd 5 V\n" for i in range(n)))]


def g_sets(n):
    text = BASE + "".join(f"{LET} k{i} = 1\n" for i in range(n))
    args = ["check", put("c.stack", text)]
    for i in range(n):
        args += ["--set", f"k{i % 256}=2"]
    return args


def g_include_depth(n):
    # main includes i1, i1 includes i2, ... : n nested includes
    for k in range(1, n + 1):
        put(f"i{k}.stack", f'include "i{k + 1}.stack"\n' if k < n else "# the deepest file\n")
    return ["check", put("c.stack", BASE + 'include "i1.stack"\n')]


def g_block_depth(n):
    # the top level uses b1, b1 uses b2, ... : n levels of blocks
    text = BASE
    for k in range(1, n + 1):
        inner = f"  use b{k + 1} u x=x\n" if k < n else "  resistor r x -> gnd 1k\n"
        text += f"block b{k} x\n{inner}end\n"
    return ["check", put("c.stack", text + "use b1 top x=a\n")]


def g_instances(n):
    # 1000 uses of a block `mid`, each holding (n/1000 - 1) empty-ish leaves:
    # n instances in all without parts to slow it down
    per = 1000
    leaves = n // per - 1
    extra = n - per * (leaves + 1)
    text = BASE + "block leaf x\nend\nblock mid x\n" + "".join(f"  use leaf l{i} x=x\n" for i in range(leaves)) + "end\n"
    text += "".join(f"use mid m{i} x=a\n" for i in range(per))
    text += "".join(f"use leaf e{i} x=a\n" for i in range(extra))
    return ["check", put("c.stack", text)]


def g_expr_depth(n):
    # each operator of a chain is one level: a sum of t terms is t-1 levels
    # deeper than its first term, which itself sits at depth 2 (the sum and
    # its sign); so n levels is a sum of n - 1 terms
    return ["check", put("c.stack", BASE + f"{LET} k = " + " + ".join(["1"] * (n - 1)) + "\n")]


def g_via_chain(n):
    # n links: n + 1 sources, each controlled by the one before
    lines = [BASE, "resistor r0 a -> gnd 1k\n"]
    for k in range(1, n + 2):
        via = "r0" if k == 1 else f"f{k - 1}"
        lines.append(f"cccs f{k} gnd -> n{k} gain=1 via={via}\nresistor rn{k} n{k} -> gnd 1k\n")
    return ["check", put("c.stack", "".join(lines))]


def ladder(unknowns):
    # v1 adds 2 unknowns (node a, its branch current); each section one node
    nodes = unknowns - 1   # n0 .. n(nodes-1), plus v1's branch current
    lines = ["ground gnd", "voltage v1 gnd -> n0 1 V"]
    for k in range(1, nodes):
        lines.append(f"resistor rs{k} n{k - 1} -> n{k} 1k")
        lines.append(f"resistor rp{k} n{k} -> gnd 10k")
    return put("c.stack", "\n".join(lines) + "\n")


def g_auto_dense(n):
    return ["solve", ladder(n), "--format", "json"]


def g_dense(n):
    return ["solve", ladder(n), "--solver", "dense", "--format", "json"]


def g_parts(n):
    # one block of 1000 resistors used n/1000 times: refused before expansion
    per = 1000
    uses = n // per
    text = BASE + "block blk x\n" + "".join(f"  resistor r{i} x -> gnd 1k\n" for i in range(per)) + "end\n"
    text += f"block many x\n" + "".join(f"  use blk u{i} x=x\n" for i in range(uses)) + "end\nuse many top x=a\n"
    return ["check", put("c.stack", text)]


def g_free(n):
    # n resistors in parallel from the source, each free over one decade
    text = BASE + "".join(f"resistor f{i} a -> gnd 100k free=10k..100k\n" for i in range(n))
    return ["fit", put("c.stack", text), "--quiet"]


def method_of(out):
    try:
        return json.loads(out)["solver"]["method"]
    except Exception:
        return None


# limit row start -> (generator, check at bound, check past bound); a check
# takes (n, rc, out, err, message) and returns an error text or None.
def accepted(n, rc, out, err, msg):
    return None if rc in (0, 1) and "error" not in err else f"exit {rc}, stderr: {err[-300:]}"


def refused(code):
    def check(n, rc, out, err, msg):
        return None if rc == code and msg in err else f"exit {rc} (expected {code} and '{msg}'), stderr: {err[-300:]}"
    return check


def errors_at(n, rc, out, err, msg):
    k = err.count(": error:")
    return None if k == n and "more errors not shown" not in err else f"{k} errors shown at the bound: {err[-200:]}"


def errors_past(n, rc, out, err, msg):
    k = err.count(": error:")
    return None if k == n - 1 and "1 more errors not shown" in err else f"{k} errors shown past the bound"


def dense_at(n, rc, out, err, msg):
    return None if rc == 0 and method_of(out) == "dense-lu" else f"exit {rc}, method {method_of(out)}"


def sparse_past(n, rc, out, err, msg):
    return None if rc == 0 and (method_of(out) or "").startswith("sparse") else f"exit {rc}, method {method_of(out)}"


HANDLERS = {
    "length of one line": (g_line, accepted, refused(2)),
    "length of a name": (g_name, accepted, refused(2)),
    "digits in one number": (g_digits, accepted, refused(2)),
    "options on one statement": (g_options, accepted, refused(2)),
    "options on one `use`": (g_use_options, accepted, refused(2)),
    "pins of one block": (g_pins, accepted, refused(2)),
    "arguments of one function call": (g_args, accepted, refused(2)),
    "errors printed in one run": (g_errors, errors_at, errors_past),
    "`--set` options on one command line": (g_sets, accepted, refused(2)),
    "include depth": (g_include_depth, accepted, refused(2)),
    "block nesting": (g_block_depth, accepted, refused(2)),
    "block instances in the whole circuit": (g_instances, accepted, refused(2)),
    "expression depth": (g_expr_depth, accepted, refused(2)),
    "chain of current-controlled sources": (g_via_chain, accepted, refused(2)),
    "unknowns for the automatic choice": (g_auto_dense, dense_at, sparse_past),
    "unknowns for the dense LAPACK solver": (g_dense, None, refused(3)),
    "parts after expansion": (g_parts, None, refused(2)),
    "free parts in one fit": (g_free, accepted, refused(2)),
}
# Rows checked only past the bound, or not here, and why.
SKIP_AT = {
    "unknowns for the dense LAPACK solver": "an 8000-unknown dense LU takes 512 MB and minutes on a shared machine",
    "parts after expansion": "50 million parts take gigabytes; tests/robust/oom_prlimit.py and tests/mpi/oom_rank.py run large circuits",
}
SKIP = {
    "size of one circuit file": "checked past the bound with a sparse file below; at the bound it is a 1 GiB read",
    "nodes after expansion": "50 million nodes take gigabytes of memory (one past needs even more)",
    "reciprocal condition number": "a warning threshold, not a bound on the input (tests/real, tests/ref)",
    "relative residual of the solution": "a warning threshold, not a bound on the input",
    # the formula command's limits (added with it): not walked here yet
    "symbols kept in a formula": "formula limit: not yet walked at and past its bound here",
    "unknowns of the MNA system": "formula limit: not yet walked at and past its bound here",
    "terms of any polynomial during the elimination": "formula limit: not yet walked at and past its bound here",
    "work (term products) over the whole computation": "formula limit: not yet walked at and past its bound here",
    "combinations tried one by one": "not a bound on the input: the search changes method (tests/fit walks both)",
    "candidate solves of the descent": "not a bound on the input: a budget of the search",
    "candidate solves of branch and bound": "a budget of the search; tests/fit/test_fit_bb.py checks the cap's "
                                            "report and --max-solves 0",
    "active parts of a box bounded at its corners": "not a bound on the input: a wider box is split without a bound",
}


def rows():
    """(first cell, value cell, message) of every row of a 'limit | value' table."""
    out, in_table = [], False
    with open(os.path.join(ROOT, "docs", "limits.md"), encoding="utf-8") as f:
        for line in f:
            if line.startswith("| limit | value"):
                in_table = True
                continue
            if not line.startswith("|"):
                in_table = False
                continue
            if in_table and not line.startswith("| ---"):
                cells = [c.strip() for c in re.split(r"(?<!\\)\|", line.strip())[1:-1]]
                out.append(cells)
    return out


def expected_message(cell, n):
    m = re.findall(r"`([^`]*)`", cell)
    if not m:
        return None
    # the quoted message up to its first variable part
    text = m[0]
    for var in ("N", "M", "...", "'FILE'", "'a'", "(a <- b <- a)"):
        i = text.find(var)
        if i > 0 and not text[i - 1].isalnum():
            text = text[:i]
    return text.strip()


def main():
    seen = set()
    for cells in rows():
        first, value, what = cells[0], cells[1], cells[2] if len(cells) > 2 else ""
        num = re.match(r"^(\d+)", value.replace(",", ""))
        key = next((k for k in HANDLERS if first.startswith(k)), None) or \
            next((k for k in SKIP if first.startswith(k)), None)
        if not num:
            continue
        n = int(num.group(1))
        if key is None:
            fail(f"docs/limits.md row '{first}' ({n}) has no check here")
            continue
        seen.add(key)
        if key in SKIP:
            print(f"skip: {first}: {SKIP[key]}")
            continue
        gen, at, past = HANDLERS[key]
        msg = expected_message(what, n) or ""
        if key == "unknowns for the dense LAPACK solver":  # its first quote is the option
            msg = "unknowns; the dense solver would need"
        if at is None:
            print(f"skip at the bound: {first}: {SKIP_AT[key]}")
        else:
            rc, out, err = run(gen(n))
            e = at(n, rc, out, err, msg)
            if e:
                fail(f"{first}: at the bound {n}: {e}")
        rc, out, err = run(gen(n + 1))
        e = past(n + 1, rc, out, err, msg)
        if e:
            fail(f"{first}: one past the bound ({n + 1}): {e}")
        print(f"ok: {first} = {n}")
    for k in HANDLERS:
        if k not in seen:
            fail(f"the row '{k}' is no longer in docs/limits.md (update this test)")
    # the file size, past the bound: a sparse file of exactly 1 GiB
    p = os.path.join(TMP, "huge.stack")
    with open(p, "wb") as f:
        f.truncate(1 << 30)
    rc, _, err = run(["check", p])
    if rc != 2 or "File too large" not in err:
        fail(f"a 1 GiB file: exit {rc}: {err[-300:]}")
    os.unlink(p)
    print(f"{len(failures)} failures" if failures else "every documented limit holds at and past its bound")
    return 1 if failures else 0


sys.exit(main())
