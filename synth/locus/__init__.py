"""The root-locus engine.

``core`` holds batched closed-loop roots and exact gain intervals; ``special``
the exact special points; ``branches`` and ``grid`` the branch tracking and
adaptive gain grid; ``trace`` assembles them into a :class:`LocusTrace`.

The two entry points here connect the engine to a requirements file.
"""

from __future__ import annotations

import numpy as np

from synth.errors import InputError
from synth.locus.core import (
    closed_loop_roots,
    gain_at,
    gain_intervals,
    region_gain_intervals,
    stable_gain_intervals,
)

__all__ = [
    "closed_loop_roots",
    "gain_at",
    "gain_intervals",
    "region_gain_intervals",
    "stable_gain_intervals",
    "trace_problem",
    "trace_design_loop",
]


def trace_problem(problem):
    """Root locus of the plant of ``problem`` under proportional gain, with its region."""
    from synth.locus.trace import trace_locus

    region = None if problem.region.is_stability_only else problem.region
    return trace_locus(problem.plant.num, problem.plant.den, region=region)


def design_loop(plant_num, plant_den, comp_num, comp_den):
    """Loop polynomials of a compensator around a plant, with the compensator gain as locus variable.

    Parameters
    ----------
    plant_num, plant_den : array_like
        The plant (engine form).
    comp_num, comp_den : array_like
        The compensator ``K * monic num / monic den``.

    Returns
    -------
    num, den : ndarray
        ``num = (comp_num / K) * plant_num``, ``den = comp_den * plant_den``.
    gain : float
        ``K``, where the design operates on the locus.

    Raises
    ------
    InputError
        When ``K`` is zero or not finite (the loop has no locus).
    """
    cn = np.trim_zeros(np.asarray(comp_num, dtype=float), "f")
    cd = np.trim_zeros(np.asarray(comp_den, dtype=float), "f")
    k = float(cn[0] / cd[0]) if cn.size and cd.size else 0.0
    if k == 0.0 or not np.isfinite(k):
        raise InputError(f"the compensator gain is {k}, so its loop has no locus",
                         key="compensator.gain")
    # the compensator numerator carries the gain; divide it out so K is the locus variable
    return (np.polymul(cn / k, np.asarray(plant_num, dtype=float)),
            np.polymul(cd, np.asarray(plant_den, dtype=float)), k)


def trace_design_loop(problem, plant_num, plant_den, comp_num, comp_den):
    """Root locus of a design's loop (see :func:`design_loop`); returns ``(trace, operating_gain)``."""
    from synth.locus.trace import trace_locus

    num, den, k = design_loop(plant_num, plant_den, comp_num, comp_den)
    region = None if problem.region.is_stability_only else problem.region
    return trace_locus(num, den, region=region, negative=k < 0), k
