#!/bin/sh
# Benchmark of `firmcall validate`: an invented outcomes file of ROWS rows (default 10,000,000),
# written by tools/gen_outcomes.py (fixed seed; kept in bench/out for the next run). Prints the
# wall time and peak memory (GNU time) of validating it with a second PD column, and the AUC with
# its interval. Memory holds the columns (PD, second PD, flag, grade: 21 bytes a row) and the
# sorted copies of the PDs; the file itself streams through a 1 MiB block.
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
echo "validating ..."
/usr/bin/time -v "$build/firmcall" validate "$file" --compare-column pd_alt --format json \
  --output "$out/validate.json" 2> "$out/time.txt" || { cat "$out/time.txt"; exit 1; }
awk -F': ' '/Elapsed \(wall clock\)/ {print "  wall time: " $2}
            /Maximum resident set size/ {printf "  peak memory: %.1f MiB\n", $2 / 1024}
            /User time/ {print "  user time (s): " $2}
            /validated PD column/ {print "  " $0}' "$out/time.txt"
