#!/bin/bash
# mpi_bench.sh — the benchmarks of the -Dmpi=enabled build (docs/performance.md,
# "Across ranks and beyond one factor"):
#
#   tol   a 300 x 300 heater mat (gen.py grid) with every resistor at tol=1%:
#         `tol` of TRIALS trials in one process (one thread, then the default
#         threads) and under `mpirun -n 2` (one thread a rank); the reports must
#         be byte-identical.
#         (ALSO_THREADS=1: also one process with the default threads.)
#   big   an N x N mat (default 3163: 10^7 nodes) solved by the iterative
#         solver in one process, report to /dev/null.
#   ranks an N x N mat (default 1000) solved across 1 and then 2 ranks: the
#         peak resident memory of each rank (/usr/bin/time around each rank).
#
# Usage: tests/bench/mpi_bench.sh tol [TRIALS] | big [N [FILE]] | ranks [N [FILE]]
#   BUILD=path/to/build-mpi   (default: build-mpi beside this tree)
# Prints wall time (s) and peak resident memory (MB) from /usr/bin/time -v, the
# phase times of LOADSTACK_TIMING=1, and the machine's load average before each
# run (the machine may be shared: say so beside the figures).
set -u
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
build=${BUILD:-$root/build-mpi}
ls1=$build/src/loadstack
lsm=$build/src/loadstack-mpi
py=/usr/bin/python3
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_rmaps_base_oversubscribe=1
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

measure() { # label, then the command
    local label=$1
    shift
    echo "## $label (load average before: $(cut -d' ' -f1-3 /proc/loadavg))"
    LOADSTACK_TIMING=1 /usr/bin/time -v "$@" >"$tmp/out" 2>"$tmp/err"
    local rc=$?
    grep -E "timing:" "$tmp/err" | sed 's/^/    /'
    local wall rss
    wall=$(grep "Elapsed (wall" "$tmp/err" | awk '{print $NF}')
    rss=$(grep "Maximum resident" "$tmp/err" | awk '{printf "%.0f", $NF / 1024}')
    local cpu
    cpu=$(awk -F': ' '/User time|System time/ {s += $2} END {printf "%.1f", s}' "$tmp/err")
    echo "    exit $rc, wall $wall, CPU (user + system, all processes) $cpu s, peak RSS $rss MB (of the mpirun process tree's largest)"
    grep -E "^solved" "$tmp/out" | sed 's/^/    /'
    return $rc
}

case "${1:-}" in
tol)
    trials=${2:-10000}
    "$py" "$here/gen.py" grid 300 --feed current | sed 's/^\(resistor .*\) 1$/\1 1 tol=1%/' >"$tmp/t300.stack"
    args=(tol "$tmp/t300.stack" n150_150 --trials "$trials" --seed 3)
    LOADSTACK_THREADS=1 measure "tol, $trials trials, 1 process, 1 thread" "$ls1" "${args[@]}"
    cp "$tmp/out" "$tmp/one.out"
    if [ -n "${ALSO_THREADS:-}" ]; then
        measure "tol, $trials trials, 1 process, default threads" "$ls1" "${args[@]}"
        cmp -s "$tmp/one.out" "$tmp/out" || { echo "REPORTS DIFFER (threads)"; exit 1; }
    fi
    LOADSTACK_THREADS=1 measure "tol, $trials trials, mpirun -n 2, 1 thread a rank" mpirun -n 2 -x LOADSTACK_THREADS -x LOADSTACK_TIMING "$lsm" "${args[@]}"
    if cmp -s "$tmp/one.out" "$tmp/out"; then echo "reports identical"; else echo "REPORTS DIFFER"; exit 1; fi
    ;;
big)
    n=${2:-3163}
    big=${3:-$tmp/big.stack} # an existing FILE made by gen.py grid N --feed current is used as it is
    [ -s "$big" ] || "$py" "$here/gen.py" grid "$n" --feed current --out "$big"
    echo "circuit: $n x $n mat, $(stat -c %s "$big") bytes"
    measure "solve, $n x $n, --solver iterative" "$ls1" solve "$big" --solver iterative
    ;;
ranks)
    # one mesh across ranks: peak memory of each rank with 1 and 2 ranks
    n=${2:-1000}
    big=${3:-$tmp/big.stack}
    [ -s "$big" ] || "$py" "$here/gen.py" grid "$n" --feed current --out "$big"
    echo "circuit: $n x $n mat, $(stat -c %s "$big") bytes"
    for k in 1 2; do
        echo "## mpirun -n $k, solve --solver iterative (load average before: $(cut -d' ' -f1-3 /proc/loadavg))"
        LOADSTACK_TIMING=1 mpirun -n "$k" -x LOADSTACK_TIMING /usr/bin/time -f "rank peak RSS %M kB, wall %e s" \
            "$lsm" solve "$big" --solver iterative >"$tmp/out" 2>"$tmp/err"
        echo "    exit $?"
        grep -E "timing:|peak RSS" "$tmp/err" | sed 's/^/    /'
        grep -E "^solved" "$tmp/out" | sed 's/^/    /'
    done
    ;;
*)
    echo "usage: mpi_bench.sh tol [TRIALS] | big [N [FILE]]" >&2
    exit 2
    ;;
esac
