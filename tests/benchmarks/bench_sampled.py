"""Designs that hold in the sampled loop: the search's hold model against a continuous search.

Measured in one run, on this machine, for a bundled sampled case (default
``cases/servo-current-loop-sampled.toml``):

* the baseline: the search designing on the continuous loop (the hold and the
  computation delay ignored; every candidate still verified on the sampled-data
  loop), as synth did before its sampled-data search;
* synth's search with the hold and computation delay as an extra dead time
  ``T/2 + tau`` (:func:`synth.problem.sampling.search_problem`);
* for both: feasible designs among those reported, and the CPU and wall time
  of ``run_design`` (a first, cold run with its imports, then warm runs);
* the cost of one sampled-data verification (``verify``) against one
  continuous verification of the same design (the problem without ``[sampling]``).

Run from the repository root:

    python tests/benchmarks/bench_sampled.py [CASE.toml]

The last line reads ``feasible_hold=A feasible_continuous=B time_ratio=R verify_ratio=V``
(ratios of the hold-model search to the baseline, and of a sampled to a continuous
verification).  CPU and wall-clock figures only; no assertion.
"""

from __future__ import annotations

import dataclasses
import os
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

import synth.problem.sampling as sampling_module  # noqa: E402
from synth.design import run_design  # noqa: E402
from synth.problem.requirements import load_problem  # noqa: E402
from synth.verify.verdict import verify  # noqa: E402


def _timed(fn):
    c0, w0 = time.process_time(), time.perf_counter()
    out = fn()
    return out, time.process_time() - c0, time.perf_counter() - w0


def _runs(problem, label, repeats=3):
    cpus, walls, run = [], [], None
    for i in range(repeats):
        run, cpu, wall = _timed(lambda: run_design(problem))
        cpus.append(cpu)
        walls.append(wall)
        print(f"  {label} run {i + 1}{' (cold)' if i == 0 else ''}: cpu {cpu:.2f} s, "
              f"wall {wall:.2f} s")
    feasible = sum(d.verdict.feasible for d in run.designs)
    warm = statistics.median(cpus[1:]) if repeats > 1 else cpus[0]
    print(f"  {label}: {feasible} of {len(run.designs)} reported designs feasible on the "
          f"sampled loop; warm cpu {warm:.2f} s, {run.stats['candidates']} candidates")
    return run, feasible, warm


def main() -> None:
    path = Path(sys.argv[1]) if len(sys.argv) > 1 else \
        ROOT / "cases" / "servo-current-loop-sampled.toml"
    problem = load_problem(path)
    print(f"case {path.name}; load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores; "
          f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', 'unset')} "
          "(threaded BLAS on a loaded machine slows the small matrices a lot)")
    run, feasible_hold, t_hold = _runs(problem, "hold model")
    original = sampling_module.search_problem
    try:
        sampling_module.search_problem = lambda p: p          # the baseline: continuous search
        _, feasible_cont, t_cont = _runs(problem, "continuous search")
    finally:
        sampling_module.search_problem = original
    best = run.best.candidate.controller
    continuous = dataclasses.replace(problem, sampling=None)
    verify(problem, best)
    verify(continuous, best)
    ts = [_timed(lambda: verify(problem, best))[1] for _ in range(10)]
    tc = [_timed(lambda: verify(continuous, best))[1] for _ in range(10)]
    vs, vc = statistics.median(ts), statistics.median(tc)
    print(f"one verification: sampled-data loop {1000 * vs:.1f} ms cpu, continuous loop "
          f"{1000 * vc:.1f} ms cpu")
    print(f"feasible_hold={feasible_hold} feasible_continuous={feasible_cont} "
          f"time_ratio={t_hold / t_cont:.2f} verify_ratio={vs / vc:.2f}")


if __name__ == "__main__":
    main()
