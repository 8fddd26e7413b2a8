#!/bin/bash
# Reference test: closed-form circuits. Runs `LOADSTACK check FILE` on every
# DIR/*.stack and fails if any run exits non-zero. A file may ask for extra
# runs with lines of the form
#     # also-check: --set NAME=VALUE ...    # optional comment
# each of which runs `check` once more with those arguments.
# Usage: run_closed.sh LOADSTACK_BINARY DIR
set -u

if [ $# -ne 2 ]; then
    echo "usage: run_closed.sh LOADSTACK_BINARY DIR" >&2
    exit 2
fi
bin=$1
dir=$2
if [ ! -x "$bin" ]; then
    echo "run_closed: $bin is not an executable" >&2
    exit 2
fi

shopt -s nullglob
files=("$dir"/*.stack)
if [ ${#files[@]} -eq 0 ]; then
    echo "run_closed: no .stack files in $dir" >&2
    exit 1
fi

runs=0
failed=0
failures=()

meaning() {
    case $1 in
        0) echo "every check passed" ;;
        1) echo "a check failed" ;;
        2) echo "file error or bad usage" ;;
        3) echo "circuit could not be solved" ;;
        124) echo "timed out" ;;
        *) echo "unexpected exit status (crash?)" ;;
    esac
}

# run_one FILE [ARGS...]: one `check` run; prints a line, records a failure.
# Besides the exit status, the JSON report must count at least as many passed
# checks as the file has `expect` lines, so a check that was silently skipped
# cannot pass.
run_one() {
    local f=$1
    shift
    local out rc json passed want
    json=$(timeout 60 "$bin" check "$f" "$@" --format json 2>/dev/null)
    rc=$?
    runs=$((runs + 1))
    want=$(grep -cE '^[[:space:]]*expect[[:space:]]' "$f")
    passed=$(printf '%s' "$json" | grep -oE '"passed"[[:space:]]*:[[:space:]]*[0-9]+' | grep -oE '[0-9]+$')
    if [ $rc -eq 0 ] && [ -n "$passed" ] && [ "$passed" -lt "$want" ]; then
        failed=$((failed + 1))
        failures+=("$(basename "$f") $* (only $passed of $want expects passed)")
        echo "FAIL  $(basename "$f") $*  -> exit 0 but only $passed of $want expects reported passed"
    elif [ $rc -eq 0 ] && [ -z "$passed" ]; then
        failed=$((failed + 1))
        failures+=("$(basename "$f") $* (no \"passed\" count in the JSON report)")
        echo "FAIL  $(basename "$f") $*  -> exit 0 but the JSON report has no \"passed\" count"
    elif [ $rc -eq 0 ]; then
        echo "ok    $(basename "$f") $*  ($passed checks)"
    else
        out=$(timeout 60 "$bin" check "$f" "$@" 2>&1)
        failed=$((failed + 1))
        failures+=("$(basename "$f") $* (exit $rc: $(meaning $rc))")
        echo "FAIL  $(basename "$f") $*  -> exit $rc: $(meaning $rc)"
        [ -n "$out" ] && echo "$out" | sed 's/^/      | /'
    fi
}

for f in "${files[@]}"; do
    run_one "$f"
    while IFS= read -r line; do
        spec=${line#*also-check:}
        spec=${spec%%#*}
        read -r -a extra <<< "$spec"
        [ ${#extra[@]} -gt 0 ] && run_one "$f" "${extra[@]}"
    done < <(grep -E '^[[:space:]]*#[[:space:]]*also-check:' "$f")
done

echo "run_closed: $runs runs over ${#files[@]} files, $failed failed"
if [ $failed -ne 0 ]; then
    printf '  failed: %s\n' "${failures[@]}"
    exit 1
fi
exit 0
