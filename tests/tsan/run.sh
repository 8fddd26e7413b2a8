#!/bin/bash
# run.sh — ThreadSanitizer runs of loadstack, in a build of their own.
#
# Usage: tests/tsan/run.sh [BUILD_DIR] [-- TARGET ARGS...]
#   BUILD_DIR   where the TSan build goes (default: build-tsan beside the source)
#   With no target: builds tests/host/host_behaviour and runs two host threads on
#   two circuits (the demo and a bridge of the program's own), each calling every
#   public function, so that two factorizations, their thread settings and the
#   library's shared tables meet.  Other TSan checks (say, a command's worker
#   threads) add a target and arguments after `--`: the target is built in the same
#   build and run with ARGS.
# Exit 0 when every run is clean; TSan's report goes to stderr.
#
# OpenBLAS and libgomp are not instrumented; small systems run BLAS on the calling
# thread (see thread_scope in src/solver.c), so their internals stay out of the run.
set -eu
root=$(cd "$(dirname "$0")/../.." && pwd)
build=${1:-$root/build-tsan}
[ $# -gt 0 ] && shift
target=tests/host/host_behaviour
args=("$root/circuits/demo.stack" --threads 2 --loops 150)
if [ "${1:-}" = "--" ]; then
    shift
    target=$1
    shift
    args=("$@")
fi
if [ ! -f "$build/build.ninja" ]; then
    meson setup "$build" "$root" -Db_sanitize=thread -Dbuildtype=debugoptimized -Dtests=disabled >/dev/null
fi
ninja -C "$build" "$target" >/dev/null
TSAN_OPTIONS="halt_on_error=1 second_deadlock_stack=1 ${TSAN_OPTIONS:-}" "$build/$target" "${args[@]}"
