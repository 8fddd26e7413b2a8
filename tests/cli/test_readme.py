#!/usr/bin/python3
"""The README's quick start (issue 14: "the first command works on a fresh
Debian machine as root and as a user ... mentions meson install"; exactly two
commands: one installs, builds and runs the demo, one runs the tests).

The first command is run for real by bash with stand-ins for apt-get, meson,
ninja and the program on PATH, twice: once with no `sudo` anywhere (a root
shell in a container) and once with a `sudo` that records that it was used
(a user).  Both must run every step; the package list must hold every Debian
package that CI installs for the build and the tests (.ci/run).
"""
import os
import re
import stat
import subprocess
import sys
import tempfile

from clitest import check, report

root = os.environ.get("SOURCE_ROOT") or os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
readme = open(os.path.join(root, "README.md"), encoding="utf-8").read()
m = re.search(r"## Quick start[^\n]*\n+```sh\n(.*?)```", readme, re.S)
cmds = [l for l in (m.group(1).splitlines() if m else []) if l.strip() and not l.strip().startswith("#")]
check(len(cmds) == 2, "the quick start is exactly two commands", str(cmds))
check("meson install" in readme, "the README mentions meson install")
first = cmds[0] if cmds else ""
check(len(cmds) > 1 and cmds[1].strip() == "meson test -C build", "the second command runs the tests", str(cmds))
check(not re.search(r"(^|&&|;)\s*sudo\s", first), "no bare 'sudo' that would fail where sudo does not exist", first)

STUBS = {
    # each stand-in appends its name and arguments to $LOG
    "apt-get": 'echo "apt-get $*" >>"$LOG"',
    "meson": 'echo "meson $*" >>"$LOG"',
    "ninja": 'echo "ninja $*" >>"$LOG"; mkdir -p build/src; printf \'#!/bin/sh\\necho "demo $*" >>"$LOG"\\n\' >build/src/loadstack; chmod +x build/src/loadstack',
    "sudo": 'echo "sudo $1" >>"$LOG"; "$@"',
}


def run_first(with_sudo):
    work = tempfile.mkdtemp(prefix="ls_readme_")
    bin_dir = os.path.join(work, "bin")
    os.mkdir(bin_dir)
    for name, body in STUBS.items():
        if name == "sudo" and not with_sudo:
            continue
        path = os.path.join(bin_dir, name)
        with open(path, "w") as f:
            f.write("#!/bin/sh\n" + body + "\n")
        os.chmod(path, stat.S_IRWXU)
    log = os.path.join(work, "log")
    # PATH: the stand-ins, then only the shell's own tools (no real sudo, apt-get, meson)
    tools = os.path.join(work, "tools")
    os.mkdir(tools)
    for t in ("sh", "mkdir", "chmod", "printf", "echo"):
        real = subprocess.run(["bash", "-c", "command -v " + t], capture_output=True, text=True).stdout.strip()
        if real.startswith("/"):
            os.symlink(real, os.path.join(tools, t))
    env = {"PATH": bin_dir + ":" + tools, "LOG": log, "HOME": work}
    p = subprocess.run(["/bin/bash", "-c", first], cwd=work, env=env, capture_output=True, text=True, timeout=60)
    steps = open(log).read().splitlines() if os.path.exists(log) else []
    return p.returncode, steps, p.stderr


for with_sudo in (False, True):
    who = "a user with sudo" if with_sudo else "root without sudo"
    rc, steps, err = run_first(with_sudo)
    names = [s.split()[0] for s in steps]
    check(rc == 0, "the first command succeeds as %s" % who, err + "\n".join(steps))
    check(names.count("apt-get") == 2 and "meson" in names and "ninja" in names and "demo" in names,
          "as %s it updates, installs, sets up, builds and runs the demo" % who, "\n".join(steps))
    check(("sudo" in names) == with_sudo, "as %s sudo is %sused" % (who, "" if with_sudo else "not "),
          "\n".join(steps))

# every package CI installs for the build and tests is in the quick start
ci = open(os.path.join(root, ".ci", "run"), encoding="utf-8").read()
pk = re.search(r"packages=\((.*?)\)", ci, re.S)
ci_pkgs = set(pk.group(1).split()) if pk else set()
# CI's extras: clang for the fuzz session, bash-completion for its test, python3 itself
extras = {"clang", "libclang-rt-14-dev", "bash-completion", "python3"}
inst = re.search(r"apt-get install -y ([^&]*)", first)
readme_pkgs = set(inst.group(1).split()) if inst else set()
missing = sorted(ci_pkgs - extras - readme_pkgs)
check(ci_pkgs and not missing, "the quick start installs every package CI needs for build and tests", str(missing))
report()
