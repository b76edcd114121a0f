"""Benchmark: trace_locus against a naive numpy.roots loop.

Run with ``python tests/benchmarks/bench_locus.py``.  For loops of degree 4, 8
and 12 it times ``trace_locus`` (adaptive grid, branch tracking, every exact
special point and the exact stable-gain intervals) and, in the same run, a
plain loop of ``numpy.roots`` over 1000 log-spaced gains (roots only, no
ordering, no special points).  Timings interleave the two and take medians.
The last line is ``ratio_vs_numpy_roots_loop=R``: naive time / engine time for
degree 8.
"""

from __future__ import annotations

import statistics
import time

import numpy as np

from synth.locus.trace import trace_locus

LOOPS = {
    4: (np.poly([-2.0]), np.poly([0.0, -1.0, -4.0 + 2.0j, -4.0 - 2.0j])),
    8: (np.poly([-1.0, -2.0, -5.0]),
        np.poly([0.0, -0.5, -3.0, -1 + 1j, -1 - 1j, -4 + 2j, -4 - 2j, -8.0])),
    12: (np.poly([-1.5, -2.5, -6.0 + 1.0j, -6.0 - 1.0j]),
         np.poly([0.0, 0.0, -0.7, -3.0, -9.0, -1 + 2j, -1 - 2j, -2 + 5j, -2 - 5j,
                  -5 + 0.5j, -5 - 0.5j, -12.0])),
}


def naive(num, den, gains):
    out = []
    for k in gains:
        out.append(np.roots(np.polyadd(den, k * num)))
    return out


def timed(fn, *args, **kw):
    t = time.perf_counter()
    fn(*args, **kw)
    return time.perf_counter() - t


def main(repeats: int = 15) -> float:
    ratio8 = float("nan")
    gains = np.geomspace(1e-3, 1e4, 1000)
    for degree, (num, den) in LOOPS.items():
        trace_locus(num, den)  # warm-up (imports, caches)
        naive(num, den, gains[:10])
        t_eng, t_naive = [], []
        for _ in range(repeats):
            t_eng.append(timed(trace_locus, num, den))
            t_naive.append(timed(naive, num, den, gains))
        tr = trace_locus(num, den)
        e, n = statistics.median(t_eng), statistics.median(t_naive)
        ratio = n / e
        print(f"degree {degree:2d}: engine {e * 1e3:7.2f} ms ({tr.gains.size} gains, "
              f"{len(tr.breakaways)} break points, {len(tr.crossings)} crossings) | "
              f"numpy.roots x1000 {n * 1e3:7.2f} ms | ratio {ratio:5.2f}")
        if degree == 8:
            ratio8 = ratio
    print(f"ratio_vs_numpy_roots_loop={ratio8:.2f}")
    return ratio8


if __name__ == "__main__":
    main()
