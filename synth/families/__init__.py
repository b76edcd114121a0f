"""Compensator structure families: one file per family, all behind one interface.

See :mod:`synth.families.base` for the interface (:class:`Family`) and the
search space shared by the families of one problem.  :data:`FAMILIES` maps
the contract's structure names to the family classes; adding a family is
one new file plus one entry here.
"""

from __future__ import annotations

from types import MappingProxyType

from synth.errors import InputError
from synth.families.base import PD_RATIO_RANGE, AffineForm, Family, SearchSpace
from synth.families.general import GeneralFamily
from synth.families.lag import LagFamily
from synth.families.lead import LeadFamily
from synth.families.leadlag import LeadLagFamily
from synth.families.p import PFamily
from synth.families.pd import PDFamily
from synth.families.pi import PIFamily
from synth.families.pid import PIDFamily

__all__ = [
    "AffineForm",
    "FAMILIES",
    "Family",
    "PD_RATIO_RANGE",
    "SearchSpace",
    "family_for",
    "families_for",
]


#: Structure families keyed by the contract's structure names (read-only).
FAMILIES = MappingProxyType({
    "P": PFamily,
    "PI": PIFamily,
    "PD": PDFamily,
    "PID": PIDFamily,
    "lead": LeadFamily,
    "lag": LagFamily,
    "lead-lag": LeadLagFamily,
    "general": GeneralFamily,
})


def family_for(name: str, problem) -> Family:
    """The family ``name`` over the search space of ``problem``.

    Raises
    ------
    InputError
        For an unknown structure name.
    """
    try:
        cls = FAMILIES[name]
    except KeyError:
        raise InputError(f"unknown structure {name!r}; choose from {', '.join(FAMILIES)}") from None
    return cls(SearchSpace.for_problem(problem))


def families_for(problem) -> list[Family]:
    """The families a design run searches: ``search.structures`` or all of them."""
    names = problem.search.structures or tuple(FAMILIES)
    space = SearchSpace.for_problem(problem)
    return [FAMILIES[n](space) for n in names]
