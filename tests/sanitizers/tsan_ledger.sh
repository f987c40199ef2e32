#!/usr/bin/env bash
# The ThreadSanitizer experiment of DEVELOPERS.md ("Sanitizers and
# fuzzing"): compiles the ledger (its writer, WAL syncer and checkpointer
# threads), what it needs (util, scorer, the generated messages) and the
# ledger's unit tests with clang -fsanitize=thread into var/tsan/, links
# Debian's uninstrumented Abseil, gRPC, protobuf and SQLite, and runs the
# tests, keeping every report in var/tsan/ledger_test.log. Not part of
# ops/check: see DEVELOPERS.md for what it reports and why.
#
# Needs build/ (ops/build) for the generated sources.
#
#   nice tests/sanitizers/tsan_ledger.sh
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/../.."

out=var/tsan
mkdir -p "$out/obj"
gen=build/proto/gen
sources=(daemon/ledger/*.cc daemon/util/*.cc scorer/*.cc
         "$gen"/plumbline/v1/*.pb.cc
         build/tests/testing/gen/grpc/health/v1/*.cc
         tests/testing/process.cc tests/testing/test_sets.cc
         tests/daemon/ledger/entries_test.cc tests/daemon/ledger/faults_test.cc
         tests/daemon/ledger/ledger_test.cc)
flags=(-fsanitize=thread -O1 -g -std=c++20 -pthread -I. -I"$gen" -Ibuild
       -Ibuild/tests/testing/gen -isystem /usr/include/eigen3
       -DPLUMBD_PATH=\"/bin/false\" -DPLUMBCTL_PATH=\"/bin/false\")

# Two compiles at a time (the machines have 2 cores).
objects=()
for src in "${sources[@]}"; do
  obj="$out/obj/$(echo "$src" | tr / _).o"
  objects+=("$obj")
  [[ -f "$obj" && "$obj" -nt "$src" ]] && continue
  while [[ $(jobs -rp | wc -l) -ge 2 ]]; do wait -n; done
  clang++ "${flags[@]}" -c "$src" -o "$obj" &
done
while [[ $(jobs -rp | wc -l) -gt 0 ]]; do wait -n; done
clang++ -fsanitize=thread -pthread -o "$out/ledger_test" "${objects[@]}" \
  $(pkg-config --libs grpc++ protobuf sqlite3 gmock gtest_main) \
  -Wl,--start-group /usr/lib/x86_64-linux-gnu/libabsl_*.so -Wl,--end-group

status=0
TSAN_OPTIONS="halt_on_error=0:second_deadlock_stack=1" \
  "$out/ledger_test" >"$out/ledger_test.log" 2>&1 || status=$?
echo "tsan ledger_test: exit $status;" \
  "$(grep -c '^WARNING: ThreadSanitizer' "$out/ledger_test.log" || true)" \
  "reports (log: $out/ledger_test.log)"
