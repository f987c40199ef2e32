#!/bin/sh
# layout.format: every C++ file of ours is formatted as .clang-format says
# (Google style). Lists the files that are not and exits 1.
#   check_format.sh ROOT CLANG_FORMAT
set -u
root=$1
clang_format=$2
cd "$root" || exit 1
if git rev-parse --git-dir >/dev/null 2>&1; then
  files=$(git ls-files '*.h' '*.cc')
else
  files=$(find scorer monitor daemon tests -name '*.h' -o -name '*.cc')
fi
# One clang-format for all files; it names each file that would change.
out=$(echo "$files" | xargs "$clang_format" --dry-run --Werror 2>&1)
if [ -n "$out" ]; then
  echo "$out" | grep -o '^[^:]*\.\(h\|cc\):' | sort -u | sed 's/:$//' |
    while read -r f; do echo "not formatted: $f (run: $clang_format -i $f)"; done
  exit 1
fi
exit 0
