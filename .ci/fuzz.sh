#!/usr/bin/env bash
# A fuzz session: CI's is about a minute; before a release the project runs
# `bash .ci/fuzz.sh 1800` (30 minutes, or longer).  The one argument is the
# length in seconds (default: $LOADSTACK_FUZZ_SECONDS, else 60), shared by the
# two libFuzzer targets: tests/fuzz/fuzz_circuit (parse to solve and the JSON
# report) and tests/fuzz/fuzz_commands (every command and report format, the
# output module and the C interface; docs/limits.md).  Each is built with
# clang and run on the stored corpus, the fuzzing
# regressions, the example circuits and the bad-input corpus, and fails on any
# crash, leak, undefined behaviour, timeout (25 s for one input: the largest
# legal expansion, about a million block instances, takes some 5 s, 10 s under
# the sanitizers) or out-of-memory (2 GB) it finds.  The program is told it
# may hold 512 MB (LOADSTACK_TEST_MEMORY_MB, read for the tests only), as an
# address-space limit would tell it outside the sanitizers: its memory-derived
# part limit then refuses what would not fit the fuzzer's 2 GB.  What it
# finds is kept under $build/fuzz-artifacts; add it to tests/fuzz/regressions/
# and fix it.
#   LOADSTACK_FUZZ_SECONDS  length of the session (default 60)
#   LOADSTACK_FUZZ_BUILD    build directory (default build-fuzz)
#   LOADSTACK_FUZZ_KEEP     a directory to keep the session in: both targets'
#                           logs (executions, coverage) and the grown corpus
#                           (for a release run's record; default: nothing kept)
set -uo pipefail
cd "$(dirname "$0")/.."
root=$PWD
secs=${1:-${LOADSTACK_FUZZ_SECONDS:-60}}
case $secs in *[!0-9]*|'') echo "fuzz: the length is a whole number of seconds, not '$secs'"; exit 2 ;; esac
build=${LOADSTACK_FUZZ_BUILD:-build-fuzz}
case $build in /*) ;; *) build=$root/$build ;; esac

if [ -d "$build" ]; then
  meson setup --reconfigure "$build" -Dfuzz=true >/tmp/ci-fuzz-setup.log 2>&1
else
  CC=clang CXX=clang++ meson setup "$build" -Dfuzz=true >/tmp/ci-fuzz-setup.log 2>&1
fi || { tail -30 /tmp/ci-fuzz-setup.log; echo "fuzz: setup failed"; exit 1; }
ninja -C "$build" tests/fuzz/fuzz_circuit tests/fuzz/fuzz_commands >/tmp/ci-fuzz-build.log 2>&1 \
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
# Each target gets half the time; its own corpus grows in $work.
cp tests/fuzz/corpus_commands/* "$work/corpus/" 2>/dev/null
half=$(( secs / 2 > 0 ? secs / 2 : 1 ))
cd "$work/run"
rc=0
for target in fuzz_circuit fuzz_commands; do
  ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
  LSAN_OPTIONS=suppressions=$root/.ci/lsan.supp LOADSTACK_SELFCHECK=abort LOADSTACK_TEST_MEMORY_MB=512 \
    nice -n 10 "$build/tests/fuzz/$target" \
      -max_total_time="$half" -timeout=25 -report_slow_units=25 -rss_limit_mb=2048 -max_len=4096 \
      -dict="$root/tests/fuzz/circuit.dict" -artifact_prefix="$work/artifacts/${target}-" \
      -print_final_stats=1 "$work/corpus" >"$work/$target.log" 2>&1 || rc=$?
  tail -8 "$work/$target.log"
  # a finding's own report (the sanitizer's or libFuzzer's, with its stack
  # and the input), printed last so a CI log's tail says where it was even
  # when the artifacts are gone with the run
  if grep -q -E '^==[0-9]+== ?ERROR|runtime error:' "$work/$target.log"; then
    { echo "fuzz: $target's report of its finding:"
      sed -n '/^==[0-9]*== \{0,1\}ERROR\|runtime error:/,/^SUMMARY: /p' "$work/$target.log" | head -60
      for a in "$work"/artifacts/"$target"-*; do
        case $a in *slow-unit-*) continue ;; esac
        [ -f "$a" ] && { echo "fuzz: $(basename "$a"), $(wc -c < "$a") bytes, base64:"; head -c 4096 "$a" | base64; }
      done
    } >> "$work/findings.txt"
  fi
done
cat "$work"/fuzz_*.log > "$work/fuzz.log"
if [ -n "${LOADSTACK_FUZZ_KEEP:-}" ]; then
  mkdir -p "$LOADSTACK_FUZZ_KEEP/corpus"
  cp "$work"/fuzz_*.log "$LOADSTACK_FUZZ_KEEP/"
  cp "$work/corpus/"* "$LOADSTACK_FUZZ_KEEP/corpus/" 2>/dev/null
  cp -r "$work/artifacts" "$LOADSTACK_FUZZ_KEEP/" 2>/dev/null
fi
# crash-, leak-, timeout- and oom- files are faults; a slow-unit- file is only
# a note (an input that is legitimately large, such as a million instances)
found=$(ls "$work/artifacts" | grep -cv 'slow-unit-')
ls "$work/artifacts" | grep 'slow-unit-' | sed 's/^/fuzz: note: slow input /'
if [ "$rc" -ne 0 ] || [ "$found" -gt 0 ]; then
  mkdir -p "$build/fuzz-artifacts"
  cp "$work/artifacts/"* "$build/fuzz-artifacts/" 2>/dev/null
  cp "$work/fuzz.log" "$build/fuzz-artifacts/fuzz.log"
  [ -f "$work/findings.txt" ] && cat "$work/findings.txt"
  echo "fuzz: FAILED (exit $rc, $found findings kept in $build/fuzz-artifacts)"
  exit 1
fi
echo "fuzz: ${secs} s over two targets, no crash"
