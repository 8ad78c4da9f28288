#!/usr/bin/env bash
# firmcall benchmark against the Python peer (../shared/peers/merton_py.py), all in one run.
#
#   bash bench/run.sh [--quick]
#
# Needs: a build in build/ (see README), python3 with numpy and scipy (Debian: python3-scipy),
# GNU time (/usr/bin/time, Debian: time). Inputs come from ../shared/tools/gen_obligors.py with fixed
# seeds (10,000 / 100,000 / 1,000,000 rows) into bench/out/. Every timing is the median of several
# runs; peak memory is the largest maximum resident set size seen. --quick skips the 1,000,000 file.
set -euo pipefail
cd "$(dirname "$0")/.."
root=$(pwd)
shared="$root/../shared"
out="$root/bench/out"
mkdir -p "$out"
py=/usr/bin/python3
[ -x "$py" ] || py=python3
if ! "$py" -c 'import numpy, scipy' 2>/dev/null; then
  echo "bench: $py lacks numpy/scipy; install them with: apt-get install -y python3-scipy" >&2
  exit 2
fi
[ -x /usr/bin/time ] || { echo "bench: /usr/bin/time missing; apt-get install -y time" >&2; exit 2; }
cmake --build build --target firmcall firmcall_solver_bench -j"$(nproc)" >/dev/null

sizes=(10000 100000 1000000)
[ "${1:-}" = "--quick" ] && sizes=(10000 100000)
runs_ours=5
runs_peer=3

median() { sort -g | awk '{a[NR]=$1} END {print (NR%2 ? a[(NR+1)/2] : (a[NR/2]+a[NR/2+1])/2)}'; }

# fresh OUTPUT: before a timed run (untimed, the same for both tools), delete the previous run's
# output and flush dirty pages, so that a run does not pay for freeing or writing back the file the
# run before it left (about 250 MB at 1,000,000 rows).
fresh() { rm -f "$1"; sync; }

# time_cmd FILE_FOR_RSS cmd...: prints wall seconds; appends max RSS (KB) to FILE_FOR_RSS
time_cmd() {
  local rss=$1; shift
  local t0 t1
  t0=$(date +%s.%N)
  /usr/bin/time -f "%M" -o "$out/.rss" "$@" >/dev/null 2>"$out/.stderr"
  t1=$(date +%s.%N)
  cat "$out/.rss" >> "$rss"
  awk -v a="$t0" -v b="$t1" 'BEGIN {printf "%.4f\n", b - a}'
}

printf '%-44s %14s %14s %10s\n' "measure" "firmcall" "peer" "ratio"
for n in "${sizes[@]}"; do
  f="$out/obligors_$n.csv"
  [ -s "$f" ] || "$py" "$shared/tools/gen_obligors.py" --rows "$n" --seed 20261201 --out "$f"
  : > "$out/rss_ours_$n"; : > "$out/rss_peer_$n"
  # firmcall end to end: parse, solve, write CSV
  ours=$(for i in $(seq $runs_ours); do fresh "$out/firmcall_$n.csv"; time_cmd "$out/rss_ours_$n" build/firmcall -q score "$f" --format csv -o "$out/firmcall_$n.csv"; done | median)
  # peer, vectorised Newton, end to end; its solve-only rate comes from its own stderr line
  peer_rates=()
  peer=$(for i in $(seq $runs_peer); do
    fresh "$out/peer_$n.csv"
    time_cmd "$out/rss_peer_$n" "$py" "$shared/peers/merton_py.py" "$f" "$out/peer_$n.csv" --method newton
    grep -o 'rows_per_s=[0-9]*' "$out/.stderr" | cut -d= -f2 >> "$out/peer_rate_$n.tmp"
  done | median)
  peer_rate=$(median < "$out/peer_rate_$n.tmp"); rm -f "$out/peer_rate_$n.tmp"
  printf '%-44s %13.3fs %13.3fs %9.1fx\n' "end to end CSV->CSV, $n rows (wall)" "$ours" "$peer" "$(awk -v a="$peer" -v b="$ours" 'BEGIN {print a / b}')"
  printf '%-44s %12.1fMB %12.1fMB\n' "  peak resident memory" "$(sort -n "$out/rss_ours_$n" | tail -1 | awk '{print $1/1024}')" \
    "$(sort -n "$out/rss_peer_$n" | tail -1 | awk '{print $1/1024}')"
  # solver alone, in process
  line=$(build/firmcall_solver_bench "$f" "$(nproc)" 5)
  rate=$(echo "$line" | grep -o ' rows_per_s=[0-9]*' | cut -d= -f2)
  ns1=$(echo "$line" | grep -o 'ns_per_obligor_1thread=[0-9.]*' | cut -d= -f2)
  its=$(echo "$line" | grep -o 'mean_iterations=[0-9.]*' | cut -d= -f2)
  same=$(echo "$line" | grep -o 'identical=[a-zA-Z]*' | cut -d= -f2)
  printf '%-44s %12.0f/s %12.0f/s %9.1fx\n' "  solve only, all cores (peer: vectorised)" "$rate" "$peer_rate" "$(awk -v a="$rate" -v b="$peer_rate" 'BEGIN {print a / b}')"
  printf '%-44s %12.1fns %14s %10s\n' "  solve only, one thread, per obligor" "$ns1" "" ""
  printf '%-44s %14s %14s %10s\n' "  mean Newton iterations; threads identical" "$its; $same" "" ""
  if [ "$n" = 10000 ]; then
    : > "$out/rss_fs"
    fs_rates=$(for i in $(seq $runs_peer); do
      fresh "$out/peer_fsolve_$n.csv"
      time_cmd "$out/rss_fs" "$py" "$shared/peers/merton_py.py" "$f" "$out/peer_fsolve_$n.csv" --method fsolve >/dev/null
      grep -o 'rows_per_s=[0-9]*' "$out/.stderr" | cut -d= -f2
    done | median)
    printf '%-44s %12.0f/s %12.0f/s %9.0fx\n' "  solve only vs per-row peer (fsolve)" "$rate" "$fs_rates" "$(awk -v a="$rate" -v b="$fs_rates" 'BEGIN {print a / b}')"
  fi
done
# Results agree with the peer (both solved rows), largest relative difference in asset value/vol.
n=${sizes[1]}
"$py" - "$out/firmcall_$n.csv" "$out/peer_$n.csv" <<'PY'
import csv, sys
ours = {r["id"]: r for r in csv.DictReader(open(sys.argv[1]))}
worst, both = 0.0, 0
for r in csv.DictReader(open(sys.argv[2])):
    o = ours.get(r["id"])
    if o is None or o["status"] != "ok" or r["status"] != "ok":
        continue
    both += 1
    for c in ("asset_value", "asset_vol"):
        a, b = float(o[c]), float(r[c])
        worst = max(worst, abs(a - b) / abs(b))
print(f"agreement with the peer on {both} rows: largest relative difference in V, sV = {worst:.3g}")
PY
