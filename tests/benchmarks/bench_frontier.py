"""Benchmark: `synth frontier` cost per bundled case, and the PI frontier against the optimum.

Run from the repository root::

    python tests/benchmarks/bench_frontier.py [--quick] [CASE.toml ...]

For each case: wall time of ``run_frontier`` at the file's effort, the number of
design runs it made, and the ratio to one ``run_design`` of the same file
measured in the same run (the baseline).  Then, on benchmark plants of
``peers.py`` (``--quick``: two), the PI frontier's value at each level over
the independent least-IAE PI at that Ms limit (``peers.best_pi_load_iae``;
Astrom, Panagopoulos and Hagglund, Automatica 34(5), 1998).  The last line:
``frontier cases=N seconds_median=S ratio_vs_design_median=R pi_opt_worst=W``
(target ``W <= 1.02``, issue 11).
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
sys.path[:0] = [str(ROOT), str(HERE)]

LEVELS = (1.2, 1.4, 1.6, 1.8, 2.0)


def _pi_problem(p):
    from synth.problem.requirements import problem_from_text

    lines = ["[plant]", f"numerator = {list(p.num)}", f"denominator = {list(p.den)}"]
    if p.dead_time:
        lines.append(f"dead_time = {p.dead_time}")
    lines += ["[requirements]", "max_peak_sensitivity = 1.4", "max_steady_state_error = 0.0",
              "[search]", 'structures = ["PI"]', 'objective = "disturbance"']
    return problem_from_text("\n".join(lines) + "\n", f"bench {p.name}")


def main(argv=None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    quick = "--quick" in args
    files = [Path(a) for a in args if not a.startswith("--")] or \
        sorted((ROOT / "cases").glob("*.toml"))
    if quick and len(files) > 3:
        files = files[:3]
    import peers

    from synth.design import run_design
    from synth.frontier import run_frontier
    from synth.problem.requirements import load_problem

    secs, ratios = [], []
    run_design(load_problem(files[0]))      # warm-up: imports and first-call costs out of the timing
    for f in files:
        problem = load_problem(f)
        t0 = time.perf_counter()
        run_design(problem)
        base = time.perf_counter() - t0
        t0 = time.perf_counter()
        result = run_frontier(problem)
        wall = time.perf_counter() - t0
        own = problem.requirements.limit("peak_sensitivity")
        n = len(result.structures)
        runs = n * len(LEVELS) + (0 if own in LEVELS else n) + len(result.relaxations)
        secs.append(wall)
        ratios.append(wall / base)
        print(f"{f.stem:32s} frontier {wall:7.1f} s  runs {runs:3d}  design {base:5.1f} s  "
              f"ratio {wall / base:5.1f}  feasible {result.any_feasible}", flush=True)
    names = ("fopdt-T1", "lags-n4") if quick else ("fopdt-T1", "lags-n4", "sopdt-T3",
                                                   "int-L1-T1", "rhpz-a1")
    worst = 0.0
    for name in names:
        p = next(q for q in peers.BATCH if q.name == name)
        result = run_frontier(_pi_problem(p), levels=LEVELS)
        for pt in result.structures["PI"]:
            ref = peers.best_pi_load_iae(p, pt.level).iae
            r = (pt.value if pt.value is not None else float("inf")) / ref
            worst = max(worst, r)
            print(f"{name:12s} Ms<={pt.level:<4g} frontier {pt.value:9.4f}  optimum {ref:9.4f}  "
                  f"ratio {r:.4f}", flush=True)
    print(f"frontier cases={len(files)} seconds_median={statistics.median(secs):.1f} "
          f"ratio_vs_design_median={statistics.median(ratios):.1f} pi_opt_worst={worst:.4f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
