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


def design_loop(doc: dict, rank: int = 1, source: str = "<design>"):
    """Loop polynomials of design ``rank`` of a synth.design/1 document.

    Returns ``(num, den, gain, design)`` where the locus variable is the
    compensator gain: ``num = monic_num_C * num_G``, ``den = den_C * den_G`` and
    the design operates at ``gain``.
    """
    designs = doc.get("designs") or []
    chosen = [d for d in designs if d.get("rank") == rank]
    if not chosen:
        have = ", ".join(str(d.get("rank")) for d in designs) or "none"
        raise InputError(f"has no design of rank {rank} (ranks present: {have})", source, "designs")
    d = chosen[0]
    try:
        comp = d["compensator"]
        plant = doc["plant"]
        k = float(comp["gain"])
        cn = np.asarray(comp["numerator"], dtype=float)
        cd = np.asarray(comp["denominator"], dtype=float)
        gn = np.asarray(plant["numerator"], dtype=float)
        gd = np.asarray(plant["denominator"], dtype=float)
    except (KeyError, TypeError, ValueError) as err:
        raise InputError(f"design {rank} is malformed ({err})", source, "designs") from None
    if k == 0.0 or not np.isfinite(k):
        raise InputError(f"design {rank} has gain {k}, so its loop has no locus", source,
                         "designs.compensator.gain")
    # the compensator numerator carries the gain; divide it out so K is the locus variable
    return np.polymul(cn / k, gn), np.polymul(cd, gd), k, d


def trace_design_loop(problem, doc: dict, rank: int = 1, source: str = "<design>"):
    """Root locus of a chosen design's loop; returns ``(trace, operating_gain)``."""
    from synth.locus.trace import trace_locus

    num, den, k, _ = design_loop(doc, rank, source)
    region = None if problem.region.is_stability_only else problem.region
    return trace_locus(num, den, region=region, negative=k < 0), k
