#!/bin/sh
# Benchmark of `firmcall portfolio` on invented books from the shared generator
# (../shared/tools/gen_obligors.py, sector, ead and lgd columns; fixed seeds):
#   1. the exact one-factor loss distribution of 10,000 obligors, without and with the ES
#      contributions;
#   2. Monte Carlo of 1,000 obligors x 1,000,000 scenarios of the sector model, the sector factors
#      correlated by samples/sector_correlations.yaml, with the standard errors of every figure.
# Every obligor's PD is put on a one-year horizon (--horizon 1). Prints wall and CPU time (GNU
# time) and the figures of each run. IMPORTANCE=1 adds the Monte Carlo run with importance sampling.
#
# Usage: bench/portfolio_bench.sh [BUILD_DIR] [EXACT_OBLIGORS] [MC_OBLIGORS] [SCENARIOS] [THREADS]
# Build first: cmake -S . -B build -DCMAKE_BUILD_TYPE=Release && cmake --build build -j2
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
build=${1:-$root/build}
exact_n=${2:-10000}
mc_n=${3:-1000}
scenarios=${4:-1000000}
threads=${5:-}
gen=${GEN:-$root/../shared/tools/gen_obligors.py}
python=${PYTHON:-/usr/bin/python3}
out=$here/out
mkdir -p "$out"
jobs=""
# The generated books hold several currencies: amounts in EUR at the sample's invented rates.
fx="--reporting-currency EUR --fx $root/samples/demo_fx.csv"
if [ -n "$threads" ]; then jobs="--threads $threads"; fi

"$python" "$gen" --rows "$exact_n" --seed 1 --out "$out/portfolio_exact_book.csv"
"$python" "$gen" --rows "$mc_n" --seed 2 --out "$out/portfolio_mc_book.csv"

# run NAME ARGS...: runs firmcall under GNU time, prints the times, keeps the summary CSV.
run() {
  name=$1
  shift
  # shellcheck disable=SC2086
  /usr/bin/time -f "%e %U %S %M" -o "$out/$name.time" "$build/firmcall" --quiet portfolio "$@" $jobs $fx \
    --format csv --output "$out/$name.csv" --summary-output "$out/$name.summary.csv" || {
    status=$?
    if [ "$status" -ne 1 ]; then exit "$status"; fi
  }
  awk '{printf "  wall %.2f s, CPU %.2f s (user %.2f, system %.2f), peak memory %.1f MiB\n", $1, $2 + $3, $2, $3, $4 / 1024}' \
    "$out/$name.time"
}

# measures FILE METHOD: VaR and ES at each level (with standard errors when there are some).
measures() {
  awk -F, -v method="$2" '
    $2 == "total" && $4 == method && ($5 == "var" || $5 == "es" || $5 == "expected_loss") {
      se = ($8 == "") ? "" : sprintf(" (standard error %.4g)", $8)
      level = ($6 == "") ? "" : sprintf(" %g%%", 100 * $6)
      printf "  %s%s: %.6g%s\n", $5, level, $7, se
    }' "$1"
}

echo "exact one-factor distribution, $exact_n obligors, no contributions"
run exact --horizon 1 --no-contributions "$out/portfolio_exact_book.csv"
measures "$out/exact.summary.csv" exact_one_factor
echo "exact one-factor distribution, $exact_n obligors, with ES contributions"
run exact_contrib --horizon 1 "$out/portfolio_exact_book.csv"
awk -F, 'NR > 1 && $6 == "ok" { n++ } END { printf "  obligors in the portfolio: %d\n", n }' "$out/exact_contrib.csv"

echo "Monte Carlo, $mc_n obligors x $scenarios scenarios, 11 correlated sector factors"
run mc --horizon 1 --correlation "$root/samples/sector_correlations.yaml" --monte-carlo "$scenarios" \
  "$out/portfolio_mc_book.csv"
measures "$out/mc.summary.csv" monte_carlo
echo "  (exact one factor on the same book, all sectors on one factor:)"
measures "$out/mc.summary.csv" exact_one_factor | grep -v expected_loss

if [ "${IMPORTANCE:-0}" = 1 ]; then
  echo "Monte Carlo with importance sampling, same book and scenarios"
  run mc_is --horizon 1 --correlation "$root/samples/sector_correlations.yaml" --monte-carlo "$scenarios" \
    --importance-sampling "$out/portfolio_mc_book.csv"
  measures "$out/mc_is.summary.csv" monte_carlo
fi
