"""Benchmark: the cost of designing and verifying over several plant models.

Run with ``python tests/benchmarks/bench_robust.py [--repeat N] [CASE ...]``
(default: every bundled case with ranges or variants).  For each case it
prints, as medians of N runs (default 3):

* the design time over every model and the design time of the same file with
  the nominal plant only (the baseline, measured in the same run), and their
  ratio;
* the cost of verifying the best design: a full verdict over the models
  (``verify(..., depth="full")``, the models prepared once as in a design
  run), a quick one (``depth="quick"``) and, as the baseline, the nominal
  plant alone; and the ratios ``full / nominal`` and ``quick / nominal``;
* how the full verdict searched: models screened, local searches, exact
  evaluations, the robust stability test.

Targets on a 2-core machine: each bundled case designs in at most 4 s (the
same target as ``bench_design.py``).  The last line gives the worst case.
"""

from __future__ import annotations

import argparse
import dataclasses
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _median_time(fn, repeat: int, cpu: list | None = None) -> tuple[float, object]:
    """Median wall time of ``repeat`` calls (and, into ``cpu``, the median process time:
    on a shared machine the wall time also counts other people's work)."""
    times, cpus, out = [], [], None
    for _ in range(max(1, repeat)):
        t0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        times.append(time.perf_counter() - t0)
        cpus.append(time.process_time() - c0)
    if cpu is not None:
        cpu.append(statistics.median(cpus))
    return statistics.median(times), out


def main(argv=None) -> int:
    sys.path.insert(0, str(ROOT))
    from synth.design import run_design
    from synth.problem.requirements import load_problem
    from synth.verify.robust import robust_setup
    from synth.verify.verdict import verify

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("cases", nargs="*", help="case files (default: bundled cases with models)")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    files = [Path(c) for c in args.cases] or sorted((ROOT / "cases").glob("*.toml"))
    worst = 0.0
    for path in files:
        problem = load_problem(path)
        if problem.model_set.is_single:
            continue
        nominal = dataclasses.replace(problem, models=None)
        run_design(problem)  # first run pays the imports
        cpu: list[float] = []
        t_design, run = _median_time(lambda p=problem: run_design(p), args.repeat, cpu)
        t_nominal, _ = _median_time(lambda p=nominal: run_design(p), args.repeat, cpu)
        worst = max(worst, t_design)
        best = run.best
        c = best.candidate.controller
        setup = robust_setup(problem)
        verify(problem, c, setup=setup)  # warm the per-problem memo, as a design run does
        t_full, v = _median_time(lambda p=problem, c=c, s=setup: verify(p, c, setup=s),
                                 args.repeat)
        t_quick, _ = _median_time(
            lambda p=problem, c=c, s=setup: verify(p, c, depth="quick", setup=s), args.repeat)
        t_one, _ = _median_time(lambda p=nominal, c=c: verify(p, c), args.repeat)
        rob = v.robustness
        print(f"{path.stem:28s} design {t_design:5.2f} s (nominal only {t_nominal:5.2f} s, "
              f"ratio {t_design / t_nominal:4.2f}; cpu {cpu[0]:5.2f} s vs {cpu[1]:5.2f} s)  "
              f"feasible {'yes' if run.any_feasible else 'no'}"
              f"  best {best.candidate.structure}/{best.candidate.origin}", flush=True)
        print(f"{'':28s} verify best: full {1e3 * t_full:6.1f} ms, quick {1e3 * t_quick:5.1f} ms, "
              f"nominal {1e3 * t_one:5.1f} ms; full/nominal {t_full / t_one:4.1f}, "
              f"quick/nominal {t_quick / t_one:4.1f}; exact {rob['exact_evaluations']}, "
              f"screened {rob['screened']}, local searches {rob['local_searches']} "
              f"({rob['local_evaluations']} evaluations), {rob.get('stability_test', '-')}",
              flush=True)
    print(f"worst_design_median_s={worst:.2f} (target 4.0) "
          f"within_target={'yes' if worst <= 4.0 else 'no'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
