"""Ranking of verified designs: feasible first, then a documented score.

Order.  Feasible designs come first, ordered by :func:`score` (lower is
better); infeasible ones follow, ordered by their total normalised shortfall
(:attr:`synth.verify.Verdict.shortfall`: how far they are from meeting every
requirement), then by score.  Ties (scores equal to 1e-9) go to the design
with fewer parameters, then to the simpler structure in the order of
:data:`synth.requirements.STRUCTURES`, then by origin (placement, convex,
search) and finally by the compensator coefficients, so the order is total
and deterministic.

Score.  A weighted sum of six terms, each in [0, 1], lower is better; the
weights add up to 1:

================  ======  ================================================
term              weight  value
================  ======  ================================================
sensitivity       0.27    ``1 - 1/Ms`` (Ms the peak sensitivity)
gain_tolerance    0.13    ``1 / (1 + g)``, ``g = min(ln hi, ln(1/lo))`` over
                          the stable plant-gain range ``(lo, hi)``
                          (``lo <= 0`` counts as unbounded below)
speed             0.22    ``Ts / (Ts + T_ref)`` (Ts the settling time)
effort            0.13    ``min(1, log10(1 + U / U_ref) / 4)`` (U the peak
                          control effort: logarithmic, so a thousandfold
                          effort still costs more than a hundredfold)
simplicity        0.13    ``n_params / 8``
tracking          0.12    ``clip(1 - y_ss, 0, 1)`` (y_ss the step's final
                          value): even where no error limit is set, a loop
                          that barely moves its output toward the
                          reference (or moves it the wrong way) is no
                          design; a final value at or above 1 costs
                          nothing, since a prefilter gain can scale it down
================  ======  ================================================

The references ``T_ref`` and ``U_ref`` depend on the problem only (the
requirement limits when given, else scales of the plant; see
:func:`reference_scales`), never on the other candidates, so adding a
candidate never changes the order of the others.

Near duplicates.  synth's one "same design" rule (:mod:`synth.verify.same`,
:data:`~synth.verify.same.RANK_RULE`) is applied over the design band (40
points from ``w_min`` to ``w_max`` of :class:`synth.families.SearchSpace`):
compensator frequency responses that agree within 0.5 % are the same
controller for every practical purpose, and only the better ranked one is
kept.  Between two designs of the same structure the tolerance is 10 %, so
the list shows alternatives rather than small variations of one design.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from synth.problem.requirements import STRUCTURES
from synth.strategies import ORIGINS, Candidate
from synth.verify.same import RANK_RULE, compensator_responses, response_gap
from synth.verify.verdict import Verdict

__all__ = ["RankedDesign", "Refs", "rank_designs", "reference_scales", "score", "score_arrays"]

#: Weights of the score terms (read-only).
WEIGHTS = MappingProxyType({"sensitivity": 0.27, "gain_tolerance": 0.13, "speed": 0.22,
                            "effort": 0.13, "simplicity": 0.13, "tracking": 0.12})


@dataclass(frozen=True)
class Refs:
    """Problem-only reference scales of the score: settling time and control effort."""

    settling_time: float
    control_effort: float


@dataclass(frozen=True)
class RankedDesign:
    """A verified candidate with its place in the ranking."""

    rank: int
    candidate: Candidate
    verdict: Verdict
    score: float
    n_params: int


def reference_scales(problem) -> Refs:
    """``T_ref`` and ``U_ref`` of the score.

    ``T_ref`` is the settling-time limit when given, else ``4 / w_char`` with
    ``w_char`` the problem's characteristic frequency
    (:class:`synth.families.SearchSpace`).  ``U_ref`` is the control-effort
    limit when given, else ``1 / |G(j 4 / T_ref)|``, the
    gain that brings the plant to unit loop gain at the speed asked for.
    """
    from synth.families.base import SearchSpace

    req = problem.requirements
    space = SearchSpace.for_problem(problem)
    ts, effort = req.limit("settling_time"), req.limit("peak_control_effort")
    t_ref = ts if ts is not None else 4.0 / space.w_char
    if effort is not None:
        u_ref = effort
    else:
        g = abs(complex(problem.plant.evaluate(np.array([4j / t_ref]), exact_delay=False)[0]))
        u_ref = 1.0 / g if np.isfinite(g) and g > 0 else 1.0
    return Refs(settling_time=float(t_ref), control_effort=float(u_ref))


def score_arrays(ms, lo, hi, ts, effort, n_params, refs: Refs, final_value=1.0) -> np.ndarray:
    """Vectorised :func:`score` (NaN or missing values count as the worst term)."""
    ms = np.asarray(ms, dtype=float)
    lo = np.asarray(lo, dtype=float)
    hi = np.asarray(hi, dtype=float)
    ts = np.asarray(ts, dtype=float)
    effort = np.asarray(effort, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_sens = np.where(np.isfinite(ms) & (ms >= 1), 1.0 - 1.0 / ms, 1.0)
        up = np.where(hi > 0, np.log(hi), -np.inf)
        down = np.where(lo > 0, -np.log(lo), np.inf)
        g = np.minimum(np.where(np.isnan(up), -np.inf, up), np.where(np.isnan(down), -np.inf, down))
        t_gain = np.where(g > 0, 1.0 / (1.0 + g), 1.0)
        t_speed = np.where(np.isfinite(ts) & (ts >= 0), ts / (ts + refs.settling_time), 1.0)
        t_eff = np.where(np.isfinite(effort) & (effort >= 0),
                         np.minimum(1.0, np.log10(1.0 + effort / refs.control_effort) / 4.0), 1.0)
        fv = np.asarray(final_value, dtype=float)
        t_track = np.where(np.isfinite(fv), np.clip(1.0 - fv, 0.0, 1.0), 1.0)
    t_simple = float(n_params) / 8.0
    w = WEIGHTS
    return (w["sensitivity"] * t_sens + w["gain_tolerance"] * t_gain + w["speed"] * t_speed
            + w["effort"] * t_eff + w["simplicity"] * t_simple + w["tracking"] * t_track)


def score(verdict: Verdict, n_params: int, refs: Refs) -> float:
    """The ranking score of a verified design (lower is better; see the module docstring)."""
    m = verdict.metrics
    rng = m.get("stable_plant_gain_range") or [np.nan, np.nan]
    lo = -np.inf if rng[0] is None else rng[0]
    hi = np.inf if rng[1] is None else rng[1]

    def val(key):
        v = m.get(key)
        return np.nan if v is None else float(v)

    return float(score_arrays(val("peak_sensitivity"), lo, hi, val("settling_time"),
                              val("peak_control_effort"), n_params, refs,
                              final_value=val("final_value")))


def _n_params(candidate: Candidate) -> int:
    if candidate.params:
        return len(candidate.params)
    # outside the family's space: count the free coefficients
    return len(candidate.num) + len(candidate.den) - 1


def _sort_key(item):
    cand, verdict, sc, n = item
    struct = STRUCTURES.index(cand.structure) if cand.structure in STRUCTURES else len(STRUCTURES)
    origin = ORIGINS.index(cand.origin) if cand.origin in ORIGINS else len(ORIGINS)
    shortfall = 0.0 if verdict.feasible else verdict.shortfall
    s = sc if math.isfinite(sc) else 1e9
    return (not verdict.feasible, round(shortfall, 9), round(s, 9), n, struct, origin,
            tuple(round(v, 12) for v in cand.num), tuple(round(v, 12) for v in cand.den))


def rank_designs(pairs, problem, keep: int | None = None) -> list[RankedDesign]:
    """Order verified candidates, drop near duplicates, number them from 1.

    Parameters
    ----------
    pairs : iterable of (Candidate, Verdict)
    problem : synth.requirements.Problem
    keep : int, optional
        Keep at most this many designs (default: ``problem.search.keep``).

    Returns
    -------
    list of RankedDesign
    """
    from synth.families.base import SearchSpace

    refs = reference_scales(problem)
    items = []
    for cand, verdict in pairs:
        n = _n_params(cand)
        items.append((cand, verdict, score(verdict, n, refs), n))
    items.sort(key=_sort_key)
    keep = problem.search.keep if keep is None else keep
    space = SearchSpace.for_problem(problem)
    w = np.geomspace(space.w_min, space.w_max, 40)
    resp = compensator_responses([(it[0].num, it[0].den) for it in items], w)
    kept: list[int] = []
    for i in range(len(items)):
        if len(kept) >= keep:
            break
        if kept:
            gaps = response_gap(resp[kept], resp[i])
            mine = items[i][0].structure
            if any(RANK_RULE.same(g, items[j][0].structure, mine)
                   for g, j in zip(gaps, kept, strict=True)):
                continue
        kept.append(i)
    return [RankedDesign(rank=j + 1, candidate=items[i][0], verdict=items[i][1],
                         score=items[i][2], n_params=items[i][3]) for j, i in enumerate(kept)]
