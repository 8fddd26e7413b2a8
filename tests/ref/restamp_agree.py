#!/usr/bin/python3
"""The in-place restamp (src/mna.c, src/mna/patch.c): against a fresh assembly, and sweeps against numpy.

Usage: restamp_agree.py LOADSTACK_BINARY RESTAMP_CHECK_BINARY [--count 30] [--seed 5]

When part values change but the matrix keeps its pattern, loadstack sums the new
stamps straight into the compressed columns of the last assembly instead of
compressing a fresh set of triplets.  Two checks, on the random well-posed networks
of random_mna.py (resistors, op-amps ideal and finite, voltage sources with and
without rs, current sources, vccs, vcvs, cccs, ccvs):

  1. restamp_check (tests/ref/restamp_check.c) changes the values of each network
     many times, some rounds removing or restoring a controlled source's entries,
     and requires the restamped matrix and right-hand side to equal, bit for bit,
     a fresh assembly through triplets (the general path); rounds that kept the
     pattern must have been done in place, the others must have reassembled.
  1b. restamp_check --patch: one to three parts change per round and only the
     entries they reach are restamped (src/mna/patch.c); again bit for bit
     against a fresh assembly.
  2. `loadstack sweep` of a resistor's value over [R/2, 2R] in 5 points: every
     point after the first restamps the previous point's system.  Each point's
     node voltages and part currents are compared with numpy.linalg.solve of the
     same network with that resistance (random_mna.solve_mna, an independent MNA
     written from shared/spec/language.md, refined in extended precision), to
     |loadstack - numpy| <= 1e-9 |numpy| + 1e-9 (largest value of that kind).

Exit 0 when everything agrees, 1 otherwise (2 on bad usage).
"""

import argparse
import json
import os
import random
import re
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import random_mna as rm  # noqa: E402  (the generator and reference of ref-random-mna)

MAX_Q = 12   # quantities a sweep takes (src/sweep_cmd.c: MAX_QUANTITIES)
STEPS = 5


def well_posed(rng, n_target, index):
    """A network and its reference, regenerated as random_mna.py does."""
    for _ in range(100):
        net = rm.generate(rng, n_target, index)
        nodes, ref, _cond = rm.solve_mna(net)
        if nodes is not None and not rm.too_sensitive(net, nodes, ref):
            if not rm.verify_reference(net, nodes, ref):
                return net
    return None


def swept_text(net, part):
    """The network's text with resistor `part`'s value replaced by the let rsw."""
    lines = net.text.splitlines()
    out = []
    for ln in lines:
        words = ln.split()
        if len(words) >= 5 and words[0] == "resistor" and words[1] == part["name"]:
            ln = "resistor %s %s -> %s rsw" % (part["name"], part["a"], part["b"])
        out.append(ln)
        if words[:1] == ["ground"]:
            out.append("let rsw = %r" % part["r"])
    return "\n".join(out) + "\n"


def check_sweep(binary, net, rng, path):
    """Sweep one resistor of net; return a list of mismatch descriptions."""
    resistors = [p for p in net.parts if p["kind"] == "resistor"]
    part = rng.choice(resistors)
    with open(path, "w", encoding="utf-8") as f:
        f.write(swept_text(net, part))
    nodes = [nd for nd in net.nodes if nd != net.ground]
    others = [p["name"] for p in net.parts if p["kind"] in ("resistor", "voltage", "vcvs", "ccvs")]
    rng.shuffle(nodes)
    rng.shuffle(others)
    qs = nodes[:MAX_Q // 2] + ["%s.current" % nm for nm in others[:MAX_Q - min(len(nodes), MAX_Q // 2)]]
    r0 = part["r"]
    cmd = [binary, "sweep", path, "rsw", repr(r0 / 2), repr(2 * r0)] + qs + \
        ["--steps", str(STEPS), "--format", "json"]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    if proc.returncode != 0:
        return ["sweep exited %d: %s" % (proc.returncode, proc.stderr.strip()[:400])]
    try:
        points = json.loads(proc.stdout)["points"]
    except (ValueError, KeyError, TypeError) as e:
        return ["sweep output is not the expected JSON: %s" % e]
    if len(points) != STEPS:
        return ["sweep gave %d points, expected %d" % (len(points), STEPS)]
    bad = []
    for pt in points:
        x = pt.get("rsw")
        if not isinstance(x, (int, float)):
            bad.append("a point has no rsw value")
            continue
        part["r"] = float(x)
        vref, ref, _cond = rm.solve_mna(net, cond_max=None)
        sc = rm.problem_scales(net, vref, ref)
        for q in qs:
            if q.endswith(".current"):
                want, scale = ref["parts"][q[:-len(".current")]]["current"], sc["current"]
            else:
                want, scale = vref[q], sc["voltage"]
            if not rm.close(pt.get(q), want, scale):
                bad.append("rsw = %r: %s loadstack %r, numpy %r" % (x, q, pt.get(q), want))
    part["r"] = r0
    return bad


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("binary")
    ap.add_argument("checker")
    ap.add_argument("--count", type=int, default=30)
    ap.add_argument("--seed", type=int, default=5)
    args = ap.parse_args()
    for exe in (args.binary, args.checker):
        if not os.access(exe, os.X_OK):
            print("restamp_agree: %s is not an executable" % exe, file=sys.stderr)
            return 2
    rng = random.Random(args.seed)
    tmp = tempfile.mkdtemp(prefix="loadstack_restamp_")
    failures = 0
    try:
        nets, paths = [], []
        for i, n_target in enumerate(rm.sizes(args.count, rng), 1):
            net = well_posed(rng, n_target, i)
            if net is None:
                print("net %3d: could not generate a well-conditioned network" % i)
                failures += 1
                continue
            path = os.path.join(tmp, "net%03d.stack" % i)
            with open(path, "w", encoding="utf-8") as f:
                f.write(net.text)
            nets.append(net)
            paths.append(path)

        # 1. in place against a fresh assembly, bit for bit
        proc = subprocess.run([args.checker, "--rounds", "16", "--seed", str(args.seed)] + paths,
                              capture_output=True, text=True, timeout=240)
        lines = proc.stdout.splitlines()
        in_place = sum(int(re.search(r"(\d+) in place", ln).group(1)) for ln in lines if "in place," in ln)
        reassembled = sum(int(re.search(r"(\d+) reassembled", ln).group(1)) for ln in lines if "reassembled" in ln)
        for ln in lines:
            if "agree" not in ln:
                print(ln)
        if proc.returncode != 0 or len(lines) != len(paths):
            print("restamp_check exited %d: %s" % (proc.returncode, proc.stderr.strip()[:400]))
            failures += 1
        elif in_place == 0 or reassembled == 0:
            print("restamp_check exercised only one path (%d in place, %d reassembled)"
                  % (in_place, reassembled))
            failures += 1
        print("restamp_check: %d networks, %d restamps in place, %d reassembled, all equal to a fresh assembly"
              % (len(paths), in_place, reassembled) if proc.returncode == 0 else
              "restamp_check: FAILED")

        # 1b. only the changed parts restamped (src/mna/patch.c), against a fresh
        # assembly, bit for bit; every round that kept the pattern is patched
        proc = subprocess.run([args.checker, "--patch", "--rounds", "24", "--seed", str(args.seed)] + paths,
                              capture_output=True, text=True, timeout=240)
        lines = proc.stdout.splitlines()
        patched = sum(int(re.search(r"(\d+) patched", ln).group(1)) for ln in lines if "patched" in ln)
        for ln in lines:
            if "agree" not in ln:
                print(ln)
        if proc.returncode != 0 or len(lines) != len(paths) or patched == 0:
            print("restamp_check --patch exited %d (%d patched): %s"
                  % (proc.returncode, patched, proc.stderr.strip()[:400]))
            failures += 1
        else:
            print("restamp_check --patch: %d networks, %d patches, all equal to a fresh assembly"
                  % (len(paths), patched))

        # 2. sweeps (restamped points) against numpy
        for k, net in enumerate(nets):
            bad = check_sweep(args.binary, net, rng, os.path.join(tmp, "sweep%03d.stack" % k))
            status = "ok  " if not bad else "FAIL"
            print("sweep %3d: %s nodes=%3d parts=%3d" % (k + 1, status, len(net.nodes), len(net.parts)))
            for b in bad[:5]:
                print("         " + b)
            failures += bool(bad)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    print("restamp_agree: %d networks, %d failed (seed %d)" % (args.count, failures, args.seed))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
