"""Throughput of synth batch on the bundled campaign, and the costs it is made of.

Measured in one run, on this machine:

* per-loop cost of fitting (``fit_step_test``) and of the whole task
  (``run_item``: fit, design, implementation forms), one after the other in
  this process: the serial baseline;
* ``run_batch`` on a local cluster of 1 and of 2 worker processes (cluster
  start-up included, as a user sees it);
* the scheduler's overhead per task (many no-op tasks on a running cluster);
* the size of what a task ships back (design JSON, fit JSON).

Run from the repository root (takes a few minutes):

    python tests/benchmarks/bench_batch.py [FOLDER]

The last line reads ``loops_per_minute_2=N ratio_2_vs_1_workers=R ratio_2_vs_serial=S``.
Wall-clock figures only; no assertion.
"""

from __future__ import annotations

import json
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from synth.batch import collect, run_batch, run_item  # noqa: E402
from synth.problem.fit import fit_step_test  # noqa: E402


def _noop(i):
    return i


def main() -> None:
    folder = Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "cases" / "campaign"
    items = collect([folder])
    print(f"campaign: {len(items)} loops in {folder}; load average {os.getloadavg()[0]:.1f} "
          f"on {os.cpu_count()} cores (other work on the machine slows every figure)")

    fit_times = []
    for csv in sorted(folder.rglob("*.csv")):
        model = csv.parent.name
        t0 = time.perf_counter()
        fit_step_test(csv, model)
        fit_times.append(time.perf_counter() - t0)
    print(f"fit per loop: median {statistics.median(fit_times):.3f} s, "
          f"max {max(fit_times):.3f} s")

    task_times, design_bytes, fit_bytes = [], [], []
    for item in items:
        t0 = time.perf_counter()
        res = run_item(item)
        task_times.append(time.perf_counter() - t0)
        design_bytes.append(len(json.dumps(res["design"] or {})))
        fit_bytes.append(len(json.dumps(res["fit"] or {})))
    serial = sum(task_times)
    print(f"task (fit + design) per loop: median {statistics.median(task_times):.2f} s, "
          f"max {max(task_times):.2f} s; serial total {serial:.1f} s")
    print(f"result size per loop: design JSON median {statistics.median(design_bytes) / 1e3:.0f} "
          f"kB (max {max(design_bytes) / 1e3:.0f} kB), fit JSON median "
          f"{statistics.median(fit_bytes) / 1e3:.1f} kB")

    wall = {}
    for n in (1, 2):
        with tempfile.TemporaryDirectory() as out:
            t0 = time.perf_counter()
            run_batch([folder], out, workers=n)
            wall[n] = time.perf_counter() - t0
        print(f"batch, {n} local worker(s): {wall[n]:.1f} s, "
              f"{60.0 * len(items) / wall[n]:.1f} loops per minute")

    from distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                      dashboard_address=None) as cluster, Client(cluster) as client:
        client.gather(client.map(_noop, range(20)))  # warm up
        n = 400
        t0 = time.perf_counter()
        client.gather(client.map(_noop, range(1000, 1000 + n)))
        per_task = (time.perf_counter() - t0) / n
    print(f"scheduler overhead: {1e3 * per_task:.2f} ms per no-op task (2 local workers)")
    print(f"load average at the end {os.getloadavg()[0]:.1f}")
    print(f"loops_per_minute_2={60.0 * len(items) / wall[2]:.1f} "
          f"ratio_2_vs_1_workers={wall[1] / wall[2]:.2f} ratio_2_vs_serial={serial / wall[2]:.2f}")


if __name__ == "__main__":
    main()
