#!/usr/bin/env python3
"""`mpirun -np N firmcall portfolio ... --monte-carlo S` (a build with FIRMCALL_MPI=ON): the JSON
of the sample book is byte for byte the same for 1 and 2 processes and 1 or 2 threads each, with
and without importance sampling, one factor and the sector factors; a failure on any one process
ends the run everywhere with that process's message and exit code 2, and writes no output file.
Open MPI's mpirun (Debian: openmpi-bin); --oversubscribe lets 2 processes share fewer cores, and
--allow-run-as-root lets CI run as root.

    mpi_run_check.py FIRMCALL MPIRUN SOURCE_DIR
"""
import os
import pathlib
import subprocess
import sys
import tempfile

firmcall, mpirun, root = sys.argv[1], sys.argv[2], pathlib.Path(sys.argv[3])
book = root / "samples" / "demo_book.yaml"
sectors = root / "samples" / "sector_correlations.yaml"
# The sample book holds 15 currencies: the portfolio in EUR at the sample's invented rates.
fx = ["--reporting-currency", "EUR", "--fx", str(root / "samples" / "demo_fx.csv")]
env = dict(os.environ, OMPI_MCA_rmaps_base_oversubscribe="1")
failures = []


def mpi(parts, timeout=300):
    """Runs mpirun with one or more 'np:args' parts (MPMD: each part its own arguments)."""
    cmd = [mpirun, "--allow-run-as-root", "--oversubscribe"]
    for i, (np_, args) in enumerate(parts):
        if i:
            cmd.append(":")
        cmd += ["-np", str(np_), firmcall] + args
    return subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, env=env)


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


with tempfile.TemporaryDirectory() as tmp:
    tmp = pathlib.Path(tmp)
    runs = {
        "one factor": ["--monte-carlo", "200000"],
        "one factor, importance sampling": ["--monte-carlo", "200000", "--importance-sampling"],
        "sector factors": ["--monte-carlo", "150001", "--correlation", str(sectors)],
        "sector factors, importance sampling": ["--monte-carlo", "150001", "--correlation", str(sectors),
                                                "--importance-sampling"],
    }
    for name, extra in runs.items():
        outputs = {}
        for np_ in (1, 2):
            for threads in (1, 2):
                out = tmp / f"{len(outputs)}.json"
                args = ["-q", "portfolio", str(book)] + fx + ["--horizon", "1", "--format", "json", "-o", str(out),
                        "--threads", str(threads)] + extra
                p = mpi([(np_, args)])
                check(p.returncode == 0, f"{name}: -np {np_} --threads {threads} runs (exit {p.returncode}"
                      f"{': ' + p.stderr.strip() if p.returncode else ''})")
                if p.returncode == 0:
                    outputs[(np_, threads)] = out.read_bytes()
        if len(outputs) == 4:
            ref = outputs[(1, 1)]
            check(b'"monte_carlo"' in ref or b"monte_carlo" in ref, f"{name}: the JSON holds the simulation")
            for key, data in outputs.items():
                check(data == ref, f"{name}: -np {key[0]} --threads {key[1]} JSON identical to -np 1 "
                      f"--threads 1 ({len(data)} bytes)")

    # A failure on one process: process 1 reads a book that does not exist.
    good = ["-q", "portfolio", str(book)] + fx + ["--horizon", "1", "--monte-carlo", "100000", "--format", "json"]
    missing = str(tmp / "no_such_book.csv")
    bad = ["-q", "portfolio", missing] + fx + ["--horizon", "1", "--monte-carlo", "100000", "--format", "json"]
    out = tmp / "failed.json"
    p = mpi([(1, good + ["-o", str(out)]), (1, bad + ["-o", str(out)])])
    check(p.returncode == 2, f"process 1 failing: exit 2 (got {p.returncode})")
    ours = [x for x in p.stderr.splitlines() if x.startswith("firmcall:")]
    check(len(ours) == 1 and "process 1 of 2" in ours[0] and "no_such_book.csv" in ours[0],
          f"process 1 failing: its message, naming it, once, on the root: {ours!r}")
    check(not out.exists(), "process 1 failing: no output file")
    p = mpi([(1, bad + ["-o", str(out)]), (1, good + ["-o", str(out)])])
    check(p.returncode == 2, f"the root failing: exit 2 (got {p.returncode})")
    ours = [x for x in p.stderr.splitlines() if x.startswith("firmcall:")]
    check(len(ours) == 1 and "no_such_book.csv" in ours[0] and " of 2:" not in ours[0],
          f"the root failing: its own message, once: {ours!r}")
    check(not out.exists(), "the root failing: no output file")
    # A bad option value is refused by every process alike; the root says so once.
    p = mpi([(2, ["portfolio", str(book), "--monte-carlo", "1"])])
    check(p.returncode == 2 and p.stderr.count("monte-carlo") >= 1,
          f"a refused option: exit 2 with the option named (got {p.returncode}: {p.stderr.strip()!r})")
    # Commands other than portfolio run on the root alone: output once.
    p = mpi([(2, ["-q", "score", str(book), "--format", "csv"])])
    lines = p.stdout.splitlines()
    check(p.returncode in (0, 1) and sum(1 for x in lines if x.startswith("id,")) == 1,
          f"score under mpirun -np 2 writes its CSV once ({len(lines)} lines)")

if failures:
    print(f"{len(failures)} check(s) failed", file=sys.stderr)
    sys.exit(1)
print("all MPI checks passed")
