"""Benchmark: ``run_design`` on every bundled case in cases/.

Run with ``python tests/benchmarks/bench_design.py [--repeat N] [CASE ...]``.
For each case it prints the median wall time of N runs (default 3) at the
case's own effort (the search is counted in work, so every run does the same
work), whether a feasible design was found, the best design and its ranking
score, and the time spent searching.  Besides the bundled cases it designs
PI and PID for the textbook benchmark plant 1/(s+1)^3 (K. J. Astrom and
T. Hagglund, "Benchmark systems for PID control", IFAC workshop, 2000; from
memory).  The baseline, measured in the same run, is one full verification
of the case's best design, so the ratio ``design / verify`` shows how many
verifications the whole pipeline costs.  Targets on a 2-core machine: the
benchmark plant at most 2 s, every bundled case at most 4 s.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

BENCHMARK_NAME = "pid-benchmark 1/(s+1)^3"
BENCHMARK = """
[plant]
expression = "1/(s+1)^3"
[requirements]
max_overshoot_percent = 10.0
max_steady_state_error = 0.0
max_peak_sensitivity = 1.6
max_settling_time = 20.0
[search]
structures = ["PI", "PID"]
"""


def main(argv=None) -> int:
    sys.path.insert(0, str(ROOT))
    from synth.design import run_design
    from synth.problem.requirements import load_problem, problem_from_text
    from synth.verify.verdict import verify

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("cases", nargs="*", help="case files (default: every cases/*.toml)")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    files = [Path(c) for c in args.cases] or sorted((ROOT / "cases").glob("*.toml"))
    problems = [(BENCHMARK_NAME, problem_from_text(BENCHMARK, source="<benchmark>"))]
    problems += [(path.stem, load_problem(path)) for path in files]
    worst = 0.0
    bench = None
    rows = []
    for name, problem in problems:
        times = []
        run = None
        for _ in range(max(1, args.repeat)):
            t0 = time.perf_counter()
            run = run_design(problem)
            times.append(time.perf_counter() - t0)
        med = statistics.median(times)
        if name == BENCHMARK_NAME:
            bench = med
        else:
            worst = max(worst, med)
        best = run.best
        # baseline, same run: one full verification of the best design (best of 3)
        base = float("inf")
        if best is not None:
            for _ in range(3):
                t0 = time.perf_counter()
                verify(problem, best.candidate.num, best.candidate.den)
                base = min(base, time.perf_counter() - t0)
        label = "-" if best is None else f"{best.candidate.structure}/{best.candidate.origin}"
        score = "-" if best is None or not best.verdict.feasible else f"{best.score:.5f}"
        rows.append((name, med, run.any_feasible, label, run.stats.get("search_seconds", 0.0),
                     med / max(base, 1e-9), run.stats.get("time_capped", [])))
        print(f"{name:32s} median {med:6.2f} s  feasible {'yes' if run.any_feasible else 'no ':3s}"
              f"  best {label:16s} score {score:8s} search {rows[-1][4]:5.2f} s"
              f"  design/verify {rows[-1][5]:7.1f}"
              + (f"  capped {','.join(rows[-1][6])}" if rows[-1][6] else ""), flush=True)
    n_ok = sum(r[2] for r in rows)
    ok = bench <= 2.0 and worst <= 4.0
    print(f"cases={len(rows)} feasible={n_ok} benchmark_median_s={bench:.2f} (target 2.0) "
          f"worst_case_median_s={worst:.2f} (target 4.0) within_target={'yes' if ok else 'no'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
