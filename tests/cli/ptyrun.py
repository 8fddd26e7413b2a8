"""Run the program with its standard output and error on a pseudo-terminal,
as a user at a terminal sees it (Python's pty module)."""
import os
import pty
import select
import subprocess
import time


def run_pty(argv, env=None, cwd=None, stderr_pipe=False, timeout=120):
    """Run argv with stdout (and stderr, unless stderr_pipe) on one pty.
    Returns (exit code, bytes seen on the terminal, stderr bytes or None, seconds)."""
    m, s = pty.openpty()
    t0 = time.monotonic()
    p = subprocess.Popen(argv, stdin=subprocess.DEVNULL, stdout=s,
                         stderr=subprocess.PIPE if stderr_pipe else s, env=env, cwd=cwd, close_fds=True)
    os.close(s)
    out = b""
    while True:
        try:
            r, _, _ = select.select([m], [], [], timeout)
            if not r:
                p.kill()
                break
            d = os.read(m, 65536)
        except OSError:   # EIO once the child has closed the terminal
            break
        if not d:
            break
        out += d
    err = p.stderr.read() if stderr_pipe else None
    rc = p.wait()
    os.close(m)
    return rc, out, err, time.monotonic() - t0
