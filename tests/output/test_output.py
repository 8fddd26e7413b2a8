#!/usr/bin/python3
"""Output safety, end to end through the program (docs/output.md).

Every command that writes a report or a plot must write only regular files,
never the input, an included file or another output of the same run, keep a
replaced file's mode, follow the umask for a new one, leave nothing behind
when interrupted, and leave one whole report when two runs race.

Outside sources for the expected behaviour:
  - POSIX.1-2017, open(): a file created with O_CREAT gets mode & ~umask;
    rename(): atomic replacement of the new name (so a reader and a racing
    writer see one whole file); lstat()/stat(): the file type bits (S_ISCHR,
    S_ISBLK, S_ISFIFO, S_ISSOCK, S_ISDIR, S_ISLNK) and st_dev/st_ino identity.
  - The shell convention (POSIX.1-2017 Shell Command Language, 2.8.2) that a
    command killed by signal N is reported as 128 + N: 130 for SIGINT, 143 for
    SIGTERM; in Python's subprocess a negative return code -N.
Device nodes are private copies made with mknod in a temporary directory
(needs root; skipped otherwise), never the system's own, except /dev/null,
which is only stat'ed before and after a refused run.
"""
import os
import signal
import socket
import stat
import subprocess
import sys
import tempfile
import time

LOADSTACK = os.environ.get("LOADSTACK") or (sys.argv[1] if len(sys.argv) > 1 else None)
if not LOADSTACK:
    sys.exit("LOADSTACK is not set (run under meson test, or pass the binary)")

LET = "let"  # the top-level value statement (spec version 2)
failures = []


def fail(msg):
    failures.append(msg)
    print("FAIL:", msg)


def run(args, cwd, umask=None, timeout=120):
    def pre():
        if umask is not None:
            os.umask(umask)
    p = subprocess.run([LOADSTACK] + args, cwd=cwd, capture_output=True, text=True, timeout=timeout,
                       preexec_fn=pre)
    return p.returncode, p.stdout, p.stderr


def write(path, text):
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)


def read(path):
    with open(path, "rb") as f:
        return f.read()


STAGE = """# a sensor stage kept in its own file
block sensor out
  resistor r_src out -> gnd 10k tol=1%
  current  i_src gnd -> out 100u
end
"""

MAIN = """title "Soil probe into a logger"
include "stage.stack"
{let} level = 2 V
ground gnd
voltage  vref gnd -> top level tol=1%
resistor r_top top -> mid 10k tol=1%
resistor r_bot mid -> gnd 10k tol=1%
use sensor s1 out=probe
resistor r_load probe -> gnd 100k
expect mid between 0.5 V and 1.5 V
""".format(let=LET)


def fresh_dir():
    d = tempfile.mkdtemp(prefix="ls_output_test_")
    write(os.path.join(d, "stage.stack"), STAGE)
    write(os.path.join(d, "main.stack"), MAIN)
    return d


def influence_name(d):
    """The sensitivity command's name on this build (spec v2: influence)."""
    rc, _, _ = run(["influence", "--help"], d)
    return "influence" if rc == 0 else "sens"


def every_command(d):
    """(args without --output/--plot, whether it takes --plot) for every command reading a file."""
    return [
        (["solve", "main.stack"], False),
        (["check", "main.stack"], False),
        (["sag", "main.stack", "mid"], False),
        (["thevenin", "main.stack", "mid"], False),
        ([influence_name(d), "main.stack", "mid"], False),
        (["tol", "main.stack", "mid", "--trials", "20"], True),
        (["sweep", "main.stack", "level", "1", "3", "mid", "--steps", "3"], True),
    ]


def leftovers(d, keep):
    """Files in d other than those in keep (temporary files left behind)."""
    return sorted(set(os.listdir(d)) - set(keep))


# ---- the input, the included file, and each other ---------------------------------------------

def test_protected_files():
    d = fresh_dir()
    main0, stage0 = read(os.path.join(d, "main.stack")), read(os.path.join(d, "stage.stack"))
    for args, plots in every_command(d):
        name = " ".join(args[:1])
        for opt in (["--output"], ["--plot"] if plots else []):
            if not opt:
                continue
            for target, what in (("main.stack", "input circuit"), ("stage.stack", "included circuit file"),
                                 ("./sub/../stage.stack", "included circuit file")):
                os.makedirs(os.path.join(d, "sub"), exist_ok=True)
                rc, out, err = run(args + opt + [target], d)
                if opt == ["--plot"]:
                    # a .stack name is refused for its extension; the same file named .svg below
                    if rc != 2:
                        fail(f"{name} {opt[0]} {target}: exit {rc}, expected 2")
                    continue
                if rc != 2 or what not in err:
                    fail(f"{name} --output {target}: exit {rc}, expected 2 and '{what}' in: {err.strip()}")
    if read(os.path.join(d, "main.stack")) != main0 or read(os.path.join(d, "stage.stack")) != stage0:
        fail("a circuit file was changed by a refused run")
    # A circuit whose file names end in .svg: --plot must refuse them too
    # (before, --plot had no same-file check and overwrote the input).
    write(os.path.join(d, "c.svg"), MAIN.replace('include "stage.stack"', 'include "inc.svg"'))
    write(os.path.join(d, "inc.svg"), STAGE)
    c0, i0 = read(os.path.join(d, "c.svg")), read(os.path.join(d, "inc.svg"))
    for args in (["tol", "c.svg", "mid", "--trials", "20"], ["sweep", "c.svg", "level", "1", "3", "mid", "--steps", "3"]):
        for target, what in (("c.svg", "input circuit"), ("inc.svg", "included circuit file")):
            rc, _, err = run(args + ["--plot", target], d)
            if rc != 2 or what not in err:
                fail(f"{args[0]} --plot {target}: exit {rc}, expected 2 and '{what}': {err.strip()}")
    if read(os.path.join(d, "c.svg")) != c0 or read(os.path.join(d, "inc.svg")) != i0:
        fail("--plot overwrote a circuit file")
    # --plot F --output F: one file cannot be both (before: the report replaced the plot)
    for args in (["tol", "main.stack", "mid", "--trials", "20"], ["sweep", "main.stack", "level", "1", "3", "mid", "--steps", "3"]):
        rc, _, err = run(args + ["--plot", "x.svg", "--output", "x.svg"], d)
        if rc != 2 or "same file" not in err or os.path.exists(os.path.join(d, "x.svg")):
            fail(f"{args[0]} --plot x.svg --output x.svg: exit {rc}: {err.strip()}")
        # the same file through a different spelling of the path
        rc, _, err = run(args + ["--plot", "x.svg", "--output", "sub/../x.svg"], d)
        if rc != 2 or "same file" not in err:
            fail(f"{args[0]} --plot x.svg --output sub/../x.svg: exit {rc}: {err.strip()}")
    # a hard link to the input is the same file (device and inode)
    os.link(os.path.join(d, "main.stack"), os.path.join(d, "alias.txt"))
    rc, _, err = run(["solve", "main.stack", "--output", "alias.txt"], d)
    if rc != 2 or "input circuit" not in err:
        fail(f"--output onto a hard link of the input: exit {rc}: {err.strip()}")
    if leftovers(d, ["main.stack", "stage.stack", "c.svg", "inc.svg", "sub", "alias.txt"]):
        fail(f"files left behind: {leftovers(d, ['main.stack', 'stage.stack', 'c.svg', 'inc.svg', 'sub', 'alias.txt'])}")


# ---- only regular files ---------------------------------------------------------------------------

def special_files(d):
    """Private special files in d: name -> (kind, make function)."""
    made = {}
    os.mkfifo(os.path.join(d, "fifo"))
    made["fifo"] = "FIFO"
    s = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    s.bind(os.path.join(d, "sock"))
    made["sock"] = "socket"
    os.mkdir(os.path.join(d, "dir"))
    made["dir"] = "directory"
    if os.geteuid() == 0:
        # the numbers of the null device (1, 3) and of a loop device (7, 0)
        # (Linux's devices.txt), on private nodes in our own directory
        os.mknod(os.path.join(d, "chr"), 0o666 | stat.S_IFCHR, os.makedev(1, 3))
        made["chr"] = "character device"
        os.mknod(os.path.join(d, "blk"), 0o660 | stat.S_IFBLK, os.makedev(7, 0))
        made["blk"] = "block device"
    else:
        print("note: not root, the device-node cases are skipped")
    return made, s


def ident(path):
    st = os.lstat(path)
    return (stat.S_IFMT(st.st_mode), st.st_ino, st.st_rdev, st.st_mode, st.st_mtime_ns)


def test_special_files():
    d = fresh_dir()
    made, sock = special_files(d)
    for name, kind in made.items():
        before = ident(os.path.join(d, name))
        for args, plots in every_command(d) + [(["pick", "ratio", "0.5"], False)]:
            rc, _, err = run(args + ["--output", name], d)
            if rc != 2 or kind not in err:
                fail(f"{args[0]} --output {name}: exit {rc}, expected 2 and '{kind}': {err.strip()}")
            if plots:
                os.symlink(name, os.path.join(d, name + ".svg"))
                rc, _, err = run(args + ["--plot", name + ".svg"], d)
                os.unlink(os.path.join(d, name + ".svg"))
                if rc != 2 or kind not in err:
                    fail(f"{args[0]} --plot (link to {name}): exit {rc}, expected 2 and '{kind}': {err.strip()}")
        if ident(os.path.join(d, name)) != before:
            fail(f"{name} ({kind}) was changed")
    sock.close()
    # the system's /dev/null: refused and untouched
    before = ident("/dev/null")
    rc, _, err = run(["solve", "main.stack", "--output", "/dev/null"], d)
    if rc != 2 or "character device" not in err or ident("/dev/null") != before:
        fail(f"--output /dev/null: exit {rc}: {err.strip()}")
    # '-' is standard output
    rc, out, err = run(["solve", "main.stack", "--output", "-"], d)
    if rc != 0 or "mid" not in out:
        fail(f"--output -: exit {rc}: {err.strip()}")
    extra = leftovers(d, list(made) + ["main.stack", "stage.stack"])
    if extra:
        fail(f"files left behind: {extra}")


# ---- symbolic links --------------------------------------------------------------------------------

def test_symlinks():
    d = fresh_dir()
    rc, want, _ = run(["solve", "main.stack"], d)
    # a link to a regular file: the file is replaced, the link kept
    write(os.path.join(d, "old.txt"), "old report\n")
    os.chmod(os.path.join(d, "old.txt"), 0o640)
    os.symlink("old.txt", os.path.join(d, "link.txt"))
    rc, _, err = run(["solve", "main.stack", "--output", "link.txt"], d)
    if rc != 0 or not os.path.islink(os.path.join(d, "link.txt")) or os.readlink(os.path.join(d, "link.txt")) != "old.txt":
        fail(f"--output through a link: exit {rc}, the link was not kept: {err.strip()}")
    if read(os.path.join(d, "old.txt")).decode() != want:
        fail("--output through a link: the linked file does not hold the report")
    if stat.S_IMODE(os.stat(os.path.join(d, "old.txt")).st_mode) != 0o640:
        fail("--output through a link: the linked file lost its mode")
    # a dangling link is refused and nothing is created
    os.symlink("nowhere.txt", os.path.join(d, "dangling.txt"))
    rc, _, err = run(["solve", "main.stack", "--output", "dangling.txt"], d)
    if rc != 2 or "link to nothing" not in err or os.path.exists(os.path.join(d, "nowhere.txt")):
        fail(f"--output onto a dangling link: exit {rc}: {err.strip()}")
    # a link to the input circuit is the input circuit
    os.symlink("main.stack", os.path.join(d, "in.txt"))
    rc, _, err = run(["solve", "main.stack", "--output", "in.txt"], d)
    if rc != 2 or "input circuit" not in err:
        fail(f"--output onto a link to the input: exit {rc}: {err.strip()}")
    # /dev/stdout-like links to something not regular are refused (a private link to a FIFO)
    os.mkfifo(os.path.join(d, "pipe"))
    os.symlink("pipe", os.path.join(d, "out"))
    rc, _, err = run(["solve", "main.stack", "--output", "out"], d)
    if rc != 2 or "FIFO" not in err or not stat.S_ISFIFO(os.lstat(os.path.join(d, "pipe")).st_mode):
        fail(f"--output onto a link to a FIFO: exit {rc}: {err.strip()}")


# ---- modes -------------------------------------------------------------------------------------------

def test_modes():
    d = fresh_dir()
    for mode in (0o600, 0o640, 0o664, 0o755):
        p = os.path.join(d, "r.json")
        write(p, "{}")
        os.chmod(p, mode)
        rc, _, err = run(["solve", "main.stack", "--format", "json", "--output", "r.json"], d, umask=0o077)
        got = stat.S_IMODE(os.stat(p).st_mode)
        if rc != 0 or got != mode:
            fail(f"replaced file of mode {mode:o} became {got:o} (exit {rc}) {err.strip()}")
    for umask in (0o022, 0o027, 0o077, 0o002):
        for args, plots in (["solve", "main.stack"], False), (["tol", "main.stack", "mid", "--trials", "20"], True):
            for f in ("new.txt", "new.svg"):
                if os.path.exists(os.path.join(d, f)):
                    os.unlink(os.path.join(d, f))
            extra = ["--plot", "new.svg"] if plots else []
            rc, _, err = run(args + ["--output", "new.txt"] + extra, d, umask=umask)
            for f in ["new.txt"] + (["new.svg"] if plots else []):
                got = stat.S_IMODE(os.stat(os.path.join(d, f)).st_mode) if os.path.exists(os.path.join(d, f)) else None
                if rc != 0 or got != 0o666 & ~umask:
                    fail(f"{args[0]}: new {f} under umask {umask:03o}: mode {got and oct(got)}, expected "
                         f"{0o666 & ~umask:o} (exit {rc}) {err.strip()}")


# ---- interruption ----------------------------------------------------------------------------------

def test_signals():
    d = fresh_dir()
    write(os.path.join(d, "report.txt"), "the previous report\n")
    keep = ["main.stack", "stage.stack", "report.txt"]
    for sig in (signal.SIGINT, signal.SIGTERM):
        for args in (["tol", "main.stack", "mid", "--trials", "10000000", "--plot", "h.svg"],
                     ["sweep", "main.stack", "level", "1", "3", "mid", "--steps", "100000", "--plot", "s.svg"]):
            p = subprocess.Popen([LOADSTACK] + args + ["--output", "report.txt"], cwd=d,
                                 stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
            # the temporary files exist from the start (the destinations are
            # checked and opened before the work): wait for them, then stop it
            t0 = time.time()
            while time.time() - t0 < 20 and len(leftovers(d, keep)) < 2 and p.poll() is None:
                time.sleep(0.01)
            time.sleep(0.1)
            if p.poll() is not None:
                fail(f"{args[0]} ended before it could be interrupted (exit {p.returncode})")
                continue
            p.send_signal(sig)
            try:
                p.wait(timeout=30)
            except subprocess.TimeoutExpired:
                p.kill()
                fail(f"{args[0]}: {sig.name} did not stop it")
                continue
            if p.returncode != -sig:
                fail(f"{args[0]}: {sig.name}: return code {p.returncode}, expected death by the signal")
            if leftovers(d, keep):
                fail(f"{args[0]}: {sig.name} left {leftovers(d, keep)}")
            if read(os.path.join(d, "report.txt")) != b"the previous report\n":
                fail(f"{args[0]}: {sig.name} changed the previous report")


# ---- two writers -------------------------------------------------------------------------------------

def test_two_writers():
    d = fresh_dir()
    whole = {}
    for lv in ("1V", "2V"):
        rc, out, _ = run(["sweep", "main.stack", "level", "1", lv, "mid", "--steps", "2000", "--format", "csv"], d)
        whole[lv] = out
    for round_ in range(4):
        ps = [subprocess.Popen([LOADSTACK, "sweep", "main.stack", "level", "1", lv, "mid", "--steps", "2000",
                                "--format", "csv", "--output", "same.csv"], cwd=d,
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL) for lv in ("1V", "2V")]
        rcs = [p.wait(timeout=120) for p in ps]
        got = read(os.path.join(d, "same.csv")).decode()
        if rcs != [0, 0] or got not in whole.values():
            fail(f"two writers, round {round_}: exits {rcs}, the file is not one whole report ({len(got)} bytes)")
    if leftovers(d, ["main.stack", "stage.stack", "same.csv"]):
        fail(f"two writers left {leftovers(d, ['main.stack', 'stage.stack', 'same.csv'])}")


# ---- checked before any work ----------------------------------------------------------------------

def test_checked_first():
    d = fresh_dir()
    # The destination is checked before the circuit is even read: with a
    # missing circuit AND a bad --plot, the error is the --plot one.
    for args in (["tol", "absent.stack", "mid", "--trials", "10000000"],
                 ["sweep", "absent.stack", "level", "1", "3", "mid", "--steps", "100000"]):
        rc, _, err = run(args + ["--plot", "no/such/dir/p.svg"], d)
        if rc != 2 or "no/such/dir" not in err or "absent.stack" in err:
            fail(f"{args[0]}: bad --plot directory not reported first: exit {rc}: {err.strip()}")
        rc, _, err = run(args + ["--plot", "p.jpg"], d)
        if rc != 2 or ".svg or .png" not in err or "absent.stack" in err:
            fail(f"{args[0]}: bad --plot extension not reported first: exit {rc}: {err.strip()}")
        rc, _, err = run(args + ["--output", "no/such/dir/r.txt"], d)
        if rc != 2 or "no/such/dir" not in err or "absent.stack" in err:
            fail(f"{args[0]}: bad --output not reported first: exit {rc}: {err.strip()}")
    # an error in the circuit: nothing is written, nothing left behind
    write(os.path.join(d, "bad.stack"), "ground gnd\nresistor r1 a -> gnd 5 V\n")
    rc, _, _ = run(["solve", "bad.stack", "--output", "r.txt"], d)
    if rc != 2 or leftovers(d, ["main.stack", "stage.stack", "bad.stack"]):
        fail(f"a failed run left files: {leftovers(d, ['main.stack', 'stage.stack', 'bad.stack'])}")


for t in (test_protected_files, test_special_files, test_symlinks, test_modes, test_signals, test_two_writers,
          test_checked_first):
    t()
print(f"{len(failures)} failures" if failures else "all output-safety checks passed")
sys.exit(1 if failures else 0)
