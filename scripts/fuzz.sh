#!/usr/bin/env bash
# Builds the libFuzzer targets in build-fuzz/ with clang (-fsanitize=fuzzer,address,undefined) and
# runs each for a fixed time, starting from the seed corpus in fuzz/corpus/<target>/.
# Usage: scripts/fuzz.sh [SECONDS_PER_TARGET] [TARGET...]
#   SECONDS_PER_TARGET  default 30 (CI-sized); use e.g. 3600 for a long run.
#   TARGET              fuzz_model_file, fuzz_term, fuzz_training_samples, fuzz_batch_manifest
#                       (default: all)
# Prints executions and findings per target and in total; exits 1 when anything was found. Inputs
# that crash are kept in build-fuzz/findings/<target>/ (reproduce: build-fuzz/fuzz/<target> FILE).
# New corpus entries go to build-fuzz/corpus/<target>/, never into the repository's seeds.
set -euo pipefail
cd "$(dirname "$0")/.."

seconds="${1:-30}"
shift || true
targets=("$@")
((${#targets[@]})) || targets=(fuzz_model_file fuzz_term fuzz_training_samples fuzz_batch_manifest)
[[ "$seconds" =~ ^[0-9]+$ ]] || { echo "fuzz.sh: SECONDS_PER_TARGET must be a whole number, got '$seconds'" >&2; exit 2; }

scripts/install-deps.sh --with-fuzz
cmake -S . -B build-fuzz -G Ninja -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCMAKE_CXX_COMPILER=clang++ \
  -DHABCAST_FUZZ=ON -DHABCAST_BUILD_TESTS=OFF >/dev/null
cmake --build build-fuzz --parallel 2 --target "${targets[@]}"

total_runs=0
total_findings=0
for target in "${targets[@]}"; do
  corpus="build-fuzz/corpus/$target"
  findings="build-fuzz/findings/$target"
  mkdir -p "$corpus" "$findings"
  log="build-fuzz/$target.log"
  # Exit status is ignored here: findings are counted from the files libFuzzer leaves behind.
  "build-fuzz/fuzz/$target" -max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 -print_final_stats=1 \
    -artifact_prefix="$findings/" "$corpus" "fuzz/corpus/${target#fuzz_}" >"$log" 2>&1 || true
  runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -1)
  runs=${runs:-0}
  found=$(find "$findings" -type f | wc -l)
  printf '%-24s %12s executions  %d findings\n' "$target" "$runs" "$found"
  if ((found > 0)); then
    grep -m3 -E 'ERROR|SUMMARY|deadly signal|uncaught' "$log" | sed 's/^/    /' || true
  fi
  total_runs=$((total_runs + runs))
  total_findings=$((total_findings + found))
done
printf '%-24s %12s executions  %d findings\n' "total" "$total_runs" "$total_findings"
((total_findings == 0))
