#!/usr/bin/env bash
# Coverage-guided fuzzing of levelhead's readers with libFuzzer (clang,
# AddressSanitizer, UndefinedBehaviorSanitizer).
#
#   scripts/fuzz.sh [SECONDS] [HARNESS...]
#
# SECONDS per harness (default 600); HARNESS among table, fieldbook, time,
# project, references, transducer (default all). Builds into build-fuzz/,
# keeps each harness's growing corpus in build-fuzz/corpus/HARNESS (seeded
# from the fixtures) and any finding in build-fuzz/findings/. Needs clang and
# its runtime (Debian: clang, libclang-rt-14-dev). A finding is replayed with
#   build-fuzz/tests/fuzz/fuzz_HARNESS build-fuzz/findings/HARNESS-crash-...
# and becomes a regression case (DEVELOPERS.md, "Fuzzing").
set -euo pipefail
cd "$(dirname "$0")/.."
seconds="${1:-600}"
shift || true
harnesses=("$@")
if [ ${#harnesses[@]} -eq 0 ]; then
  harnesses=(table fieldbook time project references transducer)
fi

cmake -S . -B build-fuzz -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCMAKE_CXX_COMPILER=clang++ \
  -DLEVELHEAD_FUZZ=ON -DLEVELHEAD_BUILD_TESTS=OFF -DLEVELHEAD_BUILD_BENCH=OFF >/dev/null
cmake --build build-fuzz -j"$(nproc)" --target $(printf 'fuzz_%s ' "${harnesses[@]}")

mkdir -p build-fuzz/findings
status=0
for harness in "${harnesses[@]}"; do
  corpus="build-fuzz/corpus/$harness"
  mkdir -p "$corpus"
  while IFS= read -r seed; do
    [ -n "$seed" ] || continue
    if [ -d "$seed" ]; then
      find "$seed" -maxdepth 1 -type f -exec cp -n {} "$corpus/" \;
    else
      cp -n "$seed" "$corpus/"
    fi
  done <"build-fuzz/tests/fuzz/fuzz_$harness.seeds"
  echo "== $harness: ${seconds} s"
  log="build-fuzz/findings/$harness.log"
  if ! "build-fuzz/tests/fuzz/fuzz_$harness" -max_total_time="$seconds" -print_final_stats=1 \
      -rss_limit_mb=4096 -max_len=4096 -artifact_prefix="build-fuzz/findings/$harness-" \
      "$corpus" >"$log" 2>&1; then
    status=1
    echo "   FINDING: see $log"
  fi
  grep -E "stat::number_of_executed_units|stat::average_exec_per_sec|stat::peak_rss_mb" "$log" |
    sed 's/^/   /' || true
done
exit $status
