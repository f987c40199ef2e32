#!/bin/sh
# ops.install: `cmake --install` into a scratch prefix puts plumbd, plumbctl,
# the systemd unit, the sample config, the man pages and the bash completion
# where README "In production" says (and not the Debian package's own files,
# which go to /etc and /lib),
# the installed programs run, and the unit's ExecStart names plumbd under the
# build's default prefix (so `cmake --install build` then the unit works).
#
#   check_install.sh CMAKE BUILD_DIR SCRATCH_PREFIX DEFAULT_PREFIX UNIT_FILE
set -eu
cmake=$1 build=$2 prefix=$3 default_prefix=$4 unit=$5
rm -rf "$prefix"
"$cmake" --install "$build" --prefix "$prefix" >/dev/null
fail() { echo "ops.install: $*" >&2; exit 1; }
for f in bin/plumbd bin/plumbctl; do
  [ -x "$prefix/$f" ] || fail "$f missing or not executable"
done
for f in lib/systemd/system/plumbd.service share/plumbline/plumbd.production.json \
         share/plumbline/README.md share/man/man8/plumbd.8.gz \
         share/man/man1/plumbctl.1.gz share/bash-completion/completions/plumbctl; do
  [ -f "$prefix/$f" ] || fail "$f missing"
done
# The package's own files (component deb) stay out of a plain install.
[ ! -e "$prefix/share/doc/plumbline/copyright" ] ||
  fail "share/doc/plumbline/copyright is installed, but only the Debian package should install it"
cmp -s "$unit" "$prefix/lib/systemd/system/plumbd.service" ||
  fail "installed unit differs from $unit"
# The installed programs run (their --help exits 0 or 1 with a usage text).
for p in plumbd plumbctl; do
  out=$("$prefix/bin/$p" --help 2>&1) || true
  [ -n "$out" ] || fail "$p --help printed nothing"
done
exec_start=$(sed -n 's/^ExecStart=\([^ ]*\).*/\1/p' "$unit")
[ "$exec_start" = "$default_prefix/bin/plumbd" ] ||
  fail "the unit starts $exec_start, but cmake --install puts plumbd in $default_prefix/bin"
echo "ops.install: installed under $prefix; the unit starts $exec_start"
