#!/usr/bin/python3
"""scipy reference of the grid benchmark.

Usage: spsolve_ref.py MATRIX.npz [NODE_INDEX]
Loads the reduced nodal matrix written by `gen.py gridmatrix N --out MATRIX.npz`,
solves it with scipy.sparse.linalg.spsolve (Debian's python3-scipy, default
options: SuperLU with COLAMD ordering) and prints the order, the seconds spent
in spsolve alone, and the solution at NODE_INDEX (default 0, which is node n0_1
of the grid: the first free node after n0_0).
"""

import sys
import time

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spl


def main():
    z = np.load(sys.argv[1])
    k = int(sys.argv[2]) if len(sys.argv) > 2 else 0
    a = sp.csc_matrix((z["data"], z["indices"], z["indptr"]), shape=tuple(z["shape"]))
    t0 = time.perf_counter()
    x = spl.spsolve(a, z["rhs"])
    t = time.perf_counter() - t0
    print("n %d spsolve_s %.4f x %.17g" % (a.shape[0], t, x[k]))


if __name__ == "__main__":
    main()
