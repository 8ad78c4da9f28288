#!/bin/sh
# Benchmark of `firmcall validate`: an invented outcomes file of ROWS rows (default 10,000,000),
# written by tools/gen_outcomes.py (fixed seed; kept in bench/out for the next run). Validates it
# twice, with the PD column alone and with a second PD column (--compare-column pd_alt), and
# prints for each the wall, user and system time and the peak memory (GNU time), and the AUC with
# its interval. Memory holds the columns (PD, flag, grade, segment, as-of date; with the second PD
# 8 bytes more a row) and, while a column is ranked, its keys twice (radix sort), with the rows
# for --compare-column; the file itself streams through a 1 MiB block.
#
# Usage: bench/validate.sh [BUILD_DIR] [ROWS]
# Build first: cmake -S . -B build -DCMAKE_BUILD_TYPE=Release && cmake --build build -j2
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
build=${1:-$root/build}
rows=${2:-10000000}
out=$here/out
mkdir -p "$out"
file=$out/outcomes_$rows.csv
if [ ! -s "$file" ]; then
  echo "generating $rows outcome rows ..."
  python3 "$root/tools/gen_outcomes.py" --rows "$rows" --seed 11 -o "$file.tmp" && mv "$file.tmp" "$file"
fi
ls -l "$file" | awk '{printf "  %s: %.1f MB\n", "outcomes", $5 / 1e6}'
measure() { # NAME ARGS...: one validation, its times and peak memory
  name=$1
  shift
  echo "validating ($name) ..."
  /usr/bin/time -v "$build/firmcall" validate "$file" "$@" --format json \
    --output "$out/validate_$name.json" 2> "$out/time_$name.txt" || { cat "$out/time_$name.txt"; exit 1; }
  awk -F': ' '/Elapsed \(wall clock\)/ {print "  wall time: " $2}
              /Maximum resident set size/ {printf "  peak memory: %.1f MiB\n", $2 / 1024}
              /User time/ {print "  user time (s): " $2}
              /System time/ {print "  system time (s): " $2}
              /validated PD column/ {print "  " $0}' "$out/time_$name.txt"
}
measure plain
measure compare --compare-column pd_alt
