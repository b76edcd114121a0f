"""Benchmark: eigenvalue-free region screening vs a per-candidate numpy.roots loop.

Run with ``python tests/benchmarks/bench_screening.py [--batch N] [--sample M]``.

A made-up sixth-order plant (an integrator, three real poles and one damped
mode, a zero at -4) in a loop with 200 000 random second-order compensators
gives degree-8 closed-loop polynomials. The kernel (synth.numerics.screening.in_region_batch)
screens all of them for decay rate and damping. The timed region (no decay
rate, damping >= 0.45) is the kernel's slowest case: nearly every candidate
is stable, so nearly every one goes on to the degree-16 damping test (a
region with a decay rate rejects most candidates after the cheap first
test; that rate is printed too); in the same run a Python loop
calls numpy.roots on a subsample and applies the same region test to the
roots. Both rates are per candidate; the last line reads

    candidates_per_second=N ratio_vs_numpy_roots_loop=R
"""

from __future__ import annotations

import argparse
import math
import time
from dataclasses import dataclass

import numpy as np

from synth.numerics.screening import in_region_batch


@dataclass(frozen=True)
class _Region:
    sigma: float
    zeta: float


def _batch_polymul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Row-wise product of two batches of descending-order polynomials."""
    out = np.zeros((a.shape[0], a.shape[1] + b.shape[1] - 1))
    for i in range(a.shape[1]):
        out[:, i : i + b.shape[1]] += a[:, i : i + 1] * b
    return out


def closed_loops(count: int, seed: int) -> np.ndarray:
    """Degree-8 closed-loop polynomials den_C*den_G + num_C*num_G (contract convention)."""
    rng = np.random.default_rng(seed)
    num_g = np.array([0.5, 2.0])  # zero at -4
    den_g = np.poly([0.0, -1.0, -3.0, -6.0, -1.0 + 2.0j, -1.0 - 2.0j]).real
    gain = rng.uniform(0.5, 60.0, count)
    z1 = rng.uniform(0.1, 5.0, count)
    z2 = rng.uniform(0.1, 5.0, count)
    p1 = rng.uniform(2.0, 30.0, count)
    p2 = rng.uniform(2.0, 30.0, count)
    num_c = gain[:, None] * np.stack([np.ones(count), z1 + z2, z1 * z2], axis=1)
    den_c = np.stack([np.ones(count), p1 + p2, p1 * p2], axis=1)
    first = _batch_polymul(den_c, np.broadcast_to(den_g, (count, den_g.size)))
    second = _batch_polymul(num_c, np.broadcast_to(num_g, (count, num_g.size)))
    first[:, -second.shape[1] :] += second
    return first


def roots_verdict(poly: np.ndarray, sigma: float, zeta: float) -> bool:
    """The per-candidate reference: numpy.roots and the region inequalities."""
    r = np.roots(poly)
    return bool(np.all(r.real < -sigma) and np.all(-r.real > zeta * np.abs(r)))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--batch", type=int, default=200_000)
    parser.add_argument("--sample", type=int, default=4_000)
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args()

    region = _Region(sigma=0.0, zeta=0.45)
    polys = closed_loops(args.batch, args.seed)
    print(f"batch: {polys.shape[0]} polynomials of degree {polys.shape[1] - 1}")

    def timed(reg: _Region) -> tuple[float, np.ndarray]:
        in_region_batch(polys[:1000], reg)  # warm-up
        best = math.inf
        for _ in range(args.repeat):
            start = time.perf_counter()
            out = in_region_batch(polys, reg)
            best = min(best, time.perf_counter() - start)
        return best, out

    typical = _Region(sigma=0.1, zeta=0.1)
    t_typ, v_typ = timed(typical)
    print(
        f"kernel, region sigma={typical.sigma} zeta={typical.zeta}: {t_typ:.4f} s, "
        f"{v_typ.mean():.1%} in region, {polys.shape[0] / t_typ:.0f} candidates/s"
    )
    best, verdict = timed(region)
    kernel_rate = polys.shape[0] / best
    stable = in_region_batch(polys, _Region(0.0, 0.0)).mean()
    print(
        f"kernel, region sigma={region.sigma} zeta={region.zeta} (timed): {best:.4f} s, "
        f"{stable:.1%} reach the damping test, {verdict.mean():.1%} in region"
    )

    sample = polys[: args.sample]
    start = time.perf_counter()
    ref = np.array([roots_verdict(p, region.sigma, region.zeta) for p in sample])
    loop_time = time.perf_counter() - start
    loop_rate = sample.shape[0] / loop_time
    mismatches = int(np.count_nonzero(ref != verdict[: args.sample]))
    print(f"numpy.roots loop: {loop_time:.4f} s for {sample.shape[0]} (scaled rate {loop_rate:.0f}/s)")
    print(f"disagreements on the subsample: {mismatches}")
    print(
        f"candidates_per_second={kernel_rate:.0f} "
        f"ratio_vs_numpy_roots_loop={kernel_rate / loop_rate:.1f}"
    )


if __name__ == "__main__":
    main()
