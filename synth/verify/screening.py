"""Cheap batched screens for searches: stability, region membership, plant-gain range.

Eigenvalue-free (Routh on shifted and rotated polynomials, :mod:`synth.numerics.screening`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from synth.numerics.poly import batch_polymul
from synth.numerics.scaling import frequency_scale


@dataclass(frozen=True)
class ScreenResult:
    """Batched screening verdicts (see :func:`screen_batch`)."""

    char: np.ndarray
    stable: np.ndarray
    in_region: np.ndarray
    plant_range_ok: np.ndarray


def _in_region(polys, region, w0: float = 1.0) -> np.ndarray:
    """Batched region test by the eigenvalue-free kernel, on the frequency-scaled rows.

    ``s = w0 z`` with ``w0`` a power of two (the plant's frequency scale) is an
    exact change of variable; each row is then divided by a power of two near
    its largest coefficient, so a loop at 1e5 rad/s is screened with the
    numbers of one at 1 rad/s (see :mod:`synth.numerics.scaling`).
    """
    from synth.numerics.screening import in_region_batch

    P = np.atleast_2d(np.asarray(polys, dtype=float))
    deg = P.shape[1] - 1
    e = int(round(np.log2(w0)))
    Z = np.ldexp(P, e * np.arange(deg, -1, -1))
    top = np.max(np.abs(Z), axis=1, keepdims=True)
    _, ex = np.frexp(np.where(top > 0, top, 1.0))
    Z = np.ldexp(Z, -ex)
    reg = type(region)(float(region.sigma) / w0, float(region.zeta))
    return in_region_batch(Z, reg)


def screen_batch(problem, nums, dens, range_points: int = 3) -> ScreenResult:
    """Cheap batched screen of many compensators (no simulation, no eigenvalues).

    Parameters
    ----------
    problem : synth.requirements.Problem
    nums, dens : ndarray, shape (B, k)
        Compensator numerators and denominators (one per row, padded).
    range_points : int
        Plant-gain factors tested across the required plant-gain range (both ends and
        geometrically spaced interior points).  A necessary check only; the
        full verifier decides the range exactly.

    Returns
    -------
    ScreenResult
        ``char`` (B, n+1) and boolean arrays ``stable``, ``in_region``,
        ``plant_range_ok``.
    """
    from synth.problem.region import Region

    nums = np.atleast_2d(np.asarray(nums, dtype=float))
    dens = np.atleast_2d(np.asarray(dens, dtype=float))
    num_l = batch_polymul(nums, problem.plant.num)
    den_l = batch_polymul(dens, problem.plant.den)
    width = max(num_l.shape[1], den_l.shape[1])
    num_l = np.pad(num_l, ((0, 0), (width - num_l.shape[1], 0)))
    den_l = np.pad(den_l, ((0, 0), (width - den_l.shape[1], 0)))
    char = den_l + num_l
    w0 = frequency_scale(problem.plant.num, problem.plant.den)
    stable = _in_region(char, Region(), w0)
    region = problem.region
    in_region = _in_region(char, region, w0) if not region.is_stability_only else stable.copy()
    ok = stable.copy()
    pgr = problem.requirements.limit("stable_plant_gain_range")
    if pgr is not None:
        ks = np.geomspace(pgr[0], pgr[1], max(2, range_points))
        for k in ks:
            ok &= _in_region(den_l + k * num_l, Region(), w0)
    return ScreenResult(char=char, stable=stable, in_region=in_region, plant_range_ok=ok)
