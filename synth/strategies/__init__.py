"""Design strategies: they propose candidates; the verifier judges them.

See :mod:`synth.strategies.base` for the protocol shared by every strategy.
"""

from synth.strategies.base import (
    ORIGINS,
    STRATEGY_MODULES,
    Candidate,
    SearchContext,
    available_strategies,
    candidate_from_params,
    candidate_from_polys,
)

__all__ = ["Candidate", "ORIGINS", "STRATEGY_MODULES", "SearchContext", "available_strategies",
           "candidate_from_params", "candidate_from_polys"]
