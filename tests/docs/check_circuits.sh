#!/usr/bin/env bash
# Every circuit in circuits/ must pass its own expects (`loadstack check` exit 0),
# and the built-in demo must solve.
set -u
exe=$1 dir=$2
fail=0 n=0
for f in "$dir"/*.stack; do
  n=$((n + 1))
  if ! "$exe" check "$f" >/dev/null 2>/tmp/check_circuits.err; then
    echo "FAIL: $f"; cat /tmp/check_circuits.err; fail=1
  else
    echo "ok   $f"
  fi
done
"$exe" demo >/dev/null || { echo "FAIL: loadstack demo"; fail=1; }
[ "$n" -ge 4 ] || { echo "FAIL: expected at least 4 circuits, found $n"; fail=1; }
exit $fail
