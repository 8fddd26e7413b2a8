#!/usr/bin/python3
"""A 3-D resistor mesh as a circuit file, for the program path of the 3-D
benchmark (docs/performance.md) and for trying --solver iterative.

Usage: mesh3d_gen.py N [--tol] > mesh.stack

An N x N x N block of one-ohm resistors (a heater block's conductance mesh),
node (x, y, z) named n<x>_<y>_<z>; 1 A fed into the centre node from the
ground corner n0_0_0 (named g).  With --tol the resistors get tol=1% (for
tol runs).  Deterministic: the same arguments give the same file.
"""
import sys


def main():
    if len(sys.argv) < 2 or not sys.argv[1].isdigit() or int(sys.argv[1]) < 2:
        sys.stderr.write(__doc__)
        return 2
    n = int(sys.argv[1])
    tol = " tol=1%" if "--tol" in sys.argv else ""
    c = n // 2
    out = sys.stdout
    nm = lambda x, y, z: "g" if x == y == z == 0 else "n%d_%d_%d" % (x, y, z)  # noqa: E731
    out.write('title "Heater block %d^3"\nground g\ncurrent feed g -> %s 1 A\n' % (n, nm(c, c, c)))
    k = 0
    for x in range(n):
        for y in range(n):
            for z in range(n):
                a = nm(x, y, z)
                for dx, dy, dz in ((1, 0, 0), (0, 1, 0), (0, 0, 1)):
                    if x + dx < n and y + dy < n and z + dz < n:
                        out.write("resistor r%d %s -> %s 1%s\n" % (k, a, nm(x + dx, y + dy, z + dz), tol))
                        k += 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
