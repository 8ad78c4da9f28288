#!/usr/bin/env bash
# Builds the libFuzzer targets with clang (ASan + UBSan) and runs each for SECONDS (default 600),
# seeded from samples/ and tests/bad_inputs/. Findings are written to build-fuzz/findings/; a
# crash input becomes a regression case in tests/bad_inputs/ once fixed.
#   bash tests/fuzz/run.sh [SECONDS] [TARGET...]
set -euo pipefail
cd "$(dirname "$0")/../.."
seconds=${1:-600}
shift || true
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=(fuzz_csv_book fuzz_yaml_book fuzz_numbers fuzz_scenarios fuzz_price_history
  fuzz_balance_sheets fuzz_correlation fuzz_settings)
CXX=clang++ cmake -S . -B build-fuzz -DFIRMCALL_FUZZ=ON -DFIRMCALL_WERROR=OFF -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build build-fuzz -j"$(nproc)" --target "${targets[@]}" >/dev/null
mkdir -p build-fuzz/findings
for t in "${targets[@]}"; do
  corpus=build-fuzz/corpus/$t
  mkdir -p "$corpus"
  case $t in
    fuzz_csv_book) cp samples/*.csv tests/bad_inputs/*.csv tests/bad_inputs/books/*.csv "$corpus"/ ;;
    fuzz_yaml_book) cp samples/*.yaml tests/bad_inputs/*.yaml tests/bad_inputs/books/*.y*ml "$corpus"/ ;;
    fuzz_numbers) printf '0.35' > "$corpus/a"; printf '1.5e3' > "$corpus/b"; printf -- '-0.01' > "$corpus/c" ;;
    fuzz_scenarios) cp samples/stress_scenarios.yaml bench/stress_10_scenarios.yaml tests/bad_inputs/scenarios/* "$corpus"/ ;;
    fuzz_price_history)
      cp samples/history_bad_prices.csv tests/bad_inputs/prices/* "$corpus"/
      head -40 samples/history_prices.csv >"$corpus"/short_prices.csv ;;
    fuzz_balance_sheets) cp samples/history_balance_sheets.csv tests/bad_inputs/balance_sheets/* "$corpus"/ ;;
    fuzz_correlation) cp samples/sector_correlations.yaml tests/bad_inputs/correlation/* "$corpus"/ ;;
    fuzz_settings) cp config/firmcall.yaml tests/bad_inputs/settings/* "$corpus"/ ;;
  esac
  # Long price histories make the mutations slow; a few hundred rows reach every branch.
  max_len=65536
  [ "$t" != fuzz_price_history ] && [ "$t" != fuzz_correlation ] || max_len=8192
  echo "== $t for ${seconds}s"
  build-fuzz/tests/fuzz/$t "$corpus" -max_total_time="$seconds" -max_len="$max_len" -timeout=10 \
    -rss_limit_mb=2048 -artifact_prefix=build-fuzz/findings/"$t"- -print_final_stats=1 2>&1 |
    grep -E '^(#[0-9]+.*DONE|stat::number_of_executed_units|stat::new_units_added|stat::average_exec_per_sec|==[0-9]+==ERROR|SUMMARY)' || true
done
ls build-fuzz/findings
