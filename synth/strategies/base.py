"""Design strategies: one module each, all with the same two names.

A strategy module defines

``ORIGIN``
    the contract's origin name of what it proposes: ``"placement"``,
    ``"convex"`` or ``"search"``;
``propose(problem, family, context) -> list[Candidate]``
    candidates of one structure family (a :class:`synth.families.Family`)
    for the problem, within ``context.deadline``.

Strategies only propose; :mod:`synth.design` verifies every candidate with
:func:`synth.verify.verify`, so a strategy may return candidates that fail.
A strategy that does not apply to a family returns ``[]``.  Randomness must
come from ``context.seed`` alone (same file and seed, same proposals), and a
strategy should do a fixed amount of work that normally ends well before the
deadline, which is only a safety cap.

:data:`STRATEGY_MODULES` lists the strategies by import path, in the order
they run for each family; :func:`available_strategies` imports them lazily
and skips the ones not written yet.
"""

from __future__ import annotations

import importlib
import time
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import ModuleType
from typing import Any

import numpy as np

__all__ = [
    "Candidate",
    "ORIGINS",
    "STRATEGY_MODULES",
    "SearchContext",
    "available_strategies",
    "candidate_from_params",
    "candidate_from_polys",
]

#: Contract origin names.
ORIGINS = ("placement", "convex", "search")

#: Strategy modules by import path, in running order: the quick constructive
#: ones first, so the global search can start from what they found.
STRATEGY_MODULES = ("synth.strategies.placement", "synth.strategies.certified", "synth.strategies.evolve")


@dataclass(frozen=True)
class Candidate:
    """A proposed compensator ``C(s) = num(s) / den(s)``.

    Attributes
    ----------
    structure : str
        Contract structure name (a key of :data:`synth.families.FAMILIES`).
    origin : str
        Contract origin name (one of :data:`ORIGINS`).
    params : tuple of float
        The family's search-space parameters (empty when the candidate does
        not map into the family's space).
    num, den : tuple of float
        Compensator numerator (gain included) and monic denominator.
    provenance : mapping
        How the strategy found it (method, target point, objective, ...);
        JSON-serialisable values only.
    """

    structure: str
    origin: str
    params: tuple[float, ...]
    num: tuple[float, ...]
    den: tuple[float, ...]
    provenance: Mapping[str, Any] = field(default_factory=dict)

    @property
    def gain(self) -> float:
        return float(self.num[0] / self.den[0])


@dataclass(frozen=True)
class SearchContext:
    """What a strategy may use besides the problem and the family.

    Attributes
    ----------
    seed : int
        Seed for this family and strategy (derived from ``search.seed``).
    deadline : float
        ``time.monotonic()`` value after which the strategy must return.
    budget : float
        Seconds granted to this strategy for this family.
    gain_seeds : tuple of float
        Proportional gains worth starting from (inside the requirement or
        stability intervals found by the proportional analysis).
    prior : tuple of Candidate
        Candidates of this family already proposed by earlier strategies.
    explanation : object or None
        The :func:`synth.explain.explain_problem` result when available.
    """

    seed: int
    deadline: float
    budget: float
    gain_seeds: tuple[float, ...] = ()
    prior: tuple[Candidate, ...] = ()
    explanation: Any = None

    def time_left(self) -> float:
        return self.deadline - time.monotonic()


def candidate_from_params(family, x, origin: str, provenance=None) -> Candidate:
    """Candidate from a parameter vector of ``family``."""
    num, den = family.poly(np.asarray(x, dtype=float))
    return Candidate(structure=family.name, origin=origin,
                     params=tuple(float(v) for v in x),
                     num=tuple(float(v) for v in num), den=tuple(float(v) for v in den),
                     provenance=dict(provenance or {}))


def candidate_from_polys(family, num, den, origin: str, provenance=None) -> Candidate:
    """Candidate from compensator polynomials (``params`` from ``family.from_polys``)."""
    from synth.numerics.poly import trim

    n, d = trim(num), trim(den)
    lead = d[0]
    n, d = n / lead, d / lead
    x = family.from_polys(n, d)
    return Candidate(structure=family.name, origin=origin,
                     params=() if x is None else tuple(float(v) for v in x),
                     num=tuple(float(v) for v in n), den=tuple(float(v) for v in d),
                     provenance=dict(provenance or {}))


def available_strategies(paths=STRATEGY_MODULES) -> list[ModuleType]:
    """Import the strategy modules that exist, in order (missing ones are skipped)."""
    out = []
    for path in paths:
        try:
            mod = importlib.import_module(path)
        except ModuleNotFoundError as err:
            if err.name == path:  # the module itself is not written yet
                continue
            raise
        if hasattr(mod, "propose") and hasattr(mod, "ORIGIN"):
            out.append(mod)
    return out
