"""The protocol every design strategy follows, its values, and the strategy registry.

A strategy is an object with four attributes and one method (in the spirit
of scikit-learn's estimators: one small contract, many interchangeable parts):

``name``
    unique key (the registry's, the derived seed's and ``search.declined``'s);
``origin``
    the contract's origin name of what it proposes (``"placement"``,
    ``"convex"`` or ``"search"``, see :data:`ORIGINS`);
``share``
    its fraction of a family's work (see :func:`family_work`);
``order``
    running order within a family (lower first: quick constructive strategies
    run before the global search, which polishes what they found);
``propose(problem, family, context) -> list[Candidate]``
    candidates of one structure family (a :class:`synth.families.Family`)
    for the problem, within ``context.work`` work units.

Strategies only propose; :mod:`synth.design` verifies every candidate with
:func:`synth.verify.verify`, so a strategy may return candidates that fail.
A strategy that has nothing for a family returns ``[]``; one that cannot
handle the case raises :class:`synth.errors.StrategyDeclined` (recorded in
``search.declined``); anything else it raises is a bug and propagates.

Determinism.  The amount of work is counted, never timed: one *work unit*
is the analysis of one candidate compensator (one row of a vectorised
objective evaluation, one placement construction); a conic solve counts
:data:`CONIC_SOLVE_UNITS` units.  Every random choice comes from
``context.seed``.  So the same problem and seed give the same proposals on
any machine under any load.  A strategy never reads the clock.

Registry.  Every module of :mod:`synth.strategies` that defines a module-level
``STRATEGY`` is a strategy (:func:`default_strategies`); adding one is one new
file plus its tests.  :func:`synth.design.run_design` also takes strategy
objects directly (``run_design(problem, strategies=[...])``), so a strategy
defined anywhere plugs in without touching the package.
"""

from __future__ import annotations

import importlib
import math
import pkgutil
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Protocol, runtime_checkable

import numpy as np

__all__ = [
    "CONIC_SOLVE_UNITS",
    "Candidate",
    "ORIGINS",
    "SearchContext",
    "Strategy",
    "WORK_BASE",
    "WORK_PER_PARAM",
    "candidate_from_params",
    "candidate_from_polys",
    "default_strategies",
    "family_work",
    "resolve_strategies",
]

#: Contract origin names, in the ranking's tie-break order.
ORIGINS = ("placement", "convex", "search")

#: Work units of one family at ``search.effort = 1``: ``WORK_BASE +
#: WORK_PER_PARAM * n_params`` (a search space with more parameters gets more
#: evaluations, about as many more as the global search needs per dimension).
WORK_BASE = 2750
WORK_PER_PARAM = 1500
#: Work units one conic (semidefinite or quadratic) solve counts: on the
#: problems synth solves (two Gram matrices of size n + 1 <= 12), one solve
#: costs about as much as 300 rows of the vectorised search objective (measured
#: on the bundled cases: some 60 ms against 0.2 ms).
CONIC_SOLVE_UNITS = 300


@runtime_checkable
class Strategy(Protocol):
    """What :func:`synth.design.run_design` needs from a strategy (see the module docstring)."""

    name: str
    origin: str
    share: float
    order: int

    def propose(self, problem, family, context: SearchContext) -> Sequence[Candidate]:
        """Candidates of ``family`` for ``problem`` within ``context.work`` work units."""


@dataclass(frozen=True)
class Candidate:
    """A proposed compensator ``C(s) = num(s) / den(s)``.

    Attributes
    ----------
    structure : str
        Structure name (the family's ``name``).
    origin : str
        Origin name of the strategy that proposed it (see :data:`ORIGINS`).
    params : tuple of float
        The family's search-space parameters (empty when the candidate does
        not map into the family's space).
    num, den : tuple of float
        Compensator numerator (gain included) and monic denominator.
    provenance : mapping
        How the strategy found it (method, target point, objective, ...);
        JSON-serialisable values only.
    shaping : synth.verify.controller.ReferenceShaping or None
        Reference prefilter or set-point weights added after the search
        (the loop stays ``num/den``).
    anti_windup : synth.verify.controller.AntiWindup or None
        Anti-windup scheme added after the search (with actuator limits).
    """

    structure: str
    origin: str
    params: tuple[float, ...]
    num: tuple[float, ...]
    den: tuple[float, ...]
    provenance: Mapping[str, Any] = field(default_factory=dict)
    shaping: Any = None
    anti_windup: Any = None

    @property
    def gain(self) -> float:
        return float(self.num[0] / self.den[0])

    @property
    def controller(self):
        """The whole design as a :class:`synth.verify.controller.Controller`."""
        from synth.verify.controller import Controller

        return Controller(self.num, self.den, self.shaping, self.anti_windup)


@dataclass(frozen=True)
class SearchContext:
    """What a strategy may use besides the problem and the family.

    Attributes
    ----------
    seed : int
        Seed for this family and strategy (derived from ``search.seed``).
    work : int
        Work units this strategy may spend on this family (module docstring).
    gain_seeds : tuple of float
        Proportional gains worth starting from (inside the requirement or
        stability intervals found by the proportional analysis).
    prior : tuple of Candidate
        Candidates of this family already proposed by earlier strategies.
    explanation : object or None
        The :func:`synth.explain.explain_problem` result.
    """

    seed: int
    work: int
    gain_seeds: tuple[float, ...] = ()
    prior: tuple[Candidate, ...] = ()
    explanation: Any = None


def family_work(family, effort: float = 1.0) -> int:
    """Work units of one family's search: ``effort (WORK_BASE + WORK_PER_PARAM n_params)``."""
    return int(math.floor(float(effort) * (WORK_BASE + WORK_PER_PARAM * family.n_params)))


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


def _check(strategy) -> Strategy:
    """The strategy itself, or TypeError when it does not follow the protocol (a bug)."""
    if not isinstance(strategy, Strategy):
        raise TypeError(f"{strategy!r} is not a strategy: it needs name, origin, share, order "
                        "and propose(problem, family, context)")
    if not (isinstance(strategy.share, (int, float)) and 0.0 < strategy.share <= 1.0):
        raise TypeError(f"strategy {strategy.name!r}: share must lie in (0, 1], "
                        f"got {strategy.share!r}")
    return strategy


def default_strategies() -> tuple[Strategy, ...]:
    """Every strategy of the package, in running order.

    A module of :mod:`synth.strategies` whose name does not start with ``_``
    and that defines ``STRATEGY`` contributes that object; modules without
    it (the shared helpers) contribute nothing.
    """
    import synth.strategies as package

    found = []
    for info in pkgutil.iter_modules(package.__path__):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{package.__name__}.{info.name}")
        strategy = getattr(module, "STRATEGY", None)
        if strategy is not None:
            found.append(_check(strategy))
    return _ordered(found)


def _ordered(strategies: Iterable[Strategy]) -> tuple[Strategy, ...]:
    out = tuple(sorted(strategies, key=lambda s: (s.order, s.name)))
    names = [s.name for s in out]
    if len(set(names)) != len(names):
        raise TypeError(f"strategy names must be unique, got {names}")
    return out


def resolve_strategies(spec=None) -> tuple[Strategy, ...]:
    """The strategies a run uses: the registry's, or the given objects or registry names.

    Parameters
    ----------
    spec : None or iterable of (Strategy or str)
        None for :func:`default_strategies`; otherwise strategy objects, or
        names of registered strategies, in any order (they run by ``order``).

    Raises
    ------
    TypeError
        For an object that is not a strategy or a name not in the registry
        (a programming error, not bad input).
    """
    if spec is None:
        return default_strategies()
    registry = None
    out = []
    for item in spec:
        if isinstance(item, str):
            if registry is None:
                registry = {s.name: s for s in default_strategies()}
            if item not in registry:
                raise TypeError(f"no strategy named {item!r}; registered: {', '.join(registry)}")
            item = registry[item]
        out.append(_check(item))
    return _ordered(out)
