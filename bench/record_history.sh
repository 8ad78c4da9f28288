#!/usr/bin/env bash
# Wall time and peak memory of `score --record` on generated books of 10^4, 10^5 and 10^6
# obligors (each into a fresh history store), and of `history` on 10^4 and 10^5 invented obligors
# x 260 trading days (tools/make_history.cpp).
#
#   bash bench/record_history.sh [BUILD_DIR]
#
# Needs a build (firmcall, firmcall_make_history), GNU time, and python3 with numpy for
# gen_obligors.py (set GEN_OBLIGORS to its path; default ../shared/tools/gen_obligors.py beside
# the repository). Files go to bench/out/ (not committed).
set -euo pipefail
cd "$(dirname "$0")/.."
root=$(pwd)
build=${1:-$root/build}
out="$root/bench/out"
mkdir -p "$out"
py=/usr/bin/python3
[ -x "$py" ] || py=python3
gen=${GEN_OBLIGORS:-$root/../shared/tools/gen_obligors.py}
fc="$build/firmcall"

# measure LABEL CMD...: wall seconds, CPU seconds and peak resident memory of one run
measure() {
  local label=$1
  shift
  /usr/bin/time -f "%e %U %S %M" -o "$out/.time" "$@" >/dev/null 2>"$out/.stderr" || {
    status=$?
    if [ "$status" -ne 1 ]; then
      cat "$out/.stderr"
      exit "$status"
    fi
  }
  awk -v l="$label" '{printf "%-40s %6.2f s wall  %6.2f s CPU  %7.1f MB peak\n", l, $1, $2 + $3, $4 / 1024}' \
    "$out/.time"
}

echo "firmcall record/history benchmark, $(nproc) cores"
for n in 10000 100000 1000000; do
  book="$out/record_book_$n.csv"
  [ -f "$book" ] || "$py" "$gen" --rows "$n" --seed 11 --out "$book"
  db="$out/record_$n.sqlite"
  rm -f "$db" "$db-journal"
  measure "score --record, $n obligors" "$fc" -q score "$book" --format csv --threads 2 --record --db "$db" \
    --as-of 2026-11-06
done
for n in 10000 100000; do
  dir="$out/history_$n"
  mkdir -p "$dir"
  [ -f "$dir/bench_prices.csv" ] || "$build/firmcall_make_history" bench "$dir" "$n" 260 >/dev/null
  measure "history, $n obligors x 260 days" "$fc" -q history "$dir/bench_book.csv" "$dir/bench_prices.csv" \
    --method iterative --format csv --threads 2
done
