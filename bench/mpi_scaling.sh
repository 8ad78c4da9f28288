#!/bin/sh
# Benchmark of the portfolio simulation shared between processes (docs/cluster.md): 10,000 invented
# obligors (../shared/tools/gen_obligors.py, seed 5) x 1,000,000 scenarios of the one-factor model,
# run by `mpirun -np 1` and `mpirun -np 2` of the MPI build, one thread per process; prints each
# run's wall time (GNU time), the speed-up, the throughput in obligor-scenarios per second, and
# checks that both runs wrote the same JSON. With a second build directory (BASE_BUILD, a build
# without MPI, e.g. of an earlier commit) it also times that build's single process on the same run,
# to compare one process's throughput (BASE_ARGS: options that build needs instead of the FX ones,
# for a build older than the currency options; the simulation's work is the same).
#
# Usage: bench/mpi_scaling.sh [MPI_BUILD_DIR] [OBLIGORS] [SCENARIOS]
# Build first: cmake -S . -B build-mpi -DCMAKE_BUILD_TYPE=Release -DFIRMCALL_MPI=ON &&
#              cmake --build build-mpi -j2 --target firmcall
# Needs Open MPI's mpirun (Debian: openmpi-bin) and GNU time (Debian: time).
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
build=${1:-$root/build-mpi}
obligors=${2:-10000}
scenarios=${3:-1000000}
gen=${GEN:-$root/../shared/tools/gen_obligors.py}
python=${PYTHON:-/usr/bin/python3}
out=$here/out
mkdir -p "$out"
book=$out/mpi_book_$obligors.csv
[ -f "$book" ] || "$python" "$gen" --rows "$obligors" --seed 5 --out "$book"
# The generated book holds several currencies: amounts in EUR at the sample's invented rates.
fx=${BASE_ARGS-"--reporting-currency EUR --fx $root/samples/demo_fx.csv"}
args="--quiet portfolio $book --reporting-currency EUR --fx $root/samples/demo_fx.csv --horizon 1 --monte-carlo $scenarios --threads 1 --format json"

# timed NAME COMMAND...: wall seconds of one run into $out/NAME.time; the JSON into $out/NAME.json.
timed() {
  name=$1
  shift
  # shellcheck disable=SC2086
  /usr/bin/time -f "%e" -o "$out/$name.time" "$@" -o "$out/$name.json" || {
    status=$?
    if [ "$status" -ne 1 ]; then exit "$status"; fi
  }
  cat "$out/$name.time"
}

mpirun="mpirun --allow-run-as-root --oversubscribe"
# shellcheck disable=SC2086
t1=$(timed np1 $mpirun -np 1 "$build/firmcall" $args)
# shellcheck disable=SC2086
t2=$(timed np2 $mpirun -np 2 "$build/firmcall" $args)
same=no
if cmp -s "$out/np1.json" "$out/np2.json"; then same=yes; fi
awk -v t1="$t1" -v t2="$t2" -v n="$obligors" -v s="$scenarios" -v same="$same" 'BEGIN {
  printf "obligors %d, scenarios %d, one thread per process\n", n, s
  printf "mpirun -np 1: %.2f s (%.3g obligor-scenarios/s)\n", t1, n * s / t1
  printf "mpirun -np 2: %.2f s (%.3g obligor-scenarios/s), speed-up %.2f\n", t2, n * s / t2, t1 / t2
  printf "identical JSON: %s\n", same
}'
if [ -n "${BASE_BUILD:-}" ]; then
  # shellcheck disable=SC2086
  base_args="--quiet portfolio $book $fx --horizon 1 --monte-carlo $scenarios --threads 1 --format json"
  # shellcheck disable=SC2086
  t0=$(timed base "$BASE_BUILD/firmcall" $base_args)
  awk -v t0="$t0" -v t1="$t1" -v n="$obligors" -v s="$scenarios" 'BEGIN {
    printf "base build, one process: %.2f s (%.3g obligor-scenarios/s); -np 1 / base throughput %.3f\n",
      t0, n * s / t0, t0 / t1
  }'
fi
