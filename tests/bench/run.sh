#!/bin/bash
# run.sh — loadstack's benchmarks, with reference solvers measured in the same run.
#
# Usage: tests/bench/run.sh [--small] [--reps R] [--baseline BIN] [--only dense] [--keep DIR]
#   LOADSTACK=path/to/loadstack   the program under test (default: build/src/loadstack)
#   DGESV_REF=path/to/dgesv_ref   the bare-LAPACK reference (built by tests/bench/meson.build;
#                                 default: beside LOADSTACK under tests/bench/)
#   GRID_CORE=path/to/grid_core   the grid's solver core alone (default: beside DGESV_REF)
#   --small      small sizes, one repetition: for the test suite (checks that it all runs
#                and that loadstack and the references agree; it is not a timed test)
#   --reps R     best of R runs per row (default 3; 1 with --small)
#   --baseline B also time the grid and dense rows with another loadstack binary B (for
#                before/after; in the dense rows B, the program and dgesv alternate)
#   --only dense the dense rows alone
#   --keep DIR   keep the generated circuits and matrices in DIR
#
# Reports go to stdout, redirected to a file (--output would add an fsync, which measures
# the disk, not the program).  Prints a markdown table: whole-process wall time (s) and peak resident memory (MB) from
# /usr/bin/time, the best of R runs; for loadstack the phase times of LOADSTACK_TIMING=1
# (parse, elaborate, solve, report) and the parse+elaborate throughput; for the references
# the time of the library call alone.  Exit 0 when every run succeeded and loadstack agrees
# with the references to 1e-9, 1 otherwise.
set -u
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
py=/usr/bin/python3
small=0
reps=3
baseline=""
only=""
keep=""
while [ $# -gt 0 ]; do
    case "$1" in
    --small) small=1; reps=1 ;;
    --reps) reps=$2; shift ;;
    --baseline) baseline=$2; shift ;;
    --only) only=$2; shift ;;
    --keep) keep=$2; shift ;;
    *) echo "usage: run.sh [--small] [--reps R] [--baseline BIN] [--only dense] [--keep DIR]" >&2; exit 2 ;;
    esac
    shift
done
ls_bin=${LOADSTACK:-$root/build/src/loadstack}
dgesv=${DGESV_REF:-$(dirname "$(dirname "$ls_bin")")/tests/bench/dgesv_ref}
core=${GRID_CORE:-$(dirname "$dgesv")/grid_core}
for b in "$ls_bin" "$dgesv" "$core" /usr/bin/time "$py"; do
    [ -x "$b" ] || { echo "run.sh: cannot run '$b'" >&2; exit 2; }
done
if [ -n "$keep" ]; then
    mkdir -p "$keep" && work=$(cd "$keep" && pwd)
else
    work=$(mktemp -d) && trap 'rm -rf "$work"' EXIT
fi

if [ $small = 1 ]; then
    grids="60"; dense=300; chain=100; ports=20; trials=1000
else
    grids="300 700 1000"; dense=2000; chain="1000 3334"; ports=200; trials=10000
fi
case "$only" in
"") ;;
dense) grids="" ;;
*) echo "run.sh: --only takes dense" >&2; exit 2 ;;
esac
fail=0
rows=()
load_start=$(cut -d' ' -f1-3 /proc/loadavg)

# measure TAG CMD...: run CMD once under /usr/bin/time and keep it as TAG's best when it is
# the fastest so far (its wall time, peak memory, exit code, stdout and stderr).
# Alternating the measures of two programs inside one repetition loop keeps a change of
# the machine's load from favouring either.
measure() {
    local tag=$1
    shift
    local t0 t1 c w m
    t0=$(date +%s%N)
    LOADSTACK_TIMING=1 /usr/bin/time -f "%U %S %M" -o "$work/time" "$@" >"$work/out.try" 2>"$work/err.try"
    c=$?
    t1=$(date +%s%N)
    # wall time to the millisecond from the clock (time's %e has 10 ms steps); peak
    # memory from time (a failed command adds a line before it)
    w=$(awk "BEGIN{printf \"%.3f\", ($t1 - $t0) / 1e9}")
    m=$(tail -1 "$work/time" | awk '{print $3}')
    [[ "$m" =~ ^[0-9]+$ ]] || m=0
    local cpu
    cpu=$(tail -1 "$work/time" | awk '{printf "%.3f", $1 + $2}')
    if [ ! -e "$work/$tag.wall" ] || awk "BEGIN{exit !($w < $(cat "$work/$tag.wall"))}"; then
        echo "$w" >"$work/$tag.wall"
        awk "BEGIN{printf \"%.0f\", $m / 1024}" >"$work/$tag.mem"
        echo "$cpu" >"$work/$tag.cpu"
        echo "$c" >"$work/$tag.rc"
        mv "$work/out.try" "$work/$tag.out"
        mv "$work/err.try" "$work/$tag.err"
    fi
}

# forget TAG: drop TAG's measures.  take TAG: load them into wall, mem, rc, $work/out, $work/err.
forget() { rm -f "$work/$1".{wall,mem,rc,out,err,cpu}; }
take() {
    wall=$(cat "$work/$1.wall"); mem=$(cat "$work/$1.mem"); rc=$(cat "$work/$1.rc"); cpu=$(cat "$work/$1.cpu")
    cp "$work/$1.out" "$work/out"; cp "$work/$1.err" "$work/err"
}

# best_of CMD...: the best of R runs of CMD, taken (see take).
best_of() {
    forget one
    for ((r = 0; r < reps; r++)); do
        measure one "$@"
    done
    take one
}

# phase NAME: that phase's seconds from the kept stderr, or "-".
phase() {
    local v
    v=$(awk -v p="$1" '$1 == "loadstack:" && $2 == "timing:" && $3 == p {print $4}' "$work/err")
    echo "${v:--}"
}

# row WHAT TOOL BYTES NOTE: one table row from the last take.
row() {
    local what=$1 tool=$2 bytes=$3 note=$4 rate="-"
    local pa el so re
    pa=$(phase parse); el=$(phase elaborate); so=$(phase solve); re=$(phase report)
    if [ "$pa" != "-" ] && [ "$el" != "-" ] && [ "$bytes" != "-" ]; then
        rate=$(awk "BEGIN{s = $pa + $el; if (s > 0) printf \"%.0f\", $bytes / 1e6 / s; else print \"-\"}")
    fi
    if [ "$rc" != 0 ]; then
        note="exit $rc: $(grep -m1 -E 'error|Error' "$work/err" | cut -c1-110)"
        # the part-count cap of the elaborator is a known limit (docs/performance.md)
        case "$note" in *"more than"*"parts"*) ;; *) fail=1 ;; esac
    fi
    rows+=("| $what | $tool | $wall | $mem | $pa | $el | $so | $re | $rate | $note |")
}

# json_value FILE EXPR: evaluate a python expression on the JSON in FILE (as j).
json_value() {
    "$py" -c "import json,sys; j=json.load(open(sys.argv[1])); print($2)" "$1" 2>/dev/null
}

# agree A B NAME: |A - B| <= 1e-9 |B| (+1e-15), else flag a failure.
agree() {
    if awk "BEGIN{a = $1; b = $2; d = a - b; if (d < 0) d = -d; m = b < 0 ? -b : b; exit !(d <= 1e-9 * m + 1e-15)}"; then
        echo "agree: $3: $1 vs $2" >&2
    else
        echo "run.sh: DISAGREE: $3: loadstack $1, reference $2" >&2
        fail=1
    fi
}

# ---- grids: loadstack (reduced nodal form, CHOLMOD) against scipy's spsolve ----------------
for n in $grids; do
    f="$work/grid$n.stack"
    "$py" "$here/gen.py" grid "$n" --out "$f" || fail=1
    bytes=$(stat -c %s "$f")
    forget after
    forget before
    for ((r = 0; r < reps; r++)); do
        measure after "$ls_bin" solve "$f" --format json
        [ -z "$baseline" ] || measure before "$baseline" solve "$f" --format json
    done
    take after
    mv "$work/out" "$work/grid$n.json"
    method="-"
    [ "$rc" = 0 ] && method=$(json_value "$work/grid$n.json" 'j["solver"]["method"] + "/" + j["solver"]["library"]')
    row "grid $n×$n, 1 V feed" loadstack "$bytes" "json report; $method"
    ls_x=""
    [ "$rc" = 0 ] && ls_x=$(json_value "$work/grid$n.json" 'j["nodes"]["n0_1"]')
    best_of "$ls_bin" solve "$f" --format text
    row "grid $n×$n, 1 V feed" loadstack "$bytes" "text report"
    if [ -n "$baseline" ]; then
        take before
        mv "$work/out" "$work/grid$n.before.json"
        method="-"
        [ "$rc" = 0 ] && method=$(json_value "$work/grid$n.before.json" 'j["solver"]["method"] + "/" + j["solver"]["library"]')
        row "grid $n×$n, 1 V feed" "loadstack (before)" "$bytes" "json report; $method"
    fi
    forget umfpack
    forget reduced
    for ((r = 0; r < reps; r++)); do
        measure umfpack "$core" "$n" umfpack
        measure reduced "$core" "$n" reduced
    done
    for be in umfpack reduced; do
        take $be
        row "grid $n×$n, 1 V feed" "grid_core $be" - "solver core only: $(awk '{printf "assemble %s, analyze %s, factor %s, solve %s s", $6, $8, $10, $12}' "$work/out")"
    done
    core_x=$(awk '{print $14}' "$work/out") # the reduced form's
    "$py" "$here/gen.py" gridmatrix "$n" --out "$work/grid$n.npz" || fail=1
    best_of "$py" "$here/spsolve_ref.py" "$work/grid$n.npz" 0
    t=$(awk '{print $4}' "$work/out")
    row "grid $n×$n, 1 V feed" "scipy spsolve" - "spsolve alone ${t:-?} s (reduced matrix, $((n * n - 2)) unknowns)"
    ref_x=$(awk '{print $6}' "$work/out")
    [ -n "$ls_x" ] && [ -n "$ref_x" ] && agree "$ls_x" "$ref_x" "grid $n node n0_1"
    [ -n "$core_x" ] && [ -n "$ref_x" ] && agree "$core_x" "$ref_x" "grid_core $n node n0_1"
    rm -f "$work/grid$n.txt" "$work/grid$n.json" "$work/grid$n.before.json" "$work/grid$n.npz"
    [ -n "$keep" ] || rm -f "$f"
done

# ---- dense path against a bare dgesv on the same matrix ------------------------------------
# The best run of each program is the one with the least wall time; its CPU seconds
# (user + sys) are given beside it, and the ratios of both.
f="$work/dense$dense.stack"
"$py" "$here/gen.py" dense "$dense" --out "$f" --matrix "$work/dense$dense.bin" || fail=1
forget ls
forget ref
forget before
for ((r = 0; r < reps; r++)); do
    measure ls "$ls_bin" solve "$f" --format json --solver dense
    [ -z "$baseline" ] || measure before "$baseline" solve "$f" --format json --solver dense
    measure ref "$dgesv" "$work/dense$dense.bin"
done
take ref
ref_w=$wall
ref_c=$cpu
ref_t=$(awk '{print $4}' "$work/out")
ref_x=$(awk '{print $6}' "$work/out")
# dense_row TAG PROGRAM: the row of TAG's best run, with its ratios to dgesv's.
dense_row() {
    take "$1"
    mv "$work/out" "$work/dense.json"
    local method="-"
    [ "$rc" = 0 ] && method=$(json_value "$work/dense.json" 'j["solver"]["method"]')
    local ratio
    ratio=$(awk "BEGIN{if ($ref_w > 0 && $ref_c > 0) printf \"%.2f wall, %.2f CPU\", $wall / $ref_w, $cpu / $ref_c; else print \"-\"}")
    row "dense $dense unknowns" "$2" "$(stat -c %s "$f")" "--solver dense: $method; CPU $cpu s; /dgesv = $ratio"
}
[ -z "$baseline" ] || dense_row before "loadstack (before)"
dense_row ls loadstack
ls_x=""
[ "$rc" = 0 ] && ls_x=$(json_value "$work/dense.json" 'j["nodes"]["p0"]')
take ref
row "dense $dense unknowns" "bare dgesv" - "dgesv alone ${ref_t:-?} s; CPU $cpu s"
[ -n "$ls_x" ] && [ -n "$ref_x" ] && agree "$ls_x" "$ref_x" "dense $dense node p0"

# ---- op-amp chain, many ports, tolerance ---------------------------------------------------
if [ -z "$only" ]; then
    for k in $chain; do
        f="$work/chain$k.stack"
        "$py" "$here/gen.py" chain "$k" --out "$f" || fail=1
        best_of "$ls_bin" solve "$f" --format json
        mv "$work/out" "$work/chain.json"
        method="-"
        [ "$rc" = 0 ] && method=$(json_value "$work/chain.json" 'j["solver"]["method"] + "/" + j["solver"]["library"] + ", %d unknowns" % j["solver"]["unknowns"]')
        row "op-amp chain, $k stages" loadstack "$(stat -c %s "$f")" "$method"
        if [ "$rc" = 0 ]; then
            # each stage inverts with gain -(rf/rin)/(1 + (1 + rf/rin)/A) ~ -(1 - 1e-5):
            # after k stages |s_k| stays within a few per cent of the 10 mV input
            out=$(json_value "$work/chain.json" 'abs(j["nodes"]["s'$k'"])')
            awk "BEGIN{exit !($out > 0.009 && $out < 0.0101)}" || { echo "run.sh: chain output $out V is not ~10 mV" >&2; fail=1; }
        fi
    done

    f="$work/ports$ports.stack"
    "$py" "$here/gen.py" ports "$ports" --out "$f" || fail=1
    best_of "$ls_bin" solve "$f" --format json
    row "$ports ports" loadstack "$(stat -c %s "$f")" "loading report of every port"

    f="$work/tol.stack"
    "$py" "$here/gen.py" tol --out "$f" || fail=1
    best_of "$ls_bin" tol "$f" t24 --trials "$trials" --format json
    row "tol, 50 parts, $trials trials" loadstack "$(stat -c %s "$f")" "worst case + Monte Carlo"
fi

echo "loadstack benchmarks, $(date -u '+%Y-%m-%d %H:%M UTC'), $(nproc) cores, best of $reps"
echo "load average at the start: $load_start, at the end: $(cut -d' ' -f1-3 /proc/loadavg)"
echo
echo "| case | program | wall s | peak MB | parse s | elab s | solve s | report s | parse+elab MB/s | notes |"
echo "|---|---|--:|--:|--:|--:|--:|--:|--:|---|"
printf '%s\n' "${rows[@]}"
exit $fail
