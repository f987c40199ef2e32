#!/bin/sh
# layout.format: every C++ file of ours is formatted as .clang-format says
# (Google style). Prints the files that are not and exits 1.
#   check_format.sh ROOT CLANG_FORMAT
set -u
root=$1
clang_format=$2
cd "$root" || exit 1
bad=0
for f in $(git ls-files '*.h' '*.cc' 2>/dev/null || find scorer monitor daemon tests -name '*.h' -o -name '*.cc'); do
  if ! "$clang_format" --dry-run --Werror "$f" >/dev/null 2>&1; then
    echo "not formatted: $f (run: $clang_format -i $f)"
    bad=1
  fi
done
exit $bad
