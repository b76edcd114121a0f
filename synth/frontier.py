"""The performance-robustness trade-off per structure (``synth frontier``).

For each structure of a requirements file (``search.structures``, or every
registered structure) :func:`run_frontier` finds the best value of the
file's objective (``[search] objective``) as the robustness limit, the peak
sensitivity ``max_peak_sensitivity``, moves over a list of levels, with the
design at each point; then, for the best design at the file's own limits,
how much relaxing each *binding* requirement by 10 % would improve the
objective.  It tells an engineer what robustness costs, what a PID or a
lead-lag buys over a PI, and which requirement is the expensive one.

How a point is found.  Each point is one run of the design pipeline
(:func:`synth.design.run_design`) on a copy of the problem in which only the
Ms limit is replaced (every other requirement, robust model, actuator limit
and sampling setting stays) and only one structure is searched, at the
effort ``search.effort * FRONTIER_EFFORT``.  A point is the rank-1 design
of that run when it meets every requirement; a level where the structure
has no feasible design has the value ``None``.  :func:`frontier_point` is a
pure function of its arguments (no shared state, JSON-ready result), so a
batch runner can send the points to workers as independent tasks
(:func:`frontier_tasks` lists them); :func:`run_frontier` runs them one
after the other, which suits a machine of few cores.

The value.  The objective's value (:func:`synth.problem.objectives.objective_value`,
lower is better) in the unit of its headline metric (:data:`MEASURES`): the
load-step IAE for ``disturbance`` and ``balanced`` (``balanced`` weighs it
with its robustness factor, which is 1 up to Ms = 1.4), the settling time
in seconds for ``speed``, the peak sensitivity for ``robustness``, and the
peak control effort plus the noise gain for ``effort``.  When the file sets
no ``max_noise_gain``, the objectives' default noise preference may weigh
the value too (see :mod:`synth.problem.objectives`); a value then exceeds
the bare metric, and the table says so.

Binding and relaxation.  At the best design over all structures at the
file's own limits, a requirement is *binding* when its room
(:meth:`synth.problem.catalogue.Requirement.room`) is at most
:data:`BINDING_ROOM` of the limit, the rule ``synth compare`` uses.  It is
relaxed by :data:`RELAX_FRACTION` of its value (:func:`relaxed_limit`), and
the best design's structure is searched again with only that limit changed.
The relaxed run uses the same seed as the baseline (common random numbers:
the difference between the two runs is the limit's, not the search's luck).
A design meeting the original limits also meets the relaxed ones, so a
relaxed value above the baseline's is search noise, reported as it is and
worded "buys nothing measurable" in the text.

Determinism.  Every run derives its seeds from ``search.seed`` exactly as
``synth design`` does (the same seed at every level, so neighbouring levels
differ by their limit only); work is counted in work units, never by the
clock.  The same file, seed and levels give the same ``synth.frontier/1``
JSON, alone or under load.

References
----------
.. [1] O. Garpinger, T. Hagglund and K. J. Astrom, "Performance and
   robustness trade-offs in PID control", J. Process Control 24 (2014)
   568-577 (load-disturbance IAE against the robustness limit, per
   controller structure).
.. [2] K. J. Astrom, H. Panagopoulos and T. Hagglund, "Design of PI
   controllers based on non-convex optimization", Automatica 34(5) (1998)
   585-601 (the best load rejection under an Ms limit).
.. [3] S. Boyd and L. Vandenberghe, *Convex Optimization*, Cambridge, 2004,
   sec. 5.6 (sensitivity of an optimum to a constraint: an inactive
   constraint has no price).
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

from synth.errors import OptionError

__all__ = ["BINDING_ROOM", "DEFAULT_LEVELS", "FRONTIER_EFFORT", "MAX_LEVELS", "MEASURE",
           "MEASURES", "RELAX_FRACTION", "SCHEMA", "FrontierPoint", "FrontierResult",
           "FrontierTask", "Measure", "Relaxation", "binding_requirements", "frontier_point",
           "frontier_tasks", "load_frontier", "parse_levels", "read_frontier", "relax",
           "relaxed_limit", "run_frontier", "with_limit"]

#: The JSON schema name of :meth:`FrontierResult.to_json`.
SCHEMA = "synth.frontier/1"

#: The requirement whose limit moves over the levels, and its metric.
MEASURE_KEY = "max_peak_sensitivity"
MEASURE = "peak_sensitivity"

#: The default Ms levels: the common range of robustness, 1.2 (very robust) to 2.0
#: (aggressive) (common practice; Astrom and Hagglund, Advanced PID Control, 2006, ch. 4).
DEFAULT_LEVELS = (1.2, 1.4, 1.6, 1.8, 2.0)

#: Most levels ``--levels`` may name (each level costs one design run per structure).
MAX_LEVELS = 25

#: Largest level accepted: Ms beyond it means a loop a hair from instability (a modulus
#: margin 1/Ms below 0.1); nobody designs there, and the number is a typing error.
MAX_LEVEL = 10.0

#: Effort of each frontier run relative to the file's ``search.effort``.  Measured
#: (docs/frontier.md, "Costs"): half the effort keeps the PI optimum on the peers' plants
#: but loses up to 60 % on PID points (heated tank, first-order lag with dead time), so
#: every point gets the file's full effort; pass ``effort`` for quicker, rougher frontiers.
FRONTIER_EFFORT = 1.0

#: The lowest effort the requirements schema accepts (a frontier run never goes below it).
_MIN_EFFORT = 0.05

#: How much a binding requirement is relaxed: 10 % of its value (of its width for a range).
RELAX_FRACTION = 0.10

#: A requirement is binding when its room at the best design is at most this fraction of
#: the limit (the rule of ``synth compare``, :data:`synth.outputs.compare.BINDING_MARGIN`).
BINDING_ROOM = 0.05

ProgressFn = Callable[[float, float, str], None]


# ----------------------------------------------------------------------------------------------
# what the value means
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Measure:
    """How an objective's value reads in physical units.

    Attributes
    ----------
    objective : str
        The objective's name.
    metric : str
        The headline metric (its label and unit come from the catalogue).
    scale : str or None
        The :class:`synth.problem.objectives.ObjectiveScales` field that turns
        the objective's normalised value back into the metric's unit (``None``:
        the value is already in it).
    what : str
        What the value is, in words (tables, plots, sentences).
    """

    objective: str
    metric: str
    scale: str | None
    what: str


#: The value of each objective in the unit of its headline metric (module docstring).
MEASURES: Mapping[str, Measure] = MappingProxyType({m.objective: m for m in (
    Measure("disturbance", "load_iae", "iae", "load-step IAE"),
    Measure("balanced", "load_iae", "iae", "load-step IAE (weighted by the robustness factor)"),
    Measure("speed", "settling_time", "time", "settling time"),
    Measure("robustness", "peak_sensitivity", None, "peak sensitivity"),
    Measure("effort", "peak_control_effort", "gain", "peak control effort plus noise gain"),
)})


def _measure(problem) -> Measure:
    """The objective's :class:`Measure`; an objective not listed keeps its normalised value."""
    name = problem.search.objective
    if name in MEASURES:
        return MEASURES[name]
    from synth.problem.objectives import objective

    return Measure(name, objective(name).metrics[0], None, f"{name} objective (normalised)")


def _physical_value(problem, metrics: Mapping[str, Any]) -> float:
    """The objective's value of a design in the unit of its headline metric."""
    from synth.problem.objectives import ObjectiveScales, objective_value

    scales = ObjectiveScales.for_problem(problem)
    value = objective_value(problem, metrics, scales)
    m = _measure(problem)
    return value * (1.0 if m.scale is None else float(getattr(scales, m.scale)))


# ----------------------------------------------------------------------------------------------
# levels and limits
# ----------------------------------------------------------------------------------------------


def parse_levels(text: str, option: str = "--levels") -> tuple[float, ...]:
    """The Ms levels of a comma-separated list: numbers >= 1, increasing, unique.

    Raises
    ------
    synth.errors.OptionError
        One line naming the option and what is wrong.
    """
    parts = [p.strip() for p in str(text).split(",")]
    if not parts or any(not p for p in parts):
        raise OptionError(f"{option} {text}: give comma-separated numbers, e.g. 1.2,1.4,1.6")
    if len(parts) > MAX_LEVELS:
        raise OptionError(f"{option}: at most {MAX_LEVELS} levels (got {len(parts)})")
    levels = []
    for p in parts:
        try:
            v = float(p)
        except ValueError:
            raise OptionError(f"{option} {text}: {p!r} is not a number") from None
        if not math.isfinite(v) or v < 1.0 or v > MAX_LEVEL:
            raise OptionError(f"{option} {text}: {p} is not a peak sensitivity between 1 and "
                              f"{MAX_LEVEL:g}")
        levels.append(v)
    for a, b in zip(levels, levels[1:], strict=False):
        if b == a:
            raise OptionError(f"{option} {text}: {b:g} is given twice")
        if b < a:
            raise OptionError(f"{option} {text}: levels must be increasing ({b:g} after {a:g})")
    return tuple(levels)


def with_limit(problem, key: str, value, *, structure: str | None = None,
               effort: float | None = None):
    """A copy of ``problem`` with one requirement's limit replaced (``None`` removes it).

    Parameters
    ----------
    problem : synth.problem.Problem
    key : str
        A ``[requirements]`` key of the catalogue.
    value : float, (float, float) or None
    structure : str, optional
        Search only this structure.
    effort : float, optional
        The search effort of the copy.
    """
    values = dict(problem.requirements.items)
    if value is None:
        values.pop(key, None)
    else:
        values[key] = value
    requirements = type(problem.requirements)(**values)
    search = problem.search
    if structure is not None:
        search = dataclasses.replace(search, structures=(structure,))
    if effort is not None:
        search = dataclasses.replace(search, effort=effort)
    return dataclasses.replace(problem, requirements=requirements, search=search)


def relaxed_limit(key: str, limit, fraction: float = RELAX_FRACTION):
    """The limit of requirement ``key`` relaxed by ``fraction`` of itself.

    ``upper``: ``limit + fraction * max(|limit|, floor)`` (an Ms of 1.4
    becomes 1.54; a limit of 0, such as no overshoot, moves by the fraction
    of the catalogue's normalisation floor); ``lower``: ``limit - fraction
    * max(|limit|, floor)``; ``contain`` (a range the design must cover,
    such as the plant-gain range): both ends move towards their geometric
    mean by the factor ``1 + fraction`` (the catalogue measures those ranges
    on a log scale), never past it; ``within`` (a range the value must lie
    in): ``fraction`` of its width added, half at each end.

    Returns
    -------
    float or (float, float)
    """
    from synth.problem.catalogue import requirement

    entry = requirement(key)
    if entry.kind == "upper":
        return _tidy(limit + fraction * max(abs(limit), entry.floor))
    if entry.kind == "lower":
        return _tidy(limit - fraction * max(abs(limit), entry.floor))
    if entry.kind == "contain":
        a, b = limit
        mid = math.sqrt(a * b)
        return (_tidy(min(a * (1.0 + fraction), mid)), _tidy(max(b / (1.0 + fraction), mid)))
    if entry.kind == "within":
        a, b = limit
        pad = 0.5 * fraction * (b - a)
        return (_tidy(a - pad), _tidy(b + pad))
    raise ValueError(f"{key} is a setting; it has no limit to relax")


def _tidy(x: float) -> float:
    """``x`` to 12 significant digits: 1.4 relaxed by 10 % is 1.54, not 1.5399999999999998."""
    return float(f"{x:.12g}")


# ----------------------------------------------------------------------------------------------
# one point: a pure function
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class FrontierPoint:
    """The best design of one structure under one set of limits.

    Attributes
    ----------
    structure : str
    level : float or None
        The Ms limit of the run (``None``: the file's own requirements, with
        or without an Ms limit).
    value : float or None
        The objective's value in the unit of :data:`MEASURES` (lower is
        better); ``None`` when no design of the structure met every requirement.
    design : dict or None
        The best design as a ``synth.design/1`` design object (compensator,
        metrics, description, reference filter, ...); ``None`` with ``value``.
    work : int
        Work units the run spent.
    searched : float or None
        The value this point's own run found (``value`` before the envelope).
    carried_from : float or None
        When a design found under a tighter Ms limit is better than this run's
        (it meets this limit too, everything else being equal): that limit,
        whose design and value this point then carries.
    """

    structure: str
    level: float | None
    value: float | None
    design: dict | None
    work: int
    searched: float | None = None
    carried_from: float | None = None

    @property
    def unbounded(self) -> bool:
        """A feasible design whose objective is unbounded (no integral action for a load IAE)."""
        return self.value is None and self.design is not None

    def to_json(self) -> dict:
        """``{"level", "value", "design"}`` as in ``synth.frontier/1``, plus ``unbounded``."""
        from synth.outputs.jsonout import clean

        out = {"level": self.level, "value": self.value, "design": self.design,
               "searched": self.searched}
        if self.carried_from is not None:
            out["carried_from"] = self.carried_from
        if self.unbounded:
            out["unbounded"] = True
        return clean(out)


@dataclass(frozen=True)
class FrontierTask:
    """One independent run of :func:`frontier_point` (for a batch runner).

    ``problem`` is already the copy to solve (limit replaced, one structure, the
    frontier's effort); ``level`` is what the point reports.
    """

    problem: Any
    structure: str
    level: float | None

    def run(self) -> FrontierPoint:
        return frontier_point(self.problem, self.structure, self.level)


def frontier_point(problem, structure: str, level: float | None) -> FrontierPoint:
    """Run the design pipeline for one structure and return its best feasible design.

    A pure function of its arguments: ``problem`` is the copy to solve (see
    :func:`frontier_tasks`), nothing else is read, and the result is a
    frozen, JSON-ready value.

    Parameters
    ----------
    problem : synth.problem.Problem
        Searched for ``structure`` only, at its own effort and seed.
    structure : str
    level : float or None
        The Ms level the point stands for (only recorded).

    Returns
    -------
    FrontierPoint

    References
    ----------
    .. [1] Garpinger, Hagglund and Astrom (2014): one optimisation per
       structure and robustness level.
    """
    from synth.design import run_design
    from synth.outputs.run import design_json

    if problem.search.structures != (structure,):
        problem = dataclasses.replace(
            problem, search=dataclasses.replace(problem.search, structures=(structure,)))
    run = run_design(problem)
    work = int(sum(run.stats.get("work", {}).values()))
    best = run.designs[0] if run.designs else None
    if best is None or not best.verdict.feasible:
        return FrontierPoint(structure, level, None, None, work)
    doc = design_json(run)
    design = dict(doc["designs"][0])
    value = _physical_value(problem, best.verdict.metrics)
    if not math.isfinite(value):
        # feasible, but the objective is unbounded (no integral action for a load IAE):
        # there is no value to plot; the design is kept for the record
        return FrontierPoint(structure, level, None, design, work)
    return FrontierPoint(structure, level, value, design, work, searched=value)


def _effort(problem, effort: float | None) -> float:
    if effort is None:
        effort = FRONTIER_EFFORT * problem.search.effort
    return max(_MIN_EFFORT, float(effort))


def _structures(problem) -> tuple[str, ...]:
    from synth.families import families_for

    return tuple(f.name for f in families_for(problem))


def frontier_tasks(problem, levels: Sequence[float] = DEFAULT_LEVELS,
                   effort: float | None = None) -> list[FrontierTask]:
    """The independent runs of the frontier proper: every structure at every level.

    The file's own limits (the baseline of the relaxations) are one more task
    per structure, with ``level=None``, unless the file's Ms limit is one of
    the levels.
    """
    eff = _effort(problem, effort)
    own = problem.requirements.limit(MEASURE)
    tasks = []
    for s in _structures(problem):
        for level in levels:
            tasks.append(FrontierTask(with_limit(problem, MEASURE_KEY, level, structure=s,
                                                 effort=eff), s, float(level)))
        if own is None or float(own) not in {float(v) for v in levels}:
            tasks.append(FrontierTask(with_limit(problem, MEASURE_KEY, own, structure=s,
                                                 effort=eff), s, None))
    return tasks


# ----------------------------------------------------------------------------------------------
# relaxations
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Relaxation:
    """What relaxing one binding requirement by 10 % buys.

    Attributes
    ----------
    requirement : str
        The file key.
    limit_from, limit_to : float or (float, float)
        The file's limit and the relaxed one (JSON ``from`` and ``to``).
    objective_from, objective_to : float or None
        The best value at the file's limits and with this one relaxed
        (``None``: no feasible design found).
    structure : str
        The structure searched (the best design's).
    room : float
        The requirement's room at the best design (fraction of the limit).
    design : dict or None
        The relaxed run's best design.
    work : int
        Work units of the relaxed run.
    searched : float or None
        The value the relaxed run found (``objective_to`` is the lesser of it
        and ``objective_from``: the baseline design meets the relaxed limit).
    """

    requirement: str
    limit_from: Any
    limit_to: Any
    objective_from: float | None
    objective_to: float | None
    structure: str
    room: float
    design: dict | None = None
    work: int = 0
    searched: float | None = None

    @property
    def improvement(self) -> float | None:
        """Fraction by which the objective improved (positive = better), or None."""
        a, b = self.objective_from, self.objective_to
        if a is None or b is None or not a:
            return None
        return (a - b) / abs(a)

    def to_json(self) -> dict:
        from synth.outputs.jsonout import clean

        return clean({"requirement": self.requirement, "from": _limit_json(self.limit_from),
                      "to": _limit_json(self.limit_to), "objective_from": self.objective_from,
                      "objective_to": self.objective_to, "structure": self.structure,
                      "room": self.room, "searched": self.searched, "design": self.design})


def _limit_json(limit):
    return list(limit) if isinstance(limit, (tuple, list)) else limit


def binding_requirements(problem, metrics: Mapping[str, Any],
                         room: float = BINDING_ROOM) -> tuple[list, list]:
    """Split the file's limits into binding and slack ones at a design.

    Parameters
    ----------
    problem : synth.problem.Problem
    metrics : mapping
        The design's metrics (verifier or design JSON; ``None`` unbounded).
    room : float
        The binding threshold (fraction of the limit).

    Returns
    -------
    (binding, slack) : lists of ``(Requirement, limit, room)``
        In catalogue order.  A met requirement whose metric is unbounded on the
        good side (an infinite gain margin) is slack.
    """
    binding, slack = [], []
    for entry, limit in problem.requirements.limits():
        value = metrics.get(entry.metric)
        if isinstance(value, list):
            value = tuple(value)
        if entry.kind == "within" and value is None:
            continue
        r = entry.room(value, limit)
        (binding if r <= room else slack).append((entry, limit, float(r)))
    return binding, slack


def relax(problem, key: str, structure: str, baseline: float | None,
          effort: float | None = None, fraction: float = RELAX_FRACTION,
          room: float = math.nan) -> Relaxation:
    """Search ``structure`` again with requirement ``key`` relaxed by ``fraction``.

    Parameters
    ----------
    problem : synth.problem.Problem
        The file's problem (its own limits).
    key : str
        A requirement the file sets.
    structure : str
    baseline : float or None
        The best value at the file's limits (``objective_from``).
    effort : float, optional
        Default: the frontier's (:data:`FRONTIER_EFFORT` times ``search.effort``).
    """
    limit = problem.requirements.value(key)
    if limit is None:
        raise ValueError(f"the problem sets no {key}")
    if isinstance(limit, list):
        limit = tuple(limit)
    to = relaxed_limit(key, limit, fraction)
    point = frontier_point(with_limit(problem, key, to, structure=structure,
                                      effort=_effort(problem, effort)), structure, None)
    return Relaxation(key, limit, to, baseline, point.value, structure, room, point.design,
                      point.work, searched=point.value)


# ----------------------------------------------------------------------------------------------
# the whole frontier
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class FrontierResult:
    """The frontier of a problem: per structure, the best value at each Ms level.

    Attributes
    ----------
    problem : synth.problem.Problem
    levels : tuple of float
    effort : float
        The effort of every run.
    structures : mapping str -> tuple of FrontierPoint
        Per structure, one point per level (in level order).
    own : mapping str -> FrontierPoint
        Per structure, the best design at the file's own limits.
    best : FrontierPoint or None
        The best of ``own`` (lowest value; ties by structure order), or None
        when no structure has a feasible design with a finite value there.
    relaxations : tuple of Relaxation
        One per binding requirement at ``best``.
    slack : tuple of (str, float)
        The file's other limits with their room at ``best``.
    best_note : str
        How ``best`` was found when not by its structure's own run.
    """

    problem: Any
    levels: tuple[float, ...]
    effort: float
    structures: Mapping[str, tuple[FrontierPoint, ...]]
    own: Mapping[str, FrontierPoint]
    best: FrontierPoint | None
    relaxations: tuple[Relaxation, ...]
    slack: tuple[tuple[str, float], ...]
    best_note: str = ""

    @property
    def measure(self) -> Measure:
        return _measure(self.problem)

    @property
    def own_level(self) -> float | None:
        """The file's own Ms limit, or None."""
        v = self.problem.requirements.limit(MEASURE)
        return None if v is None else float(v)

    @property
    def any_feasible(self) -> bool:
        """Whether some structure has a feasible design at some level (else exit code 3)."""
        return any(p.design is not None for pts in self.structures.values() for p in pts) or any(
            p.design is not None for p in self.own.values())

    @property
    def work(self) -> int:
        """Work units of every run together (levels, the file's limits, relaxations)."""
        return (sum(p.work for pts in self.structures.values() for p in pts)
                + sum(p.work for p in self.own.values() if p.level is None)
                + sum(r.work for r in self.relaxations))

    def to_json(self) -> dict:
        """The ``synth.frontier/1`` document (contract fields first, then documented extras)."""
        from synth.outputs.cautions import CAUTION
        from synth.outputs.jsonout import clean
        from synth.problem.catalogue import METRICS
        from synth.problem.objectives import objective

        m = self.measure
        metric = METRICS[m.metric]
        best = None
        if self.best is not None:
            best = {"structure": self.best.structure, "value": self.best.value,
                    "design": self.best.design}
            if self.best_note:
                best["note"] = self.best_note
        doc = {
            "schema": SCHEMA,
            "objective": self.problem.search.objective,
            "measure": MEASURE,
            "structures": {s: [p.to_json() for p in pts] for s, pts in self.structures.items()},
            "relaxations": [r.to_json() for r in self.relaxations],
            "objective_label": objective(self.problem).label,
            "value_label": m.what,
            "value_metric": m.metric,
            "value_unit": metric.unit,
            "levels": list(self.levels),
            "own_level": self.own_level,
            "own": {s: {k: v for k, v in p.to_json().items() if k != "level"}
                    for s, p in self.own.items()},
            "best": best,
            "slack": [{"requirement": k, "room": r} for k, r in self.slack],
            "binding_room": BINDING_ROOM,
            "relax_fraction": RELAX_FRACTION,
            "effort": self.effort,
            "seed": self.problem.search.seed,
            "work": self.work,
            "source": self.problem.source,
            "caution": CAUTION,
        }
        return clean(doc)

    def text(self):
        """The terminal account (:class:`synth.outputs.text.TextReport`)."""
        from synth.outputs.frontier import frontier_text

        return frontier_text(self)

    def text_lines(self) -> list[str]:
        from synth.outputs.text import plain_lines

        return plain_lines(self.text())


def _carry(point: FrontierPoint, donors: Sequence[FrontierPoint]) -> FrontierPoint:
    """``point``, or the best of ``donors`` (found under tighter Ms limits) when that is better.

    A design found under a tighter Ms limit, everything else equal, meets the
    looser one too; so the best value known at a level is the least over it
    and every tighter level (the frontier is non-increasing by construction of
    the problem, whatever the luck of one search).
    """
    best = point
    for d in donors:
        if d.value is not None and (best.value is None or d.value < best.value):
            best = d
    if best is point:
        return point
    return dataclasses.replace(point, value=best.value, design=best.design,
                               carried_from=best.level if best.carried_from is None
                               else best.carried_from)


def _meets(key: str, limit, design: dict) -> bool:
    """Whether a design (``synth.design/1`` object) meets ``key``'s ``limit`` (catalogue rule)."""
    from synth.problem.catalogue import REQUIREMENTS, requirement

    entry = requirement(key)
    value = design["metrics"].get(entry.metric)
    if entry.metric == "gain" and value is None:
        value = design["compensator"]["gain"]
    if isinstance(value, list):
        value = tuple(value)
    context = {k: r.default for k, r in REQUIREMENTS.items()}
    return entry.assess(value, limit, context) is None


def run_frontier(problem, levels: Sequence[float] | None = None, effort: float | None = None,
                 progress: ProgressFn | None = None) -> FrontierResult:
    """The trade-off frontier of ``problem`` and the price of each binding requirement.

    Parameters
    ----------
    problem : synth.problem.Problem
    levels : sequence of float, optional
        Ms levels, increasing, each >= 1 (default :data:`DEFAULT_LEVELS`).
    effort : float, optional
        Effort of each run (default :data:`FRONTIER_EFFORT` times ``search.effort``).
    progress : callable, optional
        ``progress(done, total, label)``; the total grows by the relaxations
        once the binding requirements are known.

    Returns
    -------
    FrontierResult

    Notes
    -----
    Envelope: a point whose own run found less than a tighter level's design
    carries that design (:func:`_carry`; ``carried_from`` in the JSON,
    ``searched`` keeps the run's own value).  The file's own limits carry
    the best of the levels at or below the file's Ms limit (every level when
    the file sets none).  A relaxed run's best design that meets the
    original limit as well is a design for the file's own limits: when it
    is better than the baseline it becomes the best design, and every
    relaxation is measured from it; a relaxation's value is never worse
    than the baseline's (the baseline design meets the relaxed limits).

    References
    ----------
    .. [1] Garpinger, Hagglund and Astrom (2014).
    """
    from synth.numerics.threads import single_threaded

    levels = tuple(float(v) for v in (DEFAULT_LEVELS if levels is None else levels))
    if not levels:
        raise ValueError("run_frontier needs at least one level")
    eff = _effort(problem, effort)
    tasks = frontier_tasks(problem, levels, eff)
    total = len(tasks)
    points: list[FrontierPoint] = []
    with single_threaded():
        for i, task in enumerate(tasks):
            if progress is not None:
                at = "file's limits" if task.level is None else f"Ms <= {task.level:g}"
                progress(i, total, f"{task.structure} at {at}")
            points.append(task.run())
    names = _structures(problem)
    own_level = problem.requirements.limit(MEASURE)
    structures: dict[str, tuple[FrontierPoint, ...]] = {}
    own: dict[str, FrontierPoint] = {}
    for s in names:
        raw = sorted((p for p in points if p.structure == s and p.level is not None),
                     key=lambda p: p.level)
        structures[s] = tuple(_carry(p, raw[:k]) for k, p in enumerate(raw))
        mine = [p for p in points if p.structure == s and p.level is None]
        if not mine:   # the file's Ms limit is one of the levels
            mine = [p for p in raw if p.level == float(own_level)]
        within = [p for p in raw if own_level is None or p.level <= float(own_level)]
        own[s] = _carry(mine[0], within)
    finite = [own[s] for s in names if own[s].value is not None]
    best = min(finite, key=lambda p: p.value) if finite else None
    relaxations: list[Relaxation] = []
    slack: list[tuple[str, float]] = []
    note = ""
    if best is not None:
        metrics = dict(best.design["metrics"])
        # the compensator gain is judged by gain_range but is no metric of the design JSON
        metrics.setdefault("gain", best.design["compensator"]["gain"])
        binding, rest = binding_requirements(problem, metrics)
        slack = [(e.key, r) for e, _, r in rest]
        total += len(binding)
        with single_threaded():
            for j, (entry, _limit, r) in enumerate(binding):
                if progress is not None:
                    progress(len(tasks) + j, total, f"relaxing {entry.key}")
                relaxations.append(relax(problem, entry.key, best.structure, best.value,
                                         eff, room=r))
        # a relaxed design that meets the original limit too is a design for the file's limits
        for r in relaxations:
            if (r.searched is not None and r.searched < best.value
                    and _meets(r.requirement, r.limit_from, r.design)):
                best = dataclasses.replace(best, value=r.searched, design=r.design)
                own[best.structure] = dataclasses.replace(
                    own[best.structure], value=best.value, design=best.design)
                note = (f"found by the search with {r.requirement} relaxed; it meets the "
                        "file's limit as well")
        relaxations = [dataclasses.replace(
            r, objective_from=best.value,
            objective_to=best.value if r.searched is None else min(r.searched, best.value))
            for r in relaxations]
    if progress is not None:
        progress(total, total, "done")
    return FrontierResult(problem=problem, levels=levels, effort=eff, structures=structures,
                          own=own, best=best, relaxations=tuple(relaxations),
                          slack=tuple(slack), best_note=note)


# ----------------------------------------------------------------------------------------------
# reading a frontier document back (reports)
# ----------------------------------------------------------------------------------------------


def _is_number(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def read_frontier(doc, source: str = "<frontier>") -> dict:
    """Check a ``synth.frontier/1`` document for what a picture or a report reads.

    Returns the document itself; raises :class:`synth.errors.InputError`
    naming the source and the first field that is wrong (schema, the
    ``structures`` mapping of lists of points with a numeric ``level`` and a
    numeric or null ``value``, the ``relaxations`` list).
    """
    from synth.errors import InputError

    if not isinstance(doc, dict) or doc.get("schema") != SCHEMA:
        raise InputError(f"not a {SCHEMA} document", source, "schema")
    structures = doc.get("structures")
    if not isinstance(structures, dict):
        raise InputError("must be an object of structure name -> list of points", source,
                         "structures")
    for name, rows in structures.items():
        if not isinstance(rows, list):
            raise InputError("must be a list of points", source, f"structures.{name}")
        for i, r in enumerate(rows):
            key = f"structures.{name}[{i}]"
            if not isinstance(r, dict) or not _is_number(r.get("level")):
                raise InputError("needs a numeric level", source, key)
            if r.get("value") is not None and not _is_number(r["value"]):
                raise InputError("value must be a number or null", source, key)
    if not isinstance(doc.get("relaxations", []), list):
        raise InputError("must be a list", source, "relaxations")
    return doc


def load_frontier(path) -> dict:
    """Read and check a ``synth.frontier/1`` JSON file (:func:`read_frontier`)."""
    from synth.errors import InputError
    from synth.problem.source import read_input_text

    text = read_input_text(path, kind="frontier JSON")
    try:
        doc = json.loads(text)
    except ValueError as err:
        raise InputError(f"not JSON ({err})", str(path)) from None
    return read_frontier(doc, str(path))
