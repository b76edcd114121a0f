"""Benchmark: exact gain intervals of badly scaled plants, quality and cost.

Run with ``python tests/benchmarks/bench_scaling.py [--plants N] [--seed S]``.
Random plants (degree 1 to 6, roots spread over up to 6 decades around a
frequency from 1e-6 to 1e6 rad/s, gains from 1e-15 to 1e15) are solved by
``synth.locus.core.stable_gain_intervals`` and by exact rational arithmetic
(sympy, ``tests/exact.py``). Printed: the share of plants whose intervals match
the exact ones to 1e-8 relative (target: all but those flagged marginal), and
the time per plant against a baseline measured in the same run: ``numpy.roots``
of ``den + K num`` at 50 gains (the cost of the dense grid that exact
intervals replace). Target: ratio below 5.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]


def _plant(rng):
    n = int(rng.integers(1, 7))
    m = int(rng.integers(0, n + 1))
    w = 10.0 ** rng.uniform(-6, 6)
    spread = rng.uniform(0, 6)

    def roots(k):
        out = []
        while len(out) < k:
            mag = w * 10.0 ** rng.uniform(-spread / 2, spread / 2)
            if len(out) <= k - 2 and rng.random() < 0.3:
                z = mag * np.exp(1j * rng.uniform(0.55 * np.pi, 0.95 * np.pi))
                out += [z, z.conjugate()]
            else:
                out.append(-mag if rng.random() < 0.75 else mag)
        return out

    g = 10.0 ** rng.uniform(-15, 15) * (1.0 if rng.random() < 0.8 else -1.0)
    return g * np.atleast_1d(np.real(np.poly(roots(m)))), np.real(np.poly(roots(n)))


def _match(a, b, rtol=1e-8) -> bool:
    if len(a) != len(b):
        return False
    for (x0, x1), (y0, y1) in zip(a, b, strict=True):
        for x, y in ((x0, y0), (x1, y1)):
            if (x is None) != (y is None) or (x is not None and abs(x - y) > rtol * abs(y)):
                return False
    return True


def main(argv=None) -> int:
    sys.path.insert(0, str(ROOT))
    sys.path.insert(0, str(ROOT / "tests"))
    from exact import exact_stable_intervals

    from synth.locus.core import marginal_intervals, stable_gain_intervals

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--plants", type=int, default=200)
    ap.add_argument("--seed", type=int, default=0)
    args = ap.parse_args(argv)
    rng = np.random.default_rng(args.seed)
    plants = [_plant(rng) for _ in range(args.plants)]

    t0 = time.perf_counter()
    got = [stable_gain_intervals(n, d) for n, d in plants]
    t_engine = time.perf_counter() - t0
    t0 = time.perf_counter()
    for n, d in plants:
        npad = np.concatenate([np.zeros(d.size - n.size), n])
        for k in np.geomspace(1e-3, 1e3, 50):
            np.roots(d + k * npad)
    t_base = time.perf_counter() - t0

    ok = marginal = 0
    for (n, d), g in zip(plants, got, strict=True):
        ref = exact_stable_intervals(n, d)
        if marginal_intervals(ref, 1e-6):
            marginal += 1
        elif _match(g, ref):
            ok += 1
    judged = len(plants) - marginal
    print(f"plants {len(plants)}, marginal {marginal}, exact to 1e-8: {ok}/{judged}")
    print(f"engine {1e3 * t_engine / len(plants):.2f} ms/plant, baseline numpy.roots x 50 "
          f"{1e3 * t_base / len(plants):.2f} ms/plant, ratio {t_engine / t_base:.2f}")
    return 0 if ok == judged else 1


if __name__ == "__main__":
    raise SystemExit(main())
