#!/bin/bash
# mesh3d.sh — the direct (CHOLMOD) and the iterative (hypre AMG-PCG) solvers
# side by side on 3-D resistor meshes, in one run (docs/performance.md).
#
# Usage: tests/bench/mesh3d.sh [--small] [--sizes 50,70,100] [--cap SECONDS]
#   MESH3D_CORE=path/to/mesh3d_core  (default: build-mpi/tests/bench/mesh3d_core;
#                                    the -Dmpi=enabled build)
#   --small     one 12^3 mesh: for the test suite (both paths run and agree)
#   --sizes     the edge lengths N of the N^3 meshes (default 50,70,100)
#   --cap S     stop a run after S seconds (default 300): the direct factor
#               of a large 3-D mesh can take far longer; the row says so
#
# For each N and each method: wall time and peak resident memory of the whole
# process (/usr/bin/time -v), the factor (AMG setup) and solve seconds, the
# CG iterations, and the centre voltage; the AMG row's last column is its
# relative difference from CHOLMOD's answer, to be compared with the stopping
# tolerance (a true relative residual of 1e-10; the answer's error is at most
# the condition number times that).  Prints a markdown table; exit 0 when
# every finished pair agrees to 1e-8, 1 otherwise.
set -u
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
core=${MESH3D_CORE:-$root/build-mpi/tests/bench/mesh3d_core}
sizes=50,70,100
cap=300
while [ $# -gt 0 ]; do
    case "$1" in
    --small) sizes=12 ;;
    --sizes) sizes=$2; shift ;;
    --cap) cap=$2; shift ;;
    *) echo "usage: mesh3d.sh [--small] [--sizes N,N] [--cap SECONDS]" >&2; exit 2 ;;
    esac
    shift
done
[ -x "$core" ] || { echo "mesh3d.sh: no $core (build with -Dmpi=enabled)" >&2; exit 2; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
field() { sed -n "s/.*[ ^]$1=\([^ ]*\).*/\1/p" "$2"; }
fail=0
echo "| mesh | unknowns | method | wall s | peak MB | factor/setup s | solve s | CG iterations | V(centre) | vs CHOLMOD |"
echo "| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |"
for n in ${sizes//,/ }; do
    ref=""
    for m in cholmod amg; do
        timeout "$cap" /usr/bin/time -v "$core" "$n" "$m" >"$tmp/out" 2>"$tmp/time"
        rc=$?
        wall=$(sed -n 's/.*Elapsed (wall clock) time.*: //p' "$tmp/time")
        rss=$(sed -n 's/.*Maximum resident set size (kbytes): //p' "$tmp/time")
        if [ $rc -ne 0 ]; then
            why="exit $rc"
            [ $rc -eq 124 ] && why="not finished in $cap s"
            echo "| ${n}^3 | | $m | $why | | | | | | |"
            [ $rc -eq 124 ] || fail=1
            continue
        fi
        v=$(field v_centre "$tmp/out")
        cmp="—"
        if [ "$m" = cholmod ]; then
            ref=$v
        elif [ -n "$ref" ]; then
            cmp=$(/usr/bin/python3 -c "import sys; a, b = float(sys.argv[1]), float(sys.argv[2]); print('%.1e' % (abs(a - b) / abs(b)))" "$v" "$ref")
            /usr/bin/python3 -c "import sys; sys.exit(0 if float(sys.argv[1]) <= 1e-8 else 1)" "$cmp" || fail=1
        fi
        # wall clock as h:mm:ss or m:ss.cc -> seconds
        secs=$(echo "$wall" | awk -F: '{ s = 0; for (i = 1; i <= NF; i++) s = s * 60 + $i; printf "%.2f", s }')
        echo "| ${n}^3 | $(field n "$tmp/out") | $m | $secs | $((rss / 1024)) | $(field factor_s "$tmp/out") | $(field solve_s "$tmp/out") | $(field cg_iterations "$tmp/out") | $v | $cmp |"
    done
done
exit $fail
