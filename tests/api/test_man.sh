#!/bin/bash
# The man pages: both render with groff's man macros with every warning on
# (-ww) and, when man-db is present, through `man -l --warnings`, without a
# single warning; loadstack(1) names every command and option that the
# program's own --help lists, and every exit code; loadstack-language(5) names
# every part kind of the part table and every statement keyword, and its
# EXAMPLE circuit passes `loadstack check`.
# Usage: test_man.sh SOURCE_ROOT LOADSTACK
set -u
src=$1 prog=$2
m1=$src/man/loadstack.1 m5=$src/man/loadstack-language.5
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }

for page in "$m1" "$m5"; do
    if ! LC_ALL=C.UTF-8 groff -ww -man -Tutf8 "$page" >"$work/out" 2>"$work/err"; then
        fail "groff exits non-zero on $page"
    fi
    [ -s "$work/err" ] && { fail "groff warns on $(basename "$page"):"; cat "$work/err"; }
    [ "$(wc -l <"$work/out")" -gt 40 ] || fail "$(basename "$page") renders to almost nothing"
    if command -v man >/dev/null 2>&1; then
        LC_ALL=C.UTF-8 MANWIDTH=80 man --warnings -l "$page" >/dev/null 2>"$work/err"
        [ -s "$work/err" ] && { fail "man -l warns on $(basename "$page"):"; cat "$work/err"; }
    fi
done

# Text of a page with the font escapes and \- removed, for searching.
plain() { sed -e 's/\\f[BIRP]//g' -e 's/\\-/-/g' -e 's/\\&//g' "$1"; }
plain "$m1" >"$work/m1"
plain "$m5" >"$work/m5"

commands=$("$prog" --help | sed -n '/^commands:/,/^$/s/^  \([a-z]\{1,\}\) .*/\1/p')
[ -n "$commands" ] || fail "no commands read from loadstack --help"
for c in $commands; do
    sed -n '/^\.SH COMMANDS/,/^\.SH /p' "$work/m1" | grep -A1 '^\.TP$' | grep -qE "^\.BI? \"?$c( |\"|$)" \
        || fail "loadstack.1 has no entry for the command '$c'"
    for o in $("$prog" "$c" --help | sed -n 's/^  \(--[a-z-]*\).*/\1/p'); do
        grep -qE "^\.(B|BI|BR) $o( |$)" "$work/m1" || fail "loadstack.1 does not describe $o (an option of $c)"
    done
done
# ENVIRONMENT names the variables the program reads; WARNING CODES every code of docs/warnings.md.
for var in LOADSTACK_THREADS LOADSTACK_TIMING; do
    grep -rq --include="*.c" "$var" "$src/src/" || fail "$var is no longer read by the program; update loadstack.1"
    sed -n '/^\.SH ENVIRONMENT/,/^\.SH /p' "$work/m1" | grep -q "^\.B $var$" \
        || fail "loadstack.1's ENVIRONMENT does not describe $var"
done
for wc in $(sed -n 's/^### `\([a-z0-9-]*\)`$/\1/p' "$src/docs/warnings.md"); do
    sed -n '/^\.SH WARNING CODES/,/^\.SH /p' "$work/m1" | grep -q "^\.B $wc$" \
        || fail "loadstack.1's WARNING CODES does not list '$wc' (docs/warnings.md)"
done
for code in 0 1 2 3; do
    sed -n '/^\.SH EXIT STATUS/,/^\.SH /p' "$work/m1" | grep -q "^\.B $code$" || fail "exit code $code is not in loadstack.1"
done

kinds=$(sed -n 's/.*{\.name = "\([a-z]*\)", \.shape.*/\1/p' "$src/src/parts/kinds.c")
[ -n "$kinds" ] || fail "no part kinds read from src/parts/kinds.c"
for k in $kinds; do
    grep -qE "^\.B $k$|^$k NAME" "$work/m5" || fail "loadstack-language.5 does not describe the part kind '$k'"
done
for kw in title let ground include block use expect rule end; do
    grep -qE "^\.BI? $kw( |$)|^$kw( |$)" "$work/m5" || fail "loadstack-language.5 does not describe the keyword '$kw'"
done

# The EXAMPLE circuit, taken from between .EX and .EE of its section.
sed -n '/^\.SH EXAMPLE/,/^\.SH /p' "$m5" | sed -n '/^\.EX/,/^\.EE/p' | sed -e '/^\.E[XE]$/d' -e 's/\\-/-/g' \
    >"$work/example.stack"
[ "$(grep -c . "$work/example.stack")" -gt 5 ] || fail "no example circuit in loadstack-language.5"
"$prog" check "$work/example.stack" >"$work/check.out" 2>&1 \
    || { fail "the example of loadstack-language.5 does not pass loadstack check"; cat "$work/check.out"; }

[ $failures -eq 0 ] || exit 1
echo "man pages ok"
