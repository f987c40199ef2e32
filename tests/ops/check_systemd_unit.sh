#!/bin/sh
# Checks ops/systemd/plumbd.service with systemd-analyze (Debian package
# systemd): `verify` must print nothing (it reports unknown keys and bad
# values as warnings and still exits 0, so any output fails the test), and
# the offline `security` review must rate the unit's exposure at most 2.0 on
# the 0-10 scale it prints (--threshold counts in tenths: 20; Plumbline
# default, no source; the unit scores 1.1 when written).
#
# verify also checks that ExecStart's binary exists, so it runs on a copy of
# the unit whose ExecStart names the plumbd just built instead of
# /usr/local/bin/plumbd; nothing else is changed.
#
# usage: check_systemd_unit.sh UNIT_FILE PLUMBD_BINARY SCRATCH_DIR
# Exit 77 (ctest SKIP_RETURN_CODE) when systemd-analyze is not installed.
set -u
unit=$1
plumbd=$2
scratch=$3

analyze=$(command -v systemd-analyze) || {
  echo "SKIP: systemd-analyze not found (Debian package systemd); the unit was not checked"
  exit 77
}
grep -q '^ExecStart=/usr/local/bin/plumbd ' "$unit" || {
  echo "FAIL: $unit has no 'ExecStart=/usr/local/bin/plumbd ...' line; update this test"
  exit 1
}
mkdir -p "$scratch" || exit 1
copy=$scratch/plumbd.service
sed "s|^ExecStart=/usr/local/bin/plumbd |ExecStart=$plumbd |" "$unit" > "$copy" || exit 1

out=$("$analyze" verify "$copy" 2>&1)
rc=$?
if [ $rc -ne 0 ] || [ -n "$out" ]; then
  echo "FAIL: systemd-analyze verify (exit $rc):"
  echo "$out"
  exit 1
fi
echo "systemd-analyze verify: no findings"

out=$("$analyze" security --offline=true --threshold=20 "$copy" 2>&1)
rc=$?
echo "$out" | tail -n 1
if [ $rc -ne 0 ]; then
  echo "FAIL: systemd-analyze security rates the unit above 2.0 (exit $rc):"
  echo "$out" | grep -v '^✓'
  exit 1
fi
