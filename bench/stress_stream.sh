#!/bin/sh
# Memory and speed of `firmcall stress` and `firmcall score --horizons` as the book grows: books of
# 10^4, 10^5 and 10^6 invented obligors from the shared generator (../shared/tools/gen_obligors.py,
# fixed seed), each run to CSV on /dev/null. Prints, per size, the peak resident memory (GNU time
# %M) and wall time of score, of stress under bench/stress_10_scenarios.yaml and of score
# --horizons 1,3,5,10, and the rows written per second of stress as a share of score's.
#
# Usage: [GEN_OBLIGORS=gen_obligors.py] bench/stress_stream.sh [BUILD_DIR] [THREADS] [SIZES]
# Build first: cmake -S . -B build -DCMAKE_BUILD_TYPE=Release && cmake --build build -j2
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
build=${1:-$root/build}
threads=${2:-2}
sizes=${3:-"10000 100000 1000000"}
gen=${GEN_OBLIGORS:-$root/../shared/tools/gen_obligors.py}  # the generator, if kept elsewhere
py=/usr/bin/python3
exe="$build/firmcall"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

# measure NAME ARGS...: runs firmcall, prints "NAME peak_mb wall_s" and keeps the wall time.
measure() {
  name=$1
  shift
  /usr/bin/time -f "%M %e" -o "$tmp/time" "$exe" -q "$@" -o /dev/null || true
  read -r kb wall <"$tmp/time"
  printf '  %-16s %8.1f MB %8.2f s\n' "$name" "$(echo "$kb / 1024" | bc -l)" "$wall"
  last_wall=$wall
}

for n in $sizes; do
  book="$tmp/book_$n.csv"
  "$py" "$gen" --rows "$n" --seed 19 --out "$book"
  echo "$n obligors (-j $threads):"
  measure score score "$book" -j "$threads"
  score_wall=$last_wall
  measure stress stress "$book" --scenarios "$here/stress_10_scenarios.yaml" -f csv -j "$threads"
  stress_wall=$last_wall
  measure "score --horizons" score "$book" --horizons 1,3,5,10 -f csv -j "$threads"
  # Rows per second: score writes n rows, stress n x 10.
  echo "$n $score_wall $stress_wall" | awk '{ if ($2 > 0 && $3 > 0)
    printf "  stress rows/s as a share of score: %.0f%%\n", 100 * (10 * $1 / $3) / ($1 / $2) }'
  rm -f "$book"
done
