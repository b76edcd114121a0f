"""Benchmark: the saturated simulation and the anti-windup finishing stage.

Run with ``python tests/benchmarks/bench_saturated.py [--repeat N]``.

1. One saturated verification pair (reference and load step through the
   limits) of a PI with back-calculation, with and without dead time, against
   the baseline measured in the same run: the linear unit-step simulation of
   the same loop (:func:`synth.verify.simulation.simulate_step`).  The ratio
   says how many linear simulations one saturated pair costs.
2. ``run_design`` on the bundled case ``booster-pump-pressure`` against the
   same problem with its ``[actuator]`` table removed (baseline, same run):
   the ratio is what the actuator limits add to a design (finishing stage and
   saturated verdicts).  Target on a 2-core machine: the case at most 4 s,
   like every bundled case.

Medians of N runs (default 3); nothing here is asserted.
"""

from __future__ import annotations

import argparse
import dataclasses
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _median(fn, repeat: int) -> float:
    times = []
    for _ in range(max(1, repeat)):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main(argv=None) -> int:
    sys.path.insert(0, str(ROOT))
    from synth.design import run_design
    from synth.problem.actuator import Actuator
    from synth.problem.plant import Plant
    from synth.problem.requirements import load_problem
    from synth.verify.controller import AntiWindup, Controller
    from synth.verify.saturated import simulate_saturated
    from synth.verify.simulation import simulate_step

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)

    c = Controller((2.0, 1.5), (1.0, 0.0),
                   anti_windup=AntiWindup("back-calculation", {"tracking_time": 0.8}))
    act = Actuator(limits=(-1.2, 1.3), max_rate=2.0)
    for name, plant in (("PI, 1/(s+1)^2", Plant.from_coefficients([1.0], [1.0, 2.0, 1.0])),
                        ("PI, exp(-0.7 s)/(s+1)^2",
                         Plant.from_coefficients([1.0], [1.0, 2.0, 1.0], dead_time=0.7))):
        simulate_saturated(plant, [c], act)            # imports and first-use costs
        sat = _median(lambda plant=plant: simulate_saturated(plant, [c], act), args.repeat)
        lin = _median(lambda plant=plant: simulate_step(plant, c.num, c.den), args.repeat)
        print(f"{name:28s} saturated pair {sat * 1e3:7.1f} ms   linear step {lin * 1e3:7.1f} ms"
              f"   ratio {sat / lin:5.1f}")

    case = load_problem(ROOT / "cases" / "booster-pump-pressure.toml")
    linear = dataclasses.replace(case, actuator=None)
    with_act = _median(lambda: run_design(case), args.repeat)
    without = _median(lambda: run_design(linear), args.repeat)
    run = run_design(case)
    print(f"booster-pump-pressure design {with_act:6.2f} s   without [actuator] {without:6.2f} s"
          f"   ratio {with_act / without:4.2f}   finishing {run.stats.get('anti_windup')}")
    print(f"target: bundled case <= 4 s on 2 cores: {'met' if with_act <= 4.0 else 'NOT met'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
