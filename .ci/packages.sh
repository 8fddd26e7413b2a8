#!/usr/bin/env bash
# Build the Debian packages from a copy of the tree, check them with lintian,
# install them, run `loadstack demo`, the Python module and the bench example
# from the installed files, and remove them.  Exit 0 only when every step did.
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
work=$(mktemp -d /tmp/loadstack-deb.XXXXXX)
pkgs=(loadstack libloadstack0 libloadstack-dev python3-loadstack)
cleanup() {
  DEBIAN_FRONTEND=noninteractive apt-get remove -y -qq "${pkgs[@]}" >/dev/null 2>&1 || true
  rm -rf "$work"
}
trap cleanup EXIT

# the committed tree when it is a git checkout, else the files as they are
if git -C "$src" rev-parse --git-dir >/dev/null 2>&1; then
  git -C "$src" ls-files -z --cached --others --exclude-standard \
    | (cd "$src" && xargs -0 tar -cf - --no-recursion) | (mkdir -p "$work/loadstack" && tar -xf - -C "$work/loadstack")
else
  mkdir -p "$work/loadstack" && (cd "$src" && tar -cf - --exclude='./build*' .) | tar -xf - -C "$work/loadstack"
fi
cd "$work/loadstack"
DEB_BUILD_OPTIONS="nocheck parallel=2" dpkg-buildpackage -b -us -uc >"$work/build.log" 2>&1 \
  || { tail -40 "$work/build.log"; exit 1; }
cd "$work"
# lintian: no errors (warnings and notes are listed for people, not failed on)
lintian --fail-on error ./*.deb
DEBIAN_FRONTEND=noninteractive apt-get install -y -qq ./loadstack_*.deb ./libloadstack0_*.deb \
  ./libloadstack-dev_*.deb ./python3-loadstack_*.deb >/dev/null
cd /
loadstack demo >/dev/null
/usr/bin/python3 -c "import loadstack; print(loadstack.Circuit.from_file('/usr/share/loadstack/circuits/demo.stack').solve().ports)"
# the bench example flags its one out-of-spread reading: exit 1 is its verdict
rc=0
/usr/bin/python3 /usr/share/doc/python3-loadstack/examples/bench_check.py || rc=$?
[ "$rc" = 1 ] || { echo "bench_check.py exited $rc, expected 1 (one reading out of spread)"; exit 1; }
pkg-config --modversion loadstack >/dev/null
echo "packages: built, lintian clean of errors, installed, run, removed"
