#!/bin/sh
# Every C source file of the project through `gcc -m32 -fsyntax-only` (and the
# C++ file through `g++ -m32 -fsyntax-only`): the code must not depend on a
# 64-bit target (no unsigned __int128, no long the size of a pointer assumed).
# Usage: check_m32.sh SOURCE_ROOT.  Exit 0 all pass, 1 a file fails, 77 (skip)
# when the compiler cannot target 32 bits at all (gcc-multilib missing).
root=${1:-.}
cd "$root" || exit 1
probe=$(mktemp -d) || exit 1
trap 'rm -rf "$probe"' EXIT
printf '#include <stdio.h>\n#include <math.h>\nint main(void){return 0;}\n' > "$probe/p.c"
if ! gcc -m32 -fsyntax-only "$probe/p.c" 2>/dev/null; then
    echo "gcc -m32 cannot compile (install gcc-multilib): skipped"
    exit 77
fi
inc="-Iinclude -Isrc -I/usr/include/suitesparse $(pkg-config --cflags-only-I cairo 2>/dev/null) -DLS_HAVE_SPARSE"
# GMP's gmp.h (under FLINT's headers) lives in the build machine's multiarch
# directory; with no 32-bit copy installed it stands in, searched last: it
# declares the same interface (only the limb size differs, which the syntax of
# our files does not depend on).
inc="$inc -idirafter /usr/include/$(gcc -print-multiarch)"
fail=0
# one compiler run for all the C files (gcc names the file of each error)
files=$(git ls-files 'src/*.c' 'tests/*.c' 'include/*.c' 2>/dev/null || find src tests include -name '*.c')
n=$(echo "$files" | wc -w)
if ! gcc -m32 -std=c11 -D_GNU_SOURCE "-DLS_VERSION=\"m32\"" $inc -fsyntax-only -Wall -Wextra $files; then
    echo "FAIL: gcc -m32 -fsyntax-only (the errors above name the files)"
    fail=1
fi
printf '#include <cstdlib>\nint main(){return 0;}\n' > "$probe/p.cc"
if ! g++ -m32 -fsyntax-only "$probe/p.cc" 2>/dev/null; then
    echo "note: g++ -m32 has no 32-bit C++ headers here (g++-multilib): the C++ file is not checked"
    cc_files=""
else
    cc_files=$(git ls-files '*.cc' 2>/dev/null || find src -name '*.cc')
fi
for f in $cc_files; do
    n=$((n + 1))
    if ! g++ -m32 $inc -fsyntax-only -Wall -Wextra "$f"; then
        echo "FAIL: g++ -m32 -fsyntax-only $f"
        fail=1
    fi
done
echo "$n files checked for a 32-bit target"
exit $fail
