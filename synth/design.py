"""The ``synth design`` pipeline: search every structure, verify every candidate, rank.

:func:`run_design` loops over the structure families (``search.structures``,
or all of them, or the ones passed in), runs every strategy
(:func:`synth.strategies.default_strategies`, or the ones passed in) on each,
verifies every candidate with :func:`synth.verify.verify`, ranks them with
:func:`synth.rank.rank_designs` and keeps ``search.keep``.  The result,
:class:`DesignRun`, is written as the contract's ``synth.design/1`` JSON and
the terminal table by :mod:`synth.outputs.run`.

Work, not time.  Each family gets ``search.effort`` times
:func:`synth.strategies.family_work` work units, and each strategy its
``share`` of them (``context.work``); a family the proportional analysis
already rules out (``Family.futility``) gets the work of effort
:data:`FUTILE_EFFORT` whatever ``search.effort`` (a few nearest designs to list).
Seeds derive from ``search.seed``, the family and the strategy name.  So the
same file and seed give the same JSON (timing fields aside) alone or under
load.  ``search.time_budget`` is only a safety limit: checked between
strategies, it stops the search when the wall clock passes it; the families
it cut are listed in ``search.time_capped`` of the JSON (the run then may
not repeat; the terminal says so).  Verification comes after the search and
always completes.

Strategy errors.  A strategy that raises :class:`synth.errors.StrategyDeclined`
for a family is recorded in ``search.declined``; any other exception (a
user error of another kind, or a bug) propagates.

Dead time and several plant models.  All candidates are first verified
quickly: with the exact delay (the verifier's lifted simulation makes that as
quick as the Pade form), the actuator's limits left out and, when the
problem has ranges or variants, with only the nominal plant evaluated exactly
and the other models screened by estimates (``verify(..., depth="quick")``).
Then, in rank order, each design that would be reported is verified fully
(exact delay; every model, local worst-case searches, the robust stability
test) and the ranking recomputed, until every reported design carries a full
verdict.

Sampling.  With ``[sampling]`` the controller is designed as a continuous
compensator and mapped to z by Tustin's method pre-warped at its crossover
(design by emulation).  The search works on the loop with the hold and the
computation delay as an extra dead time ``T/2 + tau``
(:func:`synth.problem.sampling.search_problem`; common practice), so its
designs keep their margins once sampled; every candidate is then verified on
the sampled-data loop itself (:mod:`synth.verify.sampled_eval`: the
discrete controller the export prints, the plant behind the hold with the
exact dead time and computation delay, the output between the samples, the
loop on the unit circle up to Nyquist).  Each reported design also gets its
discrete form (the contract's ``discrete``; :func:`synth.verify.sampled.sampled_design`).

Screening.  At most :data:`_VERIFY_PER_FAMILY` candidates of a family are
verified: the best by the search's own estimate of the objective, and the
best of each strategy (:func:`_screen`); ``search.screened_out`` counts the
others.

Reference shaping.  With ``search.reference_shaping`` the finishing stage
(:func:`synth.shaping.shape_designs`) chooses set-point weights or a
prefilter for the best designs after the first ranking; they are verified
again with it and ranked once more.
"""

from __future__ import annotations

import math
import time
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from synth.errors import StrategyDeclined
from synth.families import families_for
from synth.outputs.cautions import CAUTION
from synth.outputs.run import SCHEMA
from synth.rank import RankedDesign, rank_designs
from synth.shaping import shape_designs
from synth.verify.verdict import verify

__all__ = ["CAUTION", "DesignRun", "SCHEMA", "prepare_report", "run_design"]

ProgressFn = Callable[[float, float, str], None]

#: Effort of a family the proportional analysis shows cannot be feasible (enough
#: for the search's initial sample: a few nearest designs to list).
FUTILE_EFFORT = 0.02

#: With actuator limits, the anti-windup finishing stage runs for at most this many
#: times ``search.keep`` designs (each costs a few saturated simulations).
FINISH_LIMIT = 3


# ----------------------------------------------------------------------------
# helpers
# ----------------------------------------------------------------------------


def _derived_seed(seed: int, *labels: str) -> int:
    """A per-family, per-strategy seed from the file's seed (stable across runs and Pythons)."""
    h = zlib.crc32("/".join(labels).encode())
    return int((int(seed) * 1_000_003 + h) % (2**32))


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

    groups = [explanation.candidate_gain_intervals, explanation.requirement_in_gain_range,
              explanation.stabilizing_in_gain_range]
    scale = SearchSpace.for_problem(problem).gain_scale * 1e4
    gr = problem.requirements.limit("gain")
    out: list[float] = []
    for ivs in groups:
        for lo, hi in ivs:
            k = _interval_point(lo, hi, scale)
            if gr is not None and not (gr[0] <= k <= gr[1]):
                continue
            # distinct to 1e-9 relative (a gain is never compared with an absolute tolerance)
            if math.isfinite(k) and all(abs(k - o) > 1e-9 * abs(o) for o in out):
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
    sampled : tuple of SampledDesign
        With ``[sampling]``: each reported design's discrete controller and
        sampled loop (:class:`synth.verify.sampled.SampledDesign`), in the
        order of ``designs``; empty otherwise.

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
    sampled: tuple = ()

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


#: Most candidates of one family that go on to full verification (the rest are screened
#: out by the search's own estimate of the objective; see :func:`_screen`).
_VERIFY_PER_FAMILY = 8


def _screen(problem, family, cands, limit: int) -> list:
    """The ``limit`` most promising candidates of one family, by the search's estimate.

    Strategies propose overlapping sets (the global search polishes the
    others' candidates); verifying all of them costs more than the search.
    The family's vectorised objective (:class:`synth.strategies.evolve.SearchObjective`:
    estimated shortfall, then the objective) orders those with family
    coordinates; candidates outside the family's space are always kept, and
    so is the best one of each strategy, so no strategy's answer is lost.
    """
    if len(cands) <= limit:
        return list(cands)
    import numpy as np

    from synth.strategies.evolve import SearchObjective

    inside = [i for i, c in enumerate(cands) if c.params]
    if not inside:
        return list(cands)
    f = SearchObjective(problem, family)(np.array([cands[i].params for i in inside]))
    order = [inside[j] for j in np.argsort(f, kind="stable")]
    keep = set(i for i, c in enumerate(cands) if not c.params)
    seen_origin_strategy = set()
    for i in order:                      # the best of each strategy's provenance method
        key = (cands[i].origin, str(cands[i].provenance.get("method", "")))
        if key not in seen_origin_strategy:
            seen_origin_strategy.add(key)
            keep.add(i)
    for i in order:
        if len(keep) >= limit:
            break
        keep.add(i)
    return [c for i, c in enumerate(cands) if i in keep]


def _shaping_window(problem, pairs) -> list:
    """The designs the finishing stage shapes: the loops shaping can make feasible, best first.

    A loop that fails only reference-step limits may rank low before shaping
    meets them, so the window is every stable loop that fails nothing else,
    ordered by the objective: the first ``keep + 2`` and the best two of
    every structure.
    """
    from synth.problem.catalogue import REQUIREMENTS
    from synth.problem.objectives import ObjectiveScales, objective_order

    scales = ObjectiveScales.for_problem(problem)
    ok = []
    for i, (_, verdict) in enumerate(pairs):
        if verdict.stable and all(k in REQUIREMENTS and REQUIREMENTS[k].concerns == "reference"
                                  for k in verdict.shortfalls):
            # (no near-duplicate removal here: of two similar loops the one that shaping
            # helps more may be the one the unshaped ranking would drop)
            ok.append((objective_order(problem, verdict.metrics, scales), i))
    ok.sort()
    chosen, per = [], {}
    for _, i in ok:
        s = pairs[i][0].structure
        if len(chosen) < problem.search.keep + 2 or per.get(s, 0) < 2:
            chosen.append(pairs[i])
            per[s] = per.get(s, 0) + 1
    return chosen


def _verify_all(problem, cands, exact: bool, actuator: bool = True, depth: str = "full",
                setup=None) -> list:
    return [verify(problem, c.controller, exact_delay=exact, actuator=actuator, depth=depth,
                   setup=setup)
            for c in cands]


def _final_verification(problem, pairs, setup=None) -> tuple[list, dict[str, Any]]:
    """Re-verify, in rank order, every design that would be reported, until all of them are final.

    The first pass verified every candidate quickly: the actuator's limits
    left out and, with several plant models, only the nominal model evaluated
    exactly (``depth="quick"``).  A final verdict evaluates every model and,
    with ``[actuator]``, has the anti-windup finishing stage
    (:func:`synth.windup.finish_anti_windup`) and the limited actuator.
    With an actuator the stage runs for at most :data:`FINISH_LIMIT` times
    ``search.keep`` designs; designs it could not reach are left out of the
    ranking (the JSON's ``search.anti_windup.limit_reached`` says so).

    Returns the pairs to rank and the stage's bookkeeping for ``stats``.
    """
    from threadpoolctl import threadpool_limits

    # the stage's matrices are tiny (a dozen states): BLAS threads only wait for each other,
    # and on a busy machine a 10x10 matrix exponential then takes milliseconds, not microseconds
    with threadpool_limits(limits=1, user_api="blas"):
        return _final_loop(problem, list(pairs), setup)


def _final_loop(problem, pairs, setup=None) -> tuple[list, dict[str, Any]]:
    """The loop of :func:`_final_verification`."""
    from synth.windup import finish_anti_windup

    final = [False] * len(pairs)
    index = {id(c): i for i, (c, _) in enumerate(pairs)}
    limit = FINISH_LIMIT * problem.search.keep
    tuned = work = 0
    stopped = False
    actuator = problem.actuator is not None
    while True:
        ranked = rank_designs([p for i, p in enumerate(pairs) if final[i] or tuned < limit],
                              problem)
        todo = [index[id(d.candidate)] for d in ranked if not final[index[id(d.candidate)]]]
        if not todo:
            break
        for i in todo:
            c, quick = pairs[i]
            if actuator:
                if tuned >= limit:
                    stopped = True
                    break
                done = finish_anti_windup(problem, c, quick)
                c = done.candidate
                index[id(c)] = i
                tuned += 1
                work += done.work
            pairs[i] = (c, verify(problem, c.controller, setup=setup))
            final[i] = True
    out: dict[str, Any] = {}
    if actuator:
        out = {"anti_windup": {"finished": tuned, "work": work, "limit_reached": stopped}}
    return [p for i, p in enumerate(pairs) if final[i]], out


def _checked(new, family, strategy) -> list:
    """The strategy's candidates, or TypeError when they break the protocol (a bug)."""
    out = list(new)
    for c in out:
        if c.structure != family.name or c.origin != strategy.origin:
            raise TypeError(f"strategy {strategy.name!r} proposed a {c.structure}/{c.origin} "
                            f"candidate for family {family.name!r}")
    return out


def run_design(problem, strategies=None, families=None,
               progress: ProgressFn | None = None) -> DesignRun:
    """Search, verify and rank compensators for ``problem`` (see :func:`_run_design`).

    The whole run works with one BLAS thread (:func:`synth.numerics.threads.single_threaded`):
    its matrices are small, and a thread pool only costs time on them.
    """
    from synth.numerics.threads import single_threaded

    with single_threaded():
        return _run_design(problem, strategies, families, progress)


def _run_design(problem, strategies=None, families=None,
                progress: ProgressFn | None = None) -> DesignRun:
    """Search, verify and rank compensators for ``problem``.

    Parameters
    ----------
    problem : synth.problem.Problem
    strategies : None or iterable of (Strategy or str), optional
        None: every registered strategy.  Otherwise strategy objects (any
        object following :class:`synth.strategies.Strategy`) or registered
        strategy names; they run in their ``order``.
    families : None or iterable of (Family class, Family or str), optional
        None: ``search.structures`` (or every registered family).  Otherwise
        exactly these families, in the given order.
    progress : callable, optional
        ``progress(done, total, label)``, called as the work advances (the CLI
        draws a progress bar with it).

    Returns
    -------
    DesignRun
    """
    from synth.explain import explain_problem
    from synth.problem.sampling import search_problem
    from synth.strategies.base import SearchContext, family_work, resolve_strategies

    search = problem.search
    explanation = explain_problem(problem)
    proportional = explanation.to_json()["proportional"]
    # with [sampling] the search designs for the loop with the hold and the computation delay
    # (an extra dead time T/2 + tau); every candidate is verified on the sampled-data loop
    searched = search_problem(problem)
    guide = explanation if searched is problem else explain_problem(searched)
    seeds = _gain_seeds(searched, guide)
    fams = families_for(searched, families)
    strats = resolve_strategies(strategies)
    total = len(fams) * len(strats) + 1
    done = 0
    candidates = []
    per_family: dict[str, float] = {}
    work: dict[str, int] = {}
    futile: dict[str, str] = {}
    capped: list[str] = []
    declined: list[str] = []
    dropped = 0
    t_search = time.monotonic()
    # a safety limit only: the search's amount is counted in work units
    t_limit = t_search + search.time_budget
    for fam in fams:
        start = time.monotonic()
        reason = fam.futility(guide)
        # a ruled-out family gets a fixed sliver of work whatever the effort: enough for a
        # few nearest designs to list, never a full search
        effort = FUTILE_EFFORT if reason else search.effort
        if reason:
            futile[fam.name] = reason
        units = family_work(fam, effort)
        work[fam.name] = units
        found: list = []
        for strat in strats:
            if time.monotonic() > t_limit:
                if fam.name not in capped:
                    capped.append(fam.name)
            else:
                ctx = SearchContext(seed=_derived_seed(search.seed, fam.name, strat.name),
                                    work=int(strat.share * units), gain_seeds=seeds,
                                    prior=tuple(found), explanation=guide)
                try:
                    new = _checked(strat.propose(searched, fam, ctx), fam, strat)
                except StrategyDeclined as err:
                    # a real decline; any other error is a bug or bad input and propagates
                    declined.append(f"{strat.name} on {fam.name}: {err}")
                    new = []
                found.extend(new)
            done += 1
            if progress is not None:
                progress(done, total, f"{fam.name} ({strat.name})")
        screened = _screen(problem, fam, found, _VERIFY_PER_FAMILY)
        dropped += len(found) - len(screened)
        candidates.extend(screened)
        per_family[fam.name] = round(time.monotonic() - start, 3)
    search_seconds = time.monotonic() - t_search

    # first pass: quick verdicts (the actuator's limits left out; with several plant models,
    # only the nominal one evaluated exactly); reference shaping for the designs that may be
    # reported; then every design that would be reported gets the full verdict, in rank
    # order, until all have one (with the anti-windup finishing stage when there is an
    # actuator)
    models = problem.model_set
    robust = not models.is_single
    setup = None
    if robust:
        from synth.verify.robust import robust_setup

        setup = robust_setup(problem)
    quick = {"actuator": False, "depth": "quick" if robust else "full", "setup": setup}
    verdicts = _verify_all(problem, candidates, exact=True, **quick)
    pairs = list(zip(candidates, verdicts, strict=True))
    if problem.search.reference_shaping:
        # the finishing stage: reference shaping for the designs a report lists (a few
        # more, since shaping may reorder them)
        window = _shaping_window(problem, pairs)
        inside = {id(c) for c, _ in window}
        shaped = shape_designs(problem, window, len(window), quick)
        pairs = shaped + [pv for pv in pairs if id(pv[0]) not in inside]
    finishing: dict[str, Any] = {}
    if robust or problem.actuator is not None:
        pairs, finishing = _final_verification(problem, pairs, setup)
    ranked = rank_designs(pairs, problem)
    sampled: tuple = ()
    if problem.sampling is not None:
        sampled = _sampled_stage(problem, ranked)
    if progress is not None:
        progress(total, total, "verified")
    stats = {"structures": [f.name for f in fams], "strategies": [s.name for s in strats],
             "effort": search.effort, "work": work, "futile": futile,
             "candidates": len(candidates), "screened_out": dropped, "search_seconds": round(search_seconds, 3),
             "family_seconds": per_family, "time_capped": capped,
             "time_budget_reached": bool(capped), "declined": declined, **finishing}
    return DesignRun(problem=problem, designs=tuple(ranked), proportional=proportional,
                     explanation=explanation, stats=stats, sampled=sampled)


def _sampled_stage(problem, ranked) -> tuple:
    """The discrete form of every reported design (the design JSON's ``discrete``), in rank order.

    The verdicts already judge the sampled-data loop; this adds the discrete
    controller as the export rebuilds it, the sample-rate figures and the
    sampled loop's own figures (:func:`synth.verify.sampled.sampled_design`).
    """
    from synth.verify.sampled import sampled_design

    act = problem.actuator
    limits = None if act is None or act.limits is None else act.deviation_limits
    rate = None if act is None else act.max_rate
    return tuple(sampled_design(problem.plant, d.candidate.controller, problem.sampling,
                                limits=limits, max_rate=rate)
                 for d in ranked)


# ----------------------------------------------------------------------------
# what a report of a run shows
# ----------------------------------------------------------------------------


def _model_curves(problem, document, design) -> tuple:
    """Per-model curves of one design: nominal, variants and each worst-case model.

    Empty for a single plant.  Models are rebuilt from the document
    (:meth:`synth.outputs.document.DesignDocument.model_plant`), the way any
    reader of the JSON would.
    """
    from synth.verify.curves import model_curves

    if problem.model_set.is_single or not design.worst_case:
        return ()
    wanted: list[tuple[str, object, list[str]]] = [("nominal", "nominal", [])]
    for v in problem.model_set.variants:
        wanted.append((v.label, v.label, []))
    for metric, case in design.worst_case.items():
        model = case.get("model")
        plain = dict(model) if not isinstance(model, str) else model
        for _name, m, worst in wanted:
            if m == plain:
                worst.append(metric)
                break
        else:
            from synth.problem.models import point_text

            wanted.append((point_text(plain), plain, [metric]))
    return model_curves(problem, design.compensator.num, design.compensator.den,
                        [(name, m, document.model_plant(m), worst) for name, m, worst in wanted])


def prepare_report(problem, doc: dict, explanation=None, top: int | None = None,
                   sweep: bool = True, frontier: dict | None = None):
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
    sweep : bool
        Also run the verifier along each of those designs' loci
        (:func:`synth.verify.sweep.gain_sweep`, for the interactive page).
    frontier : dict, optional
        A ``synth.frontier/1`` document to show on the interactive page.

    Returns
    -------
    synth.outputs.report.document.ReportInput
        The document, the explanation and, per top design, the verifier's
        curves (:func:`synth.verify.curves.curves`), the design loop's root
        locus (:func:`synth.locus.trace_design_loop`) and the gain sweep.
    """
    from synth.errors import InputError
    from synth.locus import trace_design_loop
    from synth.outputs.document import read_design
    from synth.outputs.implementation import add_implementation_forms
    from synth.outputs.report.document import TOP, DesignFigures, ReportInput
    from synth.outputs.report.framing import time_window
    from synth.verify.curves import curves
    from synth.verify.sweep import gain_sweep

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
        # the whole controller: its shaping and anti-windup shape the saturated curves
        controller = document.controller(d)  # with its shaping and anti-windup
        own = curves(problem, controller)
        swept = None
        if sweep and trace is not None:
            horizon = own.step.t[-1] if own.step is not None else None
            # one time span for every gain: the part of the design's own response worth seeing
            span = time_window(d.metric("settling_time"), d.metric("rise_time"),
                               problem.requirements.limit("settling_time"), horizon)
            swept = gain_sweep(problem, controller, t_end=span)
        figures.append(DesignFigures(rank=d.rank, curves=own, locus=trace, locus_gain=gain,
                                     locus_note=note, sweep=swept,
                                     models=_model_curves(problem, document, d)))
    return ReportInput(problem=problem, document=document, explanation=explanation,
                       figures=tuple(figures), frontier=frontier)
