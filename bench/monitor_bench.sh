#!/usr/bin/env bash
# Time of monitoring 100,000 obligors: record two weekly runs into a fresh history store, then
# compare them (movers, watchlist) and attribute every PD change.
#
#   bash bench/monitor_bench.sh [ROWS]          (default 100000)
#
# Needs a build in build/ (see README) and python3 with numpy for ../shared/tools/gen_obligors.py.
# Week 1 is the generator's file (seed 3); week 2 is derived from it here with a fixed seed: every
# market value moves by a lognormal factor (sd 4%), every equity volatility by one of sd 3%, one
# name in fifty takes a shock (market value x0.5, volatility x1.5), one in two hundred leaves and
# two hundred new names join. Files and the store go to bench/out/ (not committed).
set -euo pipefail
cd "$(dirname "$0")/.."
root=$(pwd)
rows=${1:-100000}
out="$root/bench/out"
mkdir -p "$out"
py=/usr/bin/python3
[ -x "$py" ] || py=python3
cmake --build build --target firmcall -j2 >/dev/null
fc="$root/build/firmcall"

week1="$out/mon_week1.csv"
week2="$out/mon_week2.csv"
db="$out/mon_history.sqlite"
"$py" "$root/../shared/tools/gen_obligors.py" --rows "$rows" --seed 3 --out "$week1"
"$py" - "$week1" "$week2" <<'PY'
import csv, math, random, sys
src, dst = sys.argv[1], sys.argv[2]
rng = random.Random(20261113)
with open(src, newline="") as f:
    rows = list(csv.DictReader(f))
fields = list(rows[0].keys())
out = []
for r in rows:
    if rng.random() < 0.005:
        continue  # left the book
    shock = rng.random() < 0.02
    mc = float(r["market_cap"]) * math.exp(rng.gauss(0.0, 0.04)) * (0.5 if shock else 1.0)
    vol = min(float(r["equity_vol"]) * math.exp(rng.gauss(0.0, 0.03)) * (1.5 if shock else 1.0), 3.0)
    r = dict(r)
    r["market_cap"] = f"{max(mc, 0.01):.2f}"
    r["equity_vol"] = f"{vol:.4f}"
    out.append(r)
for k in range(200):
    r = dict(rows[k])
    r["id"] = f"NEW-{k + 1:06d}"
    r["name"] = f"New obligor {k + 1}"
    out.append(r)
with open(dst, "w", newline="") as f:
    w = csv.DictWriter(f, fieldnames=fields, lineterminator="\n")
    w.writeheader()
    w.writerows(out)
PY
rm -f "$db" "$db-journal"

# seconds CMD...: wall time of one run, and its CPU time (user + system) when GNU time is there
# (on a shared machine the CPU time is the steadier figure); output discarded
seconds() {
  if [ -x /usr/bin/time ]; then
    /usr/bin/time -f "%e %U %S" -o "$out/.time" "$@" >/dev/null
    awk '{printf "%.2f s wall, %.2f s CPU", $1, $2 + $3}' "$out/.time"
  else
    local t0 t1
    t0=$(date +%s.%N)
    "$@" >/dev/null
    t1=$(date +%s.%N)
    awk -v a="$t0" -v b="$t1" 'BEGIN {printf "%.2f s wall", b - a}'
  fi
}

echo "firmcall monitoring benchmark: $rows obligors, $(nproc) cores"
echo "score week 1 (no store)        $(seconds "$fc" -q score "$week1" --format csv --threads 2)"
echo "score + record week 1          $(seconds "$fc" -q score "$week1" --format csv --threads 2 --record --db "$db" --as-of 2026-11-06)"
echo "score + record week 2          $(seconds "$fc" -q score "$week2" --format csv --threads 2 --record --db "$db" --as-of 2026-11-13)"
echo "movers (CSV, every obligor)    $(seconds "$fc" -q movers --db "$db" --format csv)"
echo "watchlist (table)              $(seconds "$fc" -q watchlist --db "$db")"
echo "attribute (CSV, 2 threads)     $(seconds "$fc" -q attribute --db "$db" --format csv --threads 2)"
echo "store size                     $(du -h "$db" | cut -f1)"
"$fc" -q watchlist --db "$db" --format csv | awk -F, 'NR > 1 {n++} END {print "on the watchlist               " n+0 " obligors"}'
