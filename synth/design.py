"""The ``synth design`` pipeline: search every structure, verify every candidate, rank.

:func:`run_design` loops over the structure families (``search.structures``,
or all of them, or the ones passed in), runs every strategy
(:func:`synth.strategies.default_strategies`, or the ones passed in) on each,
verifies every candidate with :func:`synth.verify.verify`, ranks them with
:func:`synth.rank.rank_designs` and keeps ``search.keep``.  The result,
:class:`DesignRun`, gives the contract's ``synth.design/1`` JSON and the
terminal table.

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
from typing import Any

import numpy as np

from synth.errors import StrategyDeclined
from synth.families import FAMILIES, families_for
from synth.outputs.jsonout import clean, root_pairs
from synth.problem.plant import describe_factored
from synth.rank import RankedDesign, rank_designs
from synth.verify.verdict import METRIC_KEYS, verify

__all__ = ["CAUTION", "DesignRun", "SCHEMA", "run_design"]

SCHEMA = "synth.design/1"

CAUTION = ("These designs rest on a linear model. Verify them against actuator saturation, "
           "delays, sampling and nonlinearity, commission with reduced gains and hardware "
           "limits in place, and follow local codes, functional-safety standards and licensed "
           "engineering practice.")

ProgressFn = Callable[[float, float, str], None]

#: Effort of a family the proportional analysis shows cannot be feasible (enough
#: for the search's initial sample: a few nearest designs to list).
FUTILE_EFFORT = 0.02


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
    gr = problem.requirements.gain_range
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

#: requirement key -> (column header format, metric key, shortfall key)
_COLUMNS = (
    ("max_overshoot_percent", "OS%<={:g}", "overshoot_percent", "overshoot"),
    ("max_settling_time", "Ts<={:g}s", "settling_time", "settling"),
    ("max_rise_time", "Tr<={:g}s", "rise_time", "rise"),
    ("max_steady_state_error", "ess<={:g}", "steady_state_error", "steady_state_error"),
    ("min_damping_ratio", "zeta>={:g}", "min_damping_ratio", "damping"),
    ("min_phase_margin_deg", "PM>={:g}", "phase_margin_deg", "phase_margin"),
    ("min_gain_margin_db", "GM>={:g}dB", "gain_margin_db", "gain_margin"),
    ("max_peak_sensitivity", "Ms<={:g}", "peak_sensitivity", "peak_sensitivity"),
    ("max_control_effort", "|u|<={:g}", "peak_control_effort", "control_effort"),
    ("plant_gain_range", "kG in [{:g},{:g}]", "stable_plant_gain_range", "plant_gain_range"),
    ("gain_range", "K in [{:g},{:g}]", "gain", "gain_range"),
)


def _num(v, digits: int = 3) -> str:
    if v is None:
        return "inf"
    if isinstance(v, (list, tuple)):
        a = "-inf" if v[0] is None else f"{v[0]:.{digits}g}"
        b = "inf" if v[1] is None else f"{v[1]:.{digits}g}"
        return f"({a},{b})"
    return f"{v:.{digits}g}"


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

    # -- JSON ----------------------------------------------------------------------------
    def _design_json(self, d: RankedDesign) -> dict:
        c, v = d.candidate, d.verdict
        num = np.asarray(c.num, dtype=float)
        den = np.asarray(c.den, dtype=float)
        zeros = np.roots(num) if num.size > 1 else []
        poles = np.roots(den) if den.size > 1 else []
        family = FAMILIES.get(c.structure)
        description = f"{c.structure}: C(s) = {describe_factored(num, den)}"
        params = None
        if family is not None and c.params:
            from synth.families.base import SearchSpace

            fam = family(SearchSpace.for_problem(self.problem))
            description = fam.describe(np.asarray(c.params))
            params = fam.natural(np.asarray(c.params))
        metrics = {k: v.metrics.get(k) for k in METRIC_KEYS}
        metrics.update({k: v.metrics.get(k) for k in ("delay_margin", "crossover_frequency",
                                                       "final_value", "in_region")})
        out = {
            "rank": d.rank,
            "structure": c.structure,
            "origin": c.origin,
            "feasible": v.feasible,
            "compensator": {"numerator": [float(x) for x in num],
                            "denominator": [float(x) for x in den],
                            "zeros": root_pairs(zeros), "poles": root_pairs(poles),
                            "gain": float(num[0] / den[0])},
            "closed_loop_poles": root_pairs(v.closed_loop_poles),
            "metrics": metrics,
            "violations": list(v.violations),
            "description": description,
            "score": d.score,
            "internally_stable": v.internally_stable,
            "time_domain": ("exact dead time" if v.exact_delay and self.problem.plant.dead_time
                            else ("Pade form of the dead time" if self.problem.plant.dead_time
                                  else "no dead time")),
            "notes": list(v.notes),
            "provenance": dict(c.provenance),
        }
        if params is not None:
            out["params"] = params
        return out

    def to_json(self) -> dict:
        """The contract's ``synth.design/1`` object plus extra fields; no NaN or infinity."""
        region = self.problem.region
        s = self.problem.search
        out = {
            "schema": SCHEMA,
            "plant": self.problem.plant.to_json(),
            "designs": [self._design_json(d) for d in self.designs],
            "requirements": self.problem.requirements.given(),
            "region": {"decay_rate": region.sigma, "damping": region.zeta,
                       "description": region.describe()},
            "proportional": self.proportional,
            "caution": CAUTION,
            "search": {"seed": s.seed, "time_budget": s.time_budget, "keep": s.keep,
                       "structures": list(s.structures or FAMILIES), **self.stats},
        }
        if self.problem.source:
            out["source"] = self.problem.source
        return clean(out)

    # -- terminal ------------------------------------------------------------------------
    def _proportional_lines(self) -> list[str]:
        """The proportional verdict, shown when a plain gain cannot do the job."""
        p_ok = any(d.verdict.feasible and d.candidate.structure == "P" for d in self.designs)
        if p_ok:
            return []
        if self.explanation is not None:
            return [*_verdict_sections(self.explanation.text_lines()), ""]
        ivs = self.proportional.get("requirement_gain_intervals", [])
        stab = self.proportional.get("stabilizing_gain_intervals", [])
        return [f"Proportional gain alone: stabilises for {_ivs_text(stab)}; meets the region "
                f"for {_ivs_text(ivs)}; no plain gain met every requirement.", ""]

    def table_lines(self) -> list[str]:
        """The terminal account: proportional verdict, ranked table, caution."""
        pr = self.problem
        req = pr.requirements
        lines = self._proportional_lines()
        title = pr.plant.label or pr.source
        lines.append(f"Designs for {pr.plant.describe()}" + (f"  ({title})" if title else ""))
        if not pr.region.is_stability_only:
            lines.append(f"  requirement region: {pr.region.describe()}")
        cols = []
        for key, head, metric, skey in _COLUMNS:
            val = getattr(req, key)
            if val is None:
                continue
            cols.append((head.format(*val) if isinstance(val, tuple) else head.format(val),
                         metric, skey))
        if req.max_peak_sensitivity is None:
            cols.append(("Ms", "peak_sensitivity", None))
        if req.max_control_effort is None:
            cols.append(("|u|max", "peak_control_effort", None))
        if req.max_settling_time is None:
            cols.append(("Ts", "settling_time", None))
        header = ["rank", "structure", "origin", "ok?"] + [c[0] for c in cols]
        rows = []
        for d in self.designs:
            v = d.verdict
            cells = [str(d.rank), d.candidate.structure, d.candidate.origin,
                     "yes" if v.feasible else "NO"]
            for _, metric, skey in cols:
                if not v.stable and metric != "gain":
                    cells.append("-")
                    continue
                text = _num(v.metrics.get(metric))
                if skey is not None:
                    text += " ok" if skey not in v.shortfalls else " FAIL"
                cells.append(text)
            rows.append((cells, d))
        widths = [max(len(header[i]), *(len(r[0][i]) for r in rows)) if rows else len(header[i])
                  for i in range(len(header))]
        lines.append("")
        lines.append("  ".join(h.rjust(w) if i == 0 else h.ljust(w)
                               for i, (h, w) in enumerate(zip(header, widths, strict=True))))
        lines.append("  ".join("-" * w for w in widths))
        for cells, d in rows:
            lines.append("  ".join(c.rjust(w) if i == 0 else c.ljust(w)
                                   for i, (c, w) in enumerate(zip(cells, widths, strict=True))))
            num, den = np.asarray(d.candidate.num), np.asarray(d.candidate.den)
            lines.append(f"{'':>{widths[0]}}  C(s) = {describe_factored(num, den)}")
            for text in d.verdict.violations:
                lines.append(f"{'':>{widths[0]}}  fails: {text}")
            for text in d.verdict.notes:
                if text.startswith("slow closed-loop pole"):  # worth an engineer's eye
                    lines.append(f"{'':>{widths[0]}}  note: {text}")
        if not self.designs:
            lines.append("  no candidate was proposed")
        n_ok = sum(d.verdict.feasible for d in self.designs)
        st = self.stats
        lines.append("")
        lines.append(f"{n_ok} of {len(self.designs)} listed designs meet every requirement "
                     f"({st.get('candidates', 0)} candidates verified, search "
                     f"{st.get('search_seconds', 0.0):.1f} s).")
        if st.get("time_capped"):
            lines.append("  time cap reached for: " + ", ".join(st["time_capped"])
                         + " (the ranking may differ between runs; raise search.time_budget)")
        lines.append("")
        lines.append("Caution: " + CAUTION)
        return lines


def _verdict_sections(lines: list[str]) -> list[str]:
    """The proportional block (and any warnings) of the explain account.

    The account's sections are separated by blank lines; the one that starts
    with "Proportional" holds the verdict.  Falls back to the first lines.
    """
    sections: list[list[str]] = [[]]
    for line in lines:
        if line.strip():
            sections[-1].append(line)
        elif sections[-1]:
            sections.append([])
    keep = [sec for sec in sections if sec and (sec[0].startswith("Proportional")
                                                or sec[0].startswith("Warnings"))]
    if not keep:
        return lines[:8]
    out: list[str] = []
    for sec in keep:
        out.extend(sec)
    return out


def _ivs_text(ivs) -> str:
    if not ivs:
        return "no gain"
    parts = []
    for a, b in ivs:
        parts.append(f"({'-inf' if a is None else format(a, '.4g')}, "
                     f"{'inf' if b is None else format(b, '.4g')})")
    return " U ".join(parts)


# ----------------------------------------------------------------------------
# the pipeline
# ----------------------------------------------------------------------------


def _verify_all(problem, cands, exact: bool) -> list:
    return [verify(problem, np.asarray(c.num), np.asarray(c.den), exact_delay=exact)
            for c in cands]


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
    from synth.strategies.base import SearchContext, family_work, resolve_strategies

    search = problem.search
    explanation = explain_problem(problem)
    proportional = explanation.to_json()["proportional"]
    seeds = _gain_seeds(problem, explanation)
    fams = families_for(problem, families)
    strats = resolve_strategies(strategies)
    total = len(fams) * len(strats) + 1
    done = 0
    candidates = []
    per_family: dict[str, float] = {}
    work: dict[str, int] = {}
    futile: dict[str, str] = {}
    capped: list[str] = []
    declined: list[str] = []
    t_search = time.monotonic()
    # a safety limit only: the search's amount is counted in work units
    t_limit = t_search + search.time_budget
    for fam in fams:
        start = time.monotonic()
        reason = fam.futility(explanation)
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
                                    prior=tuple(found), explanation=explanation)
                try:
                    new = _checked(strat.propose(problem, fam, ctx), fam, strat)
                except StrategyDeclined as err:
                    # a real decline; any other error is a bug or bad input and propagates
                    declined.append(f"{strat.name} on {fam.name}: {err}")
                    new = []
                found.extend(new)
            done += 1
            if progress is not None:
                progress(done, total, f"{fam.name} ({strat.name})")
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
    stats = {"structures": [f.name for f in fams], "strategies": [s.name for s in strats],
             "effort": search.effort, "work": work, "futile": futile,
             "candidates": len(candidates), "search_seconds": round(search_seconds, 3),
             "family_seconds": per_family, "time_capped": capped,
             "time_budget_reached": bool(capped), "declined": declined}
    return DesignRun(problem=problem, designs=tuple(ranked), proportional=proportional,
                     explanation=explanation, stats=stats)
