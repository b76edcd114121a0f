"""Ranking of verified designs: feasible first, then the problem's objective.

Order.  Feasible designs come first, ordered by the value of the problem's
objective (``[search] objective``, :mod:`synth.problem.objectives`; lower is
better), designs whose value is unbounded (a loop without integral action
has no finite load IAE) after the others, ordered by the objective's
fallback value; infeasible ones follow, ordered by their total normalised
shortfall (:attr:`synth.verify.Verdict.shortfall`: how far they are from
meeting every requirement), then by the objective.  Ties (values equal to
nine significant digits) go to the design with fewer parameters, then to
the simpler structure in the order of :data:`synth.requirements.STRUCTURES`,
then by origin (placement, convex, search) and finally by the compensator
coefficients, so the order is total and deterministic.

The objective's scales depend on the problem only
(:class:`synth.problem.objectives.ObjectiveScales`), never on the other
candidates, so adding a candidate never changes the order of the others.
``RankedDesign.score`` is the objective's value (``inf`` when unbounded).

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

import numpy as np

from synth.problem.requirements import STRUCTURES
from synth.strategies import ORIGINS, Candidate
from synth.verify.same import RANK_RULE, compensator_responses, response_gap
from synth.verify.verdict import Verdict

__all__ = ["RankedDesign", "rank_designs"]


@dataclass(frozen=True)
class RankedDesign:
    """A verified candidate with its place in the ranking.

    ``score`` is the value of the problem's objective (lower is better,
    ``inf`` when a metric it needs is unbounded); ``fallback`` orders designs
    whose score is ``inf``.
    """

    rank: int
    candidate: Candidate
    verdict: Verdict
    score: float
    n_params: int
    fallback: float = math.inf


def _sig(v: float) -> float:
    """``v`` to nine significant digits (relative: values of any scale tie alike)."""
    return float(f"{v:.9g}") if math.isfinite(v) else v


def _n_params(candidate: Candidate) -> int:
    if candidate.params:
        return len(candidate.params)
    # outside the family's space: count the free coefficients
    return len(candidate.num) + len(candidate.den) - 1


def _sort_key(item):
    cand, verdict, (value, fallback), n = item
    struct = STRUCTURES.index(cand.structure) if cand.structure in STRUCTURES else len(STRUCTURES)
    origin = ORIGINS.index(cand.origin) if cand.origin in ORIGINS else len(ORIGINS)
    shortfall = 0.0 if verdict.feasible else verdict.shortfall
    value = value if not math.isnan(value) else math.inf
    fallback = fallback if not math.isnan(fallback) else math.inf
    return (not verdict.feasible, round(shortfall, 9), _sig(value), _sig(fallback), n, struct,
            origin, tuple(round(v, 12) for v in cand.num), tuple(round(v, 12) for v in cand.den))


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
    from synth.problem.objectives import ObjectiveScales, objective_order

    scales = ObjectiveScales.for_problem(problem)
    items = []
    for cand, verdict in pairs:
        order = objective_order(problem, verdict.metrics, scales) if verdict.stable \
            else (math.inf, math.inf)
        items.append((cand, verdict, order, _n_params(cand)))
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
                         score=items[i][2][0], n_params=items[i][3], fallback=items[i][2][1])
            for j, i in enumerate(kept)]
