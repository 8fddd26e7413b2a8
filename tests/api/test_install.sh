#!/bin/bash
# Install into a temporary DESTDIR, check that every piece lands in its usual
# place, then build the embedding example against the installed loadstack.pc
# (found through PKG_CONFIG_PATH, with PKG_CONFIG_SYSROOT_DIR for the DESTDIR),
# link it both ways (shared, and the static archive), run it against the
# installed library, and compare its output with the in-tree build's; run the
# installed tutorial with the installed program; find the man pages with man.
# Usage: test_install.sh BUILD_DIR SOURCE_DIR IN_TREE_EXAMPLE   (env: CC, EXTRA_CFLAGS)
set -u
build=$1 src=$2 intree=$3
cc=${CC:-cc}
dest=$(mktemp -d)
trap 'rm -rf "$dest"' EXIT
fail() { echo "FAIL: $*"; exit 1; }

meson install -C "$build" --no-rebuild --destdir "$dest" --quiet >"$dest.log" 2>&1 \
    || { cat "$dest.log"; rm -f "$dest.log"; fail "meson install"; }
rm -f "$dest.log"

prefix=$(meson introspect "$build" --buildoptions | /usr/bin/python3 -c \
    'import json,sys; print(next(o["value"] for o in json.load(sys.stdin) if o["name"]=="prefix"))')
root=$dest$prefix
pc=$(find "$root" -name loadstack.pc | head -n 1)
[ -n "$pc" ] || fail "no loadstack.pc installed"
libdir=$(dirname "$(dirname "$pc")")

for f in bin/loadstack include/loadstack/loadstack.h share/man/man1/loadstack.1 \
         share/man/man5/loadstack-language.5 share/bash-completion/completions/loadstack \
         share/loadstack/circuits/demo.stack share/doc/loadstack/examples/bench_monitor.c \
         share/doc/loadstack/examples/bench_monitor.stack share/doc/loadstack/tutorial.md \
         share/doc/loadstack/tutorial/greenhouse1.stack; do
    [ -f "$root/$f" ] || fail "$f is not installed"
done
# Every page of docs/ (the user documentation) is installed, not only the tutorial.
for md in "$src"/docs/*.md; do
    [ -f "$root/share/doc/loadstack/$(basename "$md")" ] || fail "docs/$(basename "$md") is not installed"
done
[ -e "$libdir/libloadstack.so" ] || fail "no shared library in $libdir"
[ -f "$libdir/libloadstack.a" ] || fail "no static library in $libdir"
# No internal header may leak into the installed tree.
[ "$(find "$root/include" -type f | wc -l)" -eq 1 ] || fail "headers other than loadstack.h are installed"

export PKG_CONFIG_PATH=$(dirname "$pc") PKG_CONFIG_SYSROOT_DIR=$dest
pkg-config --exists loadstack || fail "pkg-config does not find loadstack"
[ "$(pkg-config --modversion loadstack)" = "$("$root/bin/loadstack" --version | sed 's/^loadstack //')" ] \
    || fail "pkg-config version differs from the program's"
cflags=$(pkg-config --cflags loadstack) libs=$(pkg-config --libs loadstack)
case "$cflags" in *"$root/include"*) ;; *) fail "cflags '$cflags' miss $root/include" ;; esac

ex=$root/share/doc/loadstack/examples
work=$dest/work
mkdir -p "$work"
# shellcheck disable=SC2086
$cc -std=c11 -Wall -Wextra -Werror ${EXTRA_CFLAGS:-} "$ex/bench_monitor.c" $cflags $libs -o "$work/shared" \
    || fail "the example does not build against the installed loadstack.pc"
# The archive instead of -lloadstack, which would find the shared library too.
static_libs=$(pkg-config --static --libs loadstack | sed 's/\(^\| \)-lloadstack\( \|$\)/ /')
# shellcheck disable=SC2086
$cc -std=c11 ${EXTRA_CFLAGS:-} "$ex/bench_monitor.c" $cflags "$libdir/libloadstack.a" $static_libs \
    -o "$work/static" \
    || fail "the example does not link with the static library and pkg-config --static"

# The installed header on its own: strict C99 and C11, and C++ when there is one.
printf '#include <loadstack/loadstack.h>\nint main(void) { return ls_version() == 0; }\n' >"$work/h.c"
for std in c99 c11; do
    # shellcheck disable=SC2086
    $cc -std=$std -pedantic -Wall -Wextra -Werror ${EXTRA_CFLAGS:-} -c "$work/h.c" $cflags -o "$work/h.o" \
        || fail "the installed header does not compile alone as $std"
done
if command -v c++ >/dev/null 2>&1; then
    cp "$work/h.c" "$work/h.cc"
    # shellcheck disable=SC2086
    c++ -Wall -Wextra -Werror -c "$work/h.cc" $cflags -o "$work/h.o" || fail "the installed header does not compile as C++"
fi
LD_LIBRARY_PATH=$libdir ldd "$work/shared" | grep -q "$libdir/libloadstack.so" \
    || fail "the shared example does not load the installed library"
want=$("$intree" "$ex/bench_monitor.stack") || fail "the in-tree example failed"
got=$(LD_LIBRARY_PATH=$libdir "$work/shared" "$ex/bench_monitor.stack") || fail "the installed example failed"
[ "$got" = "$want" ] || { diff <(echo "$want") <(echo "$got"); fail "installed and in-tree output differ"; }
ldd "$work/static" | grep -q libloadstack && fail "the static example still loads libloadstack.so"
got=$("$work/static" "$ex/bench_monitor.stack") || fail "the static example failed"
[ "$got" = "$want" ] || fail "static and in-tree output differ"
# The demo's first ADC channel misses its budget on purpose: check exits 1.
"$root/bin/loadstack" check "$root/share/loadstack/circuits/demo.stack" >/dev/null
[ $? -eq 1 ] || fail "the installed program does not check the installed demo circuit (want exit 1: p_adc misses its budget)"
# The installed tutorial, run with the installed program from where it lies.
/usr/bin/python3 "$src/tests/api/run_tutorial.py" "$root/share/doc/loadstack/tutorial.md" "$root/bin/loadstack" \
    >"$work/tutorial.log" 2>&1 || { cat "$work/tutorial.log"; fail "the installed tutorial does not run"; }
if command -v man >/dev/null 2>&1; then
    [ "$(MANPATH=$root/share/man man -w loadstack 2>/dev/null)" = "$root/share/man/man1/loadstack.1" ] \
        || fail "man does not find the installed loadstack(1) under \$prefix/share/man"
    [ "$(MANPATH=$root/share/man man -w 5 loadstack-language 2>/dev/null)" = "$root/share/man/man5/loadstack-language.5" ] \
        || fail "man does not find the installed loadstack-language(5)"
fi
bash -c "source '$root/share/bash-completion/completions/loadstack' && complete -p loadstack" 2>/dev/null \
    | grep -q -- "-F _loadstack loadstack" || fail "the installed completion does not register itself"
echo "install ok: $prefix under a DESTDIR; example built with $(basename "$pc") and run"
