#!/bin/sh
# Wall time and peak memory (GNU time, %M) of `firmcall portfolio` (exact one-factor
# distribution, no contributions) and `firmcall report --portfolio` on generated books of 10^4,
# 10^5 and 10^6 obligors (../shared/tools/gen_obligors.py, fixed seed).
#
# Usage: bench/portfolio_report_memory.sh [BUILD_DIR] [SIZES]
# Build first: cmake -S . -B build -DCMAKE_BUILD_TYPE=Release && cmake --build build -j2
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
build=${1:-$root/build}
sizes=${2:-"10000 100000 1000000"}
gen=${GEN:-$root/../shared/tools/gen_obligors.py}
# The generated books hold several currencies: amounts in EUR at the sample's invented rates.
fx="--reporting-currency EUR --fx $root/samples/demo_fx.csv"
python=${PYTHON:-/usr/bin/python3}
out=$here/out
mkdir -p "$out"

# measure LABEL ARGS...: runs firmcall under GNU time (exit code 1, rows left out, is accepted).
measure() {
  label=$1
  shift
  /usr/bin/time -f "%e %M" -o "$out/memory.time" "$build/firmcall" --quiet "$@" || {
    status=$?
    if [ "$status" -ne 1 ]; then exit "$status"; fi
  }
  awk -v label="$label" '{printf "  %-10s wall %7.2f s, peak memory %8.1f MiB\n", label, $1, $2 / 1024}' \
    "$out/memory.time"
}

for n in $sizes; do
  book="$out/memory_book_$n.csv"
  [ -f "$book" ] || "$python" "$gen" --rows "$n" --seed 11 --out "$book"
  echo "$n obligors"
  measure portfolio portfolio $fx --no-contributions --format csv --output "$out/memory_portfolio_$n.csv" "$book"
  measure report report "$book" --portfolio $fx --html "$out/memory_report_$n.html"
done
