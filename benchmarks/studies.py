"""Design studies on a process pool against one run after another (issue 13's benchmark).

400 runs of a small design (a mass cooling through a link whose resistance has a spread, a
transient of 10 s) as `netgen tolerance` runs them: once on this process (`--jobs 1`), once on
a pool of 2 processes (`--jobs 2`), and, with --cluster, on a Dask LocalCluster of 2 workers.
Prints the wall-clock seconds of each, the CPU seconds of this process and its children, and
the speed-up (serial ÷ pool, wall clock: what a user waits). Every executor must give the same
table; the script checks that too.

    python benchmarks/studies.py [--runs 400] [--jobs 2] [--cluster]
"""
from __future__ import annotations

import argparse
import os
import resource
import time

from netgen.studies.executors import executor
from netgen.studies.runner import csv_text, table
from netgen.studies.tolerance import run_tolerance

DESIGN = """
let R = 2 K/W spread uniform 10 %
mass m 5 J/K start 350 K
fixed amb 300 K
link l m amb R
transient until 10 s
record T(m)
expect T(m) at 10 s < 318.5 K
"""


def _cpu() -> float:
    me, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime


def measure(runs: int, jobs: int | None = None, cluster: str | None = None) -> tuple[float, float, str]:
    ex = executor(jobs, cluster)
    wall, cpu = time.perf_counter(), _cpu()
    t = run_tolerance(DESIGN, "<benchmark>", {}, runs, 0, ex)
    wall, cpu = time.perf_counter() - wall, _cpu() - cpu
    ex.close()
    assert t.outcome.finished == runs and not t.outcome.failed
    return wall, cpu, csv_text(*table(t.outcome, t.lead))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--runs", type=int, default=400)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--cluster", action="store_true", help="also a Dask LocalCluster (needs the cluster extra)")
    a = ap.parse_args()
    measure(4, 1)  # the grammar and the imports, before any timing
    print(f"{a.runs} runs of a small design; {os.cpu_count()} cores; load average {os.getloadavg()[0]:.1f}")
    serial = measure(a.runs, 1)
    pool = measure(a.runs, a.jobs)
    rows = [("one after another (--jobs 1)", serial), (f"process pool (--jobs {a.jobs})", pool)]
    if a.cluster:
        rows.append(("Dask LocalCluster (--cluster local)", measure(a.runs, a.jobs, "local")))
    for name, (wall, cpu, _) in rows:
        print(f"{name:<38} {wall:7.2f} s wall  {cpu:7.2f} s CPU  {a.runs / wall:6.1f} runs/s  "
              f"speed-up {serial[0] / wall:4.2f}")
    assert all(r[1][2] == serial[2] for r in rows), "the executors gave different tables"
    print("every executor gave the same tolerance.csv")


if __name__ == "__main__":
    main()
