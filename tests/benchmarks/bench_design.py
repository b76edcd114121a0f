"""Benchmark: ``run_design`` on every bundled case in cases/.

Run with ``python tests/benchmarks/bench_design.py [--repeat N] [CASE ...]``.
For each case it prints the median wall time of N runs (default 3) at the
case's own budget (the default budget is 10 s), whether a feasible design
was found, the best design and the time spent searching.  The baseline,
measured in the same run, is one full verification of the case's best
design, so the ratio ``design / verify`` shows how many verifications the
whole pipeline costs.  Target: every case at most 10 s on a 2-core machine.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def main(argv=None) -> int:
    sys.path.insert(0, str(ROOT))
    from synth.design import run_design
    from synth.problem.requirements import load_problem
    from synth.verify.verdict import verify

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("cases", nargs="*", help="case files (default: every cases/*.toml)")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    files = [Path(c) for c in args.cases] or sorted((ROOT / "cases").glob("*.toml"))
    worst = 0.0
    rows = []
    for path in files:
        problem = load_problem(path)
        times = []
        run = None
        for _ in range(max(1, args.repeat)):
            t0 = time.perf_counter()
            run = run_design(problem)
            times.append(time.perf_counter() - t0)
        med = statistics.median(times)
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
        rows.append((path.stem, med, run.any_feasible, label, run.stats.get("search_seconds", 0.0),
                     med / max(base, 1e-9), run.stats.get("time_capped", [])))
        print(f"{path.stem:32s} median {med:6.2f} s  feasible {'yes' if run.any_feasible else 'no ':3s}"
              f"  best {label:22s} search {rows[-1][4]:5.2f} s  design/verify {rows[-1][5]:7.1f}"
              + (f"  capped {','.join(rows[-1][6])}" if rows[-1][6] else ""), flush=True)
    n_ok = sum(r[2] for r in rows)
    print(f"cases={len(rows)} feasible={n_ok} worst_median_s={worst:.2f} "
          f"target_s=10.0 within_target={'yes' if worst <= 10.0 else 'no'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
