#!/bin/sh
# Benchmark of `firmcall history --method iterative`: invented obligors (default 10,000) x trading
# days (default 252), written by tools/make_history.cpp (fixed seed). Prints the wall time and
# peak memory of the estimation run (GNU time), and how well the simulated asset volatilities
# were recovered: the mean and root mean square of (sV_hat - sV) / (sV / sqrt(2n)), the error in
# units of the asymptotic standard error (common practice; leverage makes the true error larger).
#
# Usage: bench/history_bench.sh [BUILD_DIR] [OBLIGORS] [DAYS] [THREADS]
# Build first: cmake -S . -B build -DCMAKE_BUILD_TYPE=Release && cmake --build build -j2
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
build=${1:-$root/build}
obligors=${2:-10000}
days=${3:-252}
threads=${4:-}
out=$here/out
mkdir -p "$out"

echo "generating $obligors obligors x $days days ..."
"$build/firmcall_make_history" bench "$out" "$obligors" "$days"
ls -l "$out/bench_prices.csv" | awk '{printf "  bench_prices.csv: %.1f MB\n", $5 / 1e6}'

jobs=""
if [ -n "$threads" ]; then jobs="--threads $threads"; fi
echo "estimating (iterative) ..."
# shellcheck disable=SC2086
/usr/bin/time -v "$build/firmcall" --quiet history "$out/bench_book.csv" "$out/bench_prices.csv" \
  --method iterative --format csv --output "$out/history_iterative.csv" $jobs 2> "$out/time.txt" || {
  status=$?
  cat "$out/time.txt"
  if [ "$status" -ne 1 ]; then exit "$status"; fi
}
awk -F': ' '/Elapsed \(wall clock\)/ {print "  wall time: " $2}
            /Maximum resident set size/ {printf "  peak memory: %.1f MiB\n", $2 / 1024}
            /User time/ {print "  user time (s): " $2}
            /System time/ {print "  system time (s): " $2}' "$out/time.txt"

# Recovery against the simulated truth; n = days - 1 returns.
awk -F, -v n=$((days - 1)) '
  FNR == 1 { next }
  FILENAME ~ /bench_truth/ { truth[$1] = $2; next }
  { total++ }
  $3 == "ok" { ok++; iters += $30; z = ($15 - truth[$1]) / (truth[$1] / sqrt(2 * n)); s += z; s2 += z * z }
  END {
    printf "  obligors: %d, estimated: %d, mean passes: %.2f\n", total, ok, iters / ok
    printf "  sV error / asymptotic SE: mean %.3f, rms %.3f\n", s / ok, sqrt(s2 / ok)
  }' "$out/bench_truth.csv" "$out/history_iterative.csv"
