#!/usr/bin/env bash
# Two circuits on two threads under ThreadSanitizer: build the library and
# tests/api/test_api_threads.c with clang -fsanitize=thread in their own build
# directory (only that target), run it, and fail on any reported race.
#   usage: tests/api/tsan.sh [BUILD_DIR]     (default build-tsan)
set -euo pipefail
cd "$(dirname "$0")/../.."
dir=${1:-build-tsan}
if [ ! -f "$dir/build.ninja" ]; then
  CC=clang CXX=clang++ meson setup "$dir" -Db_sanitize=thread -Db_lundef=false -Dbuildtype=debugoptimized \
    >/dev/null
fi
ninja -C "$dir" tests/api/test_api_threads >/dev/null
# OpenBLAS and SuiteSparse are not instrumented; their own worker threads are
# outside this check (tsan.supp names them), the library's are inside it.
TSAN_OPTIONS="halt_on_error=1 second_deadlock_stack=1 suppressions=$PWD/tests/api/tsan.supp" \
  "$dir/tests/api/test_api_threads"
