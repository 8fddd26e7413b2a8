#!/usr/bin/env bash
# A short fuzz session for CI (about a minute): build the libFuzzer target
# tests/fuzz/fuzz_circuit with clang, run it on the stored corpus, the fuzzing
# regressions, the example circuits and the bad-input corpus, and fail on any
# crash, leak, undefined behaviour, timeout (25 s for one input: the largest
# legal expansion, about a million block instances, takes some 5 s, 10 s under
# the sanitizers) or out-of-memory (2 GB) it finds.  What it
# finds is kept under $build/fuzz-artifacts; add it to tests/fuzz/regressions/
# and fix it.
#   LOADSTACK_FUZZ_SECONDS  length of the session (default 60)
#   LOADSTACK_FUZZ_BUILD    build directory (default build-fuzz)
set -uo pipefail
cd "$(dirname "$0")/.."
root=$PWD
secs=${LOADSTACK_FUZZ_SECONDS:-60}
build=${LOADSTACK_FUZZ_BUILD:-build-fuzz}
case $build in /*) ;; *) build=$root/$build ;; esac

if [ -d "$build" ]; then
  meson setup --reconfigure "$build" -Dfuzz=true >/tmp/ci-fuzz-setup.log 2>&1
else
  CC=clang CXX=clang++ meson setup "$build" -Dfuzz=true >/tmp/ci-fuzz-setup.log 2>&1
fi || { tail -30 /tmp/ci-fuzz-setup.log; echo "fuzz: setup failed"; exit 1; }
ninja -C "$build" tests/fuzz/fuzz_circuit >/tmp/ci-fuzz-build.log 2>&1 \
  || { tail -30 /tmp/ci-fuzz-build.log; echo "fuzz: build failed"; exit 1; }

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
mkdir -p "$work/corpus" "$work/artifacts" "$work/run"
# (the regressions kept for their size, slow_*, would eat the minute: the
# normal suite replays them)
cp tests/fuzz/corpus/* "$work/corpus/"
for f in tests/fuzz/regressions/*.stack; do
  case $(basename "$f") in slow_*) ;; *) cp "$f" "$work/corpus/" ;; esac
done
i=0
for f in circuits/*.stack circuits/*/*.stack tests/cases/*/*.stack tests/bad/cases/*.stack; do
  [ -f "$f" ] && cp "$f" "$work/corpus/seed_$((i++))_$(basename "$f")"
done

# Run in an empty directory: the inputs' relative includes resolve there.
cd "$work/run"
ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
LSAN_OPTIONS=suppressions=$root/.ci/lsan.supp \
  nice -n 10 "$build/tests/fuzz/fuzz_circuit" \
    -max_total_time="$secs" -timeout=25 -report_slow_units=25 -rss_limit_mb=2048 -max_len=4096 \
    -dict="$root/tests/fuzz/circuit.dict" -artifact_prefix="$work/artifacts/" \
    -print_final_stats=1 "$work/corpus" >"$work/fuzz.log" 2>&1
rc=$?
tail -25 "$work/fuzz.log"
# crash-, leak-, timeout- and oom- files are faults; a slow-unit- file is only
# a note (an input that is legitimately large, such as a million instances)
found=$(ls "$work/artifacts" | grep -cv '^slow-unit-')
ls "$work/artifacts" | grep '^slow-unit-' | sed 's/^/fuzz: note: slow input /'
if [ "$rc" -ne 0 ] || [ "$found" -gt 0 ]; then
  mkdir -p "$build/fuzz-artifacts"
  cp "$work/artifacts/"* "$build/fuzz-artifacts/" 2>/dev/null
  cp "$work/fuzz.log" "$build/fuzz-artifacts/fuzz.log"
  echo "fuzz: FAILED (exit $rc, $found findings kept in $build/fuzz-artifacts)"
  exit 1
fi
echo "fuzz: ${secs} s, no crash"
