#!/bin/sh
# Benchmark of the PD calibration: `firmcall calibrate` on 1,000,000 obligor-years (about 200,000
# invented obligors x 5 years from tools/gen_default_history.py, fixed seed; goal < 2 s), and the
# extra cost of `score --pd-calibration` on a 1,000,000-row CSV book (the sample book's rows
# repeated with fresh ids; goal < 10% over the same run without it). Prints the best of three wall
# times of each run.
#
# Usage: bench/calibration.sh [BUILD_DIR] [THREADS]
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
build=${1:-$root/build}
threads=${2:-2}
out=$here/out
mkdir -p "$out"
fc="$build/firmcall"

best() {  # best of three wall times (seconds) of the command "$@"
  b=""
  for _ in 1 2 3; do
    s=$(date +%s.%N)
    "$@" > /dev/null
    e=$(date +%s.%N)
    t=$(echo "$e - $s" | bc -l)
    if [ -z "$b" ] || [ "$(echo "$t < $b" | bc -l)" = 1 ]; then b=$t; fi
  done
  printf '%.3f' "$b"
}

python3 "$root/tools/gen_default_history.py" --obligors 205000 -o "$out/history_1m.csv"
for m in logistic isotonic binned; do
  echo "calibrate --method $m, $(($(wc -l < "$out/history_1m.csv") - 1)) obligor-years: $(best "$fc" -q calibrate "$out/history_1m.csv" --method $m --format json) s"
done
"$fc" -q calibrate "$out/history_1m.csv" --save "$out/cal_1m.yaml" > /dev/null

python3 - "$root/samples/demo_book.csv" "$out/book_1m.csv" <<'PY'
import sys
lines = open(sys.argv[1]).read().splitlines()
with open(sys.argv[2], "w") as f:
    f.write(lines[0] + "\n")
    for i in range(1000000):
        r = lines[1 + i % (len(lines) - 1)]
        f.write("B%d" % i + r[r.index(","):] + "\n")
PY
plain=$(best "$fc" -q score "$out/book_1m.csv" --format csv -j "$threads" -o "$out/score_plain.csv")
cal=$(best "$fc" -q score "$out/book_1m.csv" --format csv -j "$threads" --pd-calibration "$out/cal_1m.yaml" -o "$out/score_cal.csv")
echo "score 1,000,000 rows (-j $threads): $plain s; with --pd-calibration: $cal s; extra $(echo "($cal / $plain - 1) * 100" | bc -l | xargs printf '%.1f')%"
