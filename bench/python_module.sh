#!/usr/bin/env bash
# The Python module on 1,000,000 invented obligors held in numpy arrays against the solve-only
# rate of the numpy peer (../shared/peers/merton_py.py, vectorised Newton) in the same run.
#
#   bash bench/python_module.sh
#
# Needs a build in build/ with the Python module (FIRMCALL_PYTHON), Debian's python3 with numpy
# and scipy, and the shared generator and peer beside the source tree (or in $FIRMCALL_SHARED).
# Prints both rates and the ratio.
set -euo pipefail
cd "$(dirname "$0")/.."
root=$(pwd)
shared="${FIRMCALL_SHARED:-$root/../shared}"  # the shared generator and peer; FIRMCALL_SHARED overrides
out="$root/bench/out"
mkdir -p "$out"
py=/usr/bin/python3
f="$out/obligors_1000000_py.csv"
[ -s "$f" ] || "$py" "$shared/tools/gen_obligors.py" --rows 1000000 --seed 20261201 --out "$f"
# The peer times its own solve (rows_per_s on standard error); its output file is not used.
peer_rate=$("$py" "$shared/peers/merton_py.py" "$f" "$out/peer_py_1000000.csv" --method newton 2>&1 >/dev/null |
  grep -o 'rows_per_s=[0-9]*' | cut -d= -f2)
PYTHONPATH="$root/build/python" "$py" - "$f" "$peer_rate" <<'PY'
import sys, time
import numpy as np
import firmcall
path, peer_rate = sys.argv[1], float(sys.argv[2])
names = ["market_cap", "equity_vol", "short_term_debt", "long_term_debt", "rate", "horizon"]
with open(path) as fh:
    header = fh.readline().strip().split(",")
data = np.genfromtxt(path, delimiter=",", skip_header=1, usecols=[header.index(n) for n in names])
cols = {n: np.ascontiguousarray(data[:, k]) for k, n in enumerate(names)}
cols["id"] = np.array([f"OBL-{i + 1:06d}" for i in range(len(data))])
best = float("inf")
for _ in range(3):  # the best of three runs of score() (conversion of the columns included)
    t0 = time.perf_counter()
    r = firmcall.score(cols)
    best = min(best, time.perf_counter() - t0)
rate = len(data) / best
print(f"python module, {len(data)} obligors from numpy arrays: {best:.3f} s, {rate:,.0f} obligors/s "
      f"({(r['status'] == 'ok').sum()} ok)")
print(f"peer solve only (vectorised numpy Newton):        {peer_rate:,.0f} obligors/s")
print(f"ratio: {rate / peer_rate:.1f}x")
PY
