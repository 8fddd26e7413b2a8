#!/bin/bash
# same_output.sh — loadstack-mpi under `mpirun -n K` against the single
# process: tol's Monte Carlo statistics (every percentile needs every value)
# and sweep's points must come out byte-identical, report and plot, with 2
# and 3 ranks (3 splits the items unevenly); the ranks other than the first
# write nothing (a --output of theirs would race the first's).
#
# Usage: same_output.sh LOADSTACK LOADSTACK_MPI MPIRUN SOURCE_ROOT
# The reference is the project's own single-process run (the contract of
# docs/iterative.md: "identical output to the single process with the same
# seed"); the circuits are the demo (linear parts, op-amps with limits) and
# the e-bike pack monitor (a zener, an LED, an op-amp at its rail: the
# sweep iterates at every point).  Exit 0 when every pair is identical.
set -u
ls1=$1 lsm=$2 mpirun=$3 root=$4
# OpenMPI refuses to start as root unless told (a CI container runs as root)
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_rmaps_base_oversubscribe=1
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
demo=$root/circuits/demo.stack
ebike=$root/circuits/ebike_pack_monitor.stack
fail=0
n=0
same() { # name, ranks, then the command's arguments
    local name=$1 k=$2
    shift 2
    "$ls1" "$@" >"$tmp/one.out" 2>"$tmp/one.err"
    local rc1=$?
    [ -e "$tmp/plot.svg" ] && mv "$tmp/plot.svg" "$tmp/one.svg"
    "$mpirun" -n "$k" --oversubscribe "$lsm" "$@" >"$tmp/k.out" 2>"$tmp/k.err"
    local rck=$?
    [ -e "$tmp/plot.svg" ] && mv "$tmp/plot.svg" "$tmp/k.svg"
    n=$((n + 1))
    if [ $rc1 -ne $rck ] || ! cmp -s "$tmp/one.out" "$tmp/k.out" || [ ! -s "$tmp/one.out" ]; then
        echo "FAIL $name (-n $k): exit $rc1 / $rck, outputs differ or are empty"
        diff "$tmp/one.out" "$tmp/k.out" | head -5
        head -5 "$tmp/k.err"
        fail=$((fail + 1))
    elif [ -e "$tmp/one.svg" ] && ! cmp -s "$tmp/one.svg" "$tmp/k.svg"; then
        echo "FAIL $name (-n $k): the plots differ"
        fail=$((fail + 1))
    else
        echo "ok   $name (-n $k)"
    fi
    rm -f "$tmp/one.svg" "$tmp/k.svg"
}
same "tol json" 2 tol "$demo" adc_in --trials 4000 --seed 11 --format json
same "tol text + plot" 3 tol "$demo" probe --trials 3001 --seed 5 --dist normal --plot "$tmp/plot.svg"
same "sweep text + plot" 3 sweep "$demo" moisture_r 1k 1M probe --steps 25 --log --plot "$tmp/plot.svg"
same "sweep nonlinear json" 2 sweep "$ebike" pack_temp -20 90 t_out v5 --steps 37 --format json
same "sweep nonlinear csv" 3 sweep "$ebike" pack_v 10 100 v5 d_stat.current --steps 31 --format csv
# --output: written whole by the first rank only
out=$tmp/report.json
"$mpirun" -n 2 --oversubscribe "$lsm" tol "$demo" adc_in --trials 500 --format json --output "$out" >/dev/null 2>&1
"$ls1" tol "$demo" adc_in --trials 500 --format json >"$tmp/ref.json" 2>/dev/null
n=$((n + 1))
if cmp -s "$out" "$tmp/ref.json"; then echo "ok   --output"; else echo "FAIL --output differs"; fail=$((fail + 1)); fi
# standard input reaches only the first rank: refused with exit 2, said once
"$mpirun" -n 2 --oversubscribe "$lsm" tol - adc_in <"$demo" >"$tmp/stdin.out" 2>"$tmp/stdin.err"
rc=$?
n=$((n + 1))
if [ $rc -eq 2 ] && [ "$(grep -c 'must be a file' "$tmp/stdin.err")" = 1 ] && [ ! -s "$tmp/stdin.out" ]; then
    echo "ok   standard input refused"
else
    echo "FAIL standard input: exit $rc"; cat "$tmp/stdin.err"; fail=$((fail + 1))
fi
echo "same_output: $n runs, $fail failed"
[ $fail -eq 0 ]
