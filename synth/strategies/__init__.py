"""Design strategies: they propose candidates; the verifier judges them.

See :mod:`synth.strategies.base` for the protocol shared by every strategy
and the registry (:func:`default_strategies`): every module here that
defines ``STRATEGY`` is one strategy.
"""

from synth.strategies.base import (
    CONIC_SOLVE_UNITS,
    ORIGINS,
    WORK_BASE,
    WORK_PER_PARAM,
    Candidate,
    SearchContext,
    Strategy,
    candidate_from_params,
    candidate_from_polys,
    default_strategies,
    family_work,
    resolve_strategies,
)

__all__ = ["CONIC_SOLVE_UNITS", "Candidate", "ORIGINS", "SearchContext", "Strategy", "WORK_BASE",
           "WORK_PER_PARAM", "candidate_from_params", "candidate_from_polys",
           "default_strategies", "family_work", "resolve_strategies"]
