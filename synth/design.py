"""The ``synth design`` pipeline: search every structure, verify every candidate, rank.

:func:`run_design` loops over the structure families (``search.structures``,
or all of them), runs every available strategy of :mod:`synth.strategies` on each
within a fair share of ``search.time_budget``, verifies every candidate with
:func:`synth.verify.verify`, ranks them with :func:`synth.rank.rank_designs`
and keeps ``search.keep``.  The result, :class:`DesignRun`, is written as the
contract's ``synth.design/1`` JSON and the terminal table by
:mod:`synth.outputs.run`.

Time.  Each family gets an equal part of the budget still left when it
starts (``(time_budget - elapsed) / families left``), so time an early family
leaves unused passes to the later ones; within it, strategy i may run until its cumulative share of the
slice (placement 15 %, convex 35 %, search 50 %, renormalised over the
strategies present), so time one strategy leaves passes to the next and a
slow one cannot starve the global search.
The strategies do a fixed amount of work that normally ends well within the
share, so the same file and seed give the same ranking; the share is a
safety cap, and a family cut by it is listed in ``search.time_capped`` of
the JSON.  Verification comes on top of the search time.

Strategy errors.  A strategy that raises :class:`synth.errors.SynthError` for
a family (a case it cannot handle) is skipped for that family and named in
``search.declined`` of the JSON; any other exception is a bug and propagates.

Dead time.  All candidates are first verified with the Pade form in the
simulation (quick); then, in rank order, each design that would be reported
is re-verified with the exact delay and the ranking recomputed, until every
reported design carries an exact-delay verdict.
"""

from __future__ import annotations

import math
import time
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from synth.errors import SynthError
from synth.families import families_for
from synth.outputs.cautions import CAUTION
from synth.outputs.jsonout import interval_lists
from synth.outputs.run import SCHEMA
from synth.rank import RankedDesign, rank_designs
from synth.strategies import available_strategies
from synth.verify.verdict import verify

__all__ = ["CAUTION", "DesignRun", "SCHEMA", "prepare_report", "run_design"]

ProgressFn = Callable[[float, float, str], None]

#: Relative share of a family's time slice per strategy origin (normalised over
#: the strategies present; unused time passes to the next strategy).
_STRATEGY_WEIGHT = MappingProxyType({"placement": 0.15, "convex": 0.35, "search": 0.5})


# ----------------------------------------------------------------------------
# helpers
# ----------------------------------------------------------------------------


def _derived_seed(seed: int, *labels: str) -> int:
    """A per-family, per-strategy seed from the file's seed (stable across runs and Pythons)."""
    h = zlib.crc32("/".join(labels).encode())
    return int((int(seed) * 1_000_003 + h) % (2**32))


def _explain(problem):
    """The explain result, or None while synth.explain is not available."""
    try:
        from synth.explain import explain_problem
    except ImportError:
        return None
    return explain_problem(problem)


def _proportional(problem, explanation) -> dict:
    """The contract's ``proportional`` object (from explain, else from the engine)."""
    if explanation is not None:
        return explanation.to_json()["proportional"]
    from synth.locus.core import region_gain_intervals, stable_gain_intervals

    plant = problem.plant
    return {"stabilizing_gain_intervals": interval_lists(stable_gain_intervals(plant.num, plant.den)),
            "requirement_gain_intervals": interval_lists(
                region_gain_intervals(plant.num, plant.den, problem.region))}


def _interval_point(lo, hi, scale: float) -> float:
    """A representative gain inside the open interval (lo, hi)."""
    if lo is not None and hi is not None:
        if lo > 0 or hi < 0:
            return math.copysign(math.sqrt(lo * hi), hi)
        return 0.5 * (lo + hi)
    if lo is None and hi is None:
        return scale
    if lo is None:
        return hi / 2.0 if hi > 0 else (2.0 * hi if hi < 0 else -scale)
    return 2.0 * lo if lo > 0 else (lo / 2.0 if lo < 0 else scale)


def _gain_seeds(problem, explanation) -> tuple[float, ...]:
    """Proportional gains to start from: those passing the most checks first."""
    from synth.families.base import SearchSpace
    from synth.locus.core import region_gain_intervals, stable_gain_intervals

    plant = problem.plant
    if explanation is not None:
        groups = [explanation.candidate_gain_intervals, explanation.requirement_in_gain_range,
                  explanation.stabilizing_in_gain_range]
    else:
        groups = [region_gain_intervals(plant.num, plant.den, problem.region),
                  stable_gain_intervals(plant.num, plant.den)]
    scale = max(1e-12, SearchSpace.for_problem(problem).gain_scale * 1e4)
    gr = problem.requirements.limit("gain")
    out: list[float] = []
    for ivs in groups:
        for lo, hi in ivs:
            k = _interval_point(lo, hi, scale)
            if gr is not None and not (gr[0] <= k <= gr[1]):
                continue
            if math.isfinite(k) and all(abs(k - o) > 1e-9 * max(1.0, abs(o)) for o in out):
                out.append(float(k))
    return tuple(out[:6])


# ----------------------------------------------------------------------------
# the result
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class DesignRun:
    """The outcome of :func:`run_design`.

    Attributes
    ----------
    problem : synth.requirements.Problem
    designs : tuple of RankedDesign
        Ranked, near duplicates removed, at most ``search.keep``.
    proportional : dict
        The contract's ``proportional`` object of the plant.
    explanation : object or None
        The :func:`synth.explain.explain_problem` result when available.
    stats : dict
        Search bookkeeping (strategies run, candidates, time per family,
        families cut by the time cap).

    Notes
    -----
    The JSON and the terminal text are written by :mod:`synth.outputs.run`;
    the methods here are kept for the documented Python API.
    """

    problem: Any
    designs: tuple[RankedDesign, ...]
    proportional: dict
    explanation: Any = None
    stats: dict = field(default_factory=dict)

    @property
    def any_feasible(self) -> bool:
        """Whether some design meets every requirement (the CLI exits 3 when not)."""
        return any(d.verdict.feasible for d in self.designs)

    @property
    def best(self) -> RankedDesign | None:
        return self.designs[0] if self.designs else None

    def to_json(self) -> dict:
        """The contract's ``synth.design/1`` object (:func:`synth.outputs.run.design_json`)."""
        from synth.outputs.run import design_json

        return design_json(self)

    def table_lines(self) -> list[str]:
        """The terminal account as plain lines (:func:`synth.outputs.run.design_text`)."""
        from synth.outputs.run import design_lines

        return design_lines(self)


# ----------------------------------------------------------------------------
# the pipeline
# ----------------------------------------------------------------------------


def _verify_all(problem, cands, exact: bool) -> list:
    return [verify(problem, np.asarray(c.num), np.asarray(c.den), exact_delay=exact)
            for c in cands]


def run_design(problem, progress: ProgressFn | None = None) -> DesignRun:
    """Search, verify and rank compensators for ``problem``.

    Parameters
    ----------
    problem : synth.requirements.Problem
    progress : callable, optional
        ``progress(done, total, label)``, called as the work advances (the CLI
        draws a progress bar with it).

    Returns
    -------
    DesignRun
    """
    from synth.strategies import SearchContext

    search = problem.search
    explanation = _explain(problem)
    proportional = _proportional(problem, explanation)
    seeds = _gain_seeds(problem, explanation)
    families = families_for(problem)
    strategies = available_strategies()
    total = len(families) * len(strategies) + 1
    done = 0
    candidates = []
    per_family: dict[str, float] = {}
    capped: list[str] = []
    skipped: list[str] = []
    t_search = time.monotonic()
    t_end = t_search + search.time_budget
    weights = [_STRATEGY_WEIGHT.get(m.ORIGIN, 1.0) for m in strategies]
    cum = np.cumsum(weights) / max(sum(weights), 1e-12)
    for i, fam in enumerate(families):
        start = time.monotonic()
        # an equal part of what is left: slack from fast families passes to later ones
        share = max(0.0, t_end - start) / (len(families) - i)
        found: list = []
        for mod, frac in zip(strategies, cum, strict=True):
            # each strategy may use the time up to its cumulative share of the family's
            # slice, so a slow strategy cannot starve the ones after it
            deadline = start + share * float(frac)
            ctx = SearchContext(seed=_derived_seed(search.seed, fam.name, mod.ORIGIN),
                                deadline=deadline, budget=max(0.0, deadline - time.monotonic()),
                                gain_seeds=seeds, prior=tuple(found), explanation=explanation)
            if ctx.budget > 0:
                try:
                    new = list(mod.propose(problem, fam, ctx))
                except SynthError as err:
                    # a strategy that cannot handle this case declines it; the others go on
                    skipped.append(f"{mod.ORIGIN} on {fam.name}: {err}")
                    new = []
                found.extend(new)
                if any(c.provenance.get("time_capped") for c in new) and fam.name not in capped:
                    capped.append(fam.name)
            done += 1
            if progress is not None:
                progress(done, total, f"{fam.name} ({mod.ORIGIN})")
        candidates.extend(found)
        per_family[fam.name] = round(time.monotonic() - start, 3)
    search_seconds = time.monotonic() - t_search

    dead = problem.plant.dead_time > 0
    verdicts = _verify_all(problem, candidates, exact=not dead)
    pairs = list(zip(candidates, verdicts, strict=True))
    if dead:
        # make every reported design carry an exact-delay verdict
        exact = [False] * len(pairs)
        index = {id(c): i for i, c in enumerate(candidates)}
        while True:
            ranked = rank_designs(pairs, problem)
            todo = [index[id(d.candidate)] for d in ranked if not exact[index[id(d.candidate)]]]
            if not todo:
                break
            for i in todo:
                c = candidates[i]
                pairs[i] = (c, verify(problem, np.asarray(c.num), np.asarray(c.den)))
                exact[i] = True
    ranked = rank_designs(pairs, problem)
    if progress is not None:
        progress(total, total, "verified")
    stats = {"strategies": [m.ORIGIN for m in strategies], "candidates": len(candidates),
             "search_seconds": round(search_seconds, 3), "family_seconds": per_family,
             "time_capped": capped, "declined": skipped}
    return DesignRun(problem=problem, designs=tuple(ranked), proportional=proportional,
                     explanation=explanation, stats=stats)


# ----------------------------------------------------------------------------
# what a report of a run shows
# ----------------------------------------------------------------------------


def prepare_report(problem, doc: dict, explanation=None, top: int | None = None):
    """Gather what the report of a design run shows, so the report only formats.

    Parameters
    ----------
    problem : synth.requirements.Problem
        The problem the run solved.
    doc : dict
        Its ``synth.design/1`` document; implementation forms are added when missing.
    explanation : synth.explain.Explanation, optional
        The run's explanation (``DesignRun.explanation``); computed when omitted.
    top : int, optional
        How many designs get a full section (curves and root locus); default
        :data:`synth.outputs.report.document.TOP`.

    Returns
    -------
    synth.outputs.report.document.ReportInput
        The document, the explanation and, per top design, the verifier's
        curves (:func:`synth.verify.curves.curves`) and the design loop's root
        locus (:func:`synth.locus.trace_design_loop`).
    """
    from synth.errors import InputError
    from synth.locus import trace_design_loop
    from synth.outputs.document import read_design
    from synth.outputs.implementation import add_implementation_forms
    from synth.outputs.report.document import TOP, DesignFigures, ReportInput
    from synth.verify.curves import curves

    top = TOP if top is None else top
    document = read_design(doc)
    if any(d.implementation is None for d in document.designs):
        document = read_design(add_implementation_forms(doc))
    if explanation is None:
        from synth.explain import explain_problem

        explanation = explain_problem(problem)
    figures = []
    plant = document.need_plant() if document.designs else None
    for d in document.designs[:top]:
        c = d.compensator
        try:
            trace, gain = trace_design_loop(problem, plant.numerator, plant.denominator,
                                            c.num, c.den)
            note = ""
        except InputError as err:  # a zero gain: the loop has no locus to draw
            trace, gain, note = None, None, err.message
        figures.append(DesignFigures(rank=d.rank, curves=curves(problem, c.num, c.den),
                                     locus=trace, locus_gain=gain, locus_note=note))
    return ReportInput(problem=problem, document=document, explanation=explanation,
                       figures=tuple(figures))
