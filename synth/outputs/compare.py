"""Side-by-side comparison of several ``synth design`` runs (``synth compare``).

A *run* is one ``synth.design/1`` JSON document (see the contract). The
comparison answers four questions an engineer asks when a plant model or a
requirement set changes:

1. which designs appear in which runs (the same design is recognised across
   runs by its structure and near-equal compensator zeros, poles and gain);
2. how their ranks moved from one run to the next;
3. how their metrics changed;
4. which requirements became binding (met with little room, or violated) at
   each run's top feasible design.

Matching rule.  synth's one "same design" rule (:mod:`synth.verify.same`):
two designs of runs are the same design when they have the same
``structure`` and their compensator frequency responses agree within
``rtol`` (default 5 %) relative to the larger at every frequency of the band
spanned by their zeros and poles, a decade beyond each end.  Designs are
matched against the first occurrence of each design (no chaining), in run
order and within a run in rank order; a design matches at most one design
of each run, the closest one.

Binding rule.  For each run the *reference design* is its best-ranked
feasible design (or, when no design is feasible, its rank-1 design). Each
requirement of the run's ``requirements`` object is judged at that design by
its catalogue entry (:mod:`synth.problem.catalogue`): *violated* when the
verifier's own rule says so, *binding* when it is met with a room of at most
``binding_margin`` (default 5 %) of the limit (of the range's width for a
range the value must lie in; each end separately for a range that must be
contained, see :meth:`synth.problem.catalogue.Requirement.room`), and *slack*
otherwise.  A metric that is ``null`` in the JSON is unbounded: an unbounded
settling time violates an upper limit, an infinite gain margin is slack for a
lower limit.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from synth.errors import InputError
from synth.outputs.document import DesignDocument, DesignRecord, load_design, read_design, thaw
from synth.outputs.text import Row, TextReport, TextTable, plain_lines
from synth.problem.catalogue import METRICS, REQUIREMENTS, NumberSpec
from synth.verify.same import (
    COMPARE_RULE,
    SameDesignRule,
    comparison_band,
    compensator_responses,
    response_gap,
)

__all__ = [
    "BINDING_MARGIN",
    "Binding",
    "Comparison",
    "DEFAULT_RTOL",
    "MetricChange",
    "Move",
    "RunEntry",
    "RunSummary",
    "SCHEMA",
    "SharedDesign",
    "compare_runs",
    "load_design_json",
    "same_design",
]

SCHEMA = "synth.compare/1"

DEFAULT_RTOL = COMPARE_RULE.rtol
BINDING_MARGIN = 0.05

# the contract's scalar metrics, in the catalogue's order; other numeric extras follow sorted
_METRIC_ORDER = tuple(k for k, m in METRICS.items()
                      if m.contract and m.better in ("lower", "higher"))

_TIGHT = ("binding", "violated")
_TABLE_CHANGES = 5  # designs per pair of runs whose metric changes the table shows


# ----------------------------------------------------------------------------------------------
# loading and checking
# ----------------------------------------------------------------------------------------------


def load_design_json(path: str | Path) -> dict:
    """Read and check a ``synth.design/1`` document written by ``synth design --json``.

    Parameters
    ----------
    path : str or Path
        The JSON file.

    Returns
    -------
    dict
        The parsed document, unchanged (it has passed
        :func:`synth.outputs.document.load_design`).

    Raises
    ------
    InputError
        Naming the file when it cannot be read, is not valid JSON or is not a
        valid ``synth.design/1`` document.
    """
    return load_design(path).to_json()


# ----------------------------------------------------------------------------------------------
# value objects
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class RunSummary:
    """One run as the comparison sees it.

    Attributes
    ----------
    name : str
        The name given to :func:`compare_runs` (the file name on the command line).
    tag : str
        Short column tag: ``"A"``, ``"B"``, ... (``"R27"`` onwards past Z).
    plant : dict
        The run's ``plant`` object.
    requirements : dict or None
        The run's top-level ``requirements`` object; None when the JSON has none.
    n_designs, n_feasible : int
    reference : str or None
        Id of the design whose metrics decide the binding requirements.
    reference_feasible : bool
    """

    name: str
    tag: str
    plant: dict
    requirements: dict | None
    n_designs: int
    n_feasible: int
    reference: str | None
    reference_feasible: bool


@dataclass(frozen=True)
class RunEntry:
    """A design's appearance in one run."""

    rank: int
    feasible: bool
    metrics: dict
    violations: tuple[str, ...]


@dataclass(frozen=True)
class SharedDesign:
    """One design, recognised across runs.

    Attributes
    ----------
    id : str
        ``"D1"``, ``"D2"``, ... in order of first appearance.
    structure : str
    description : str
        The first occurrence's ``description`` (or one built from its factors).
    zeros, poles : tuple of complex
        The first occurrence's compensator zeros and poles.
    gain : float
        The first occurrence's root-locus gain.
    entries : tuple of (RunEntry or None)
        One per run; None where the design is absent.
    """

    id: str
    structure: str
    description: str
    zeros: tuple[complex, ...]
    poles: tuple[complex, ...]
    gain: float
    entries: tuple[RunEntry | None, ...]


@dataclass(frozen=True)
class Move:
    """A change of one design between two consecutive runs.

    ``kind`` is ``"up"`` or ``"down"`` (rank changed; up is towards rank 1),
    ``"new"`` (absent before), ``"dropped"`` (absent after) or
    ``"feasibility"`` (same rank, feasibility changed). ``metric_changes``
    maps each scalar metric present in both runs to (before, after, after -
    before), the difference None where either value is unbounded. For a
    ``"new"`` design, ``nearest`` is the closest design of the same structure
    that the earlier run had and the later one lost (None if there is none)
    and ``nearest_difference`` the largest relative difference of their
    frequency responses (so 0.3 means 30 % apart).
    """

    design: str
    from_run: int
    to_run: int
    kind: str
    from_rank: int | None
    to_rank: int | None
    feasible_before: bool | None
    feasible_after: bool | None
    metric_changes: dict
    nearest: str | None = None
    nearest_difference: float | None = None


@dataclass(frozen=True)
class MetricChange:
    """The metrics of one design found in two consecutive runs.

    ``changes`` maps each scalar metric present in both runs to (before,
    after, after - before), the difference None where a value is unbounded.
    """

    design: str
    from_run: int
    to_run: int
    from_rank: int
    to_rank: int
    changes: dict


@dataclass(frozen=True)
class Binding:
    """One requirement across runs.

    ``limits[i]``, ``values[i]`` and ``statuses[i]`` describe run ``i`` at its
    reference design; status is ``"slack"``, ``"binding"``, ``"violated"``,
    ``"not set"`` (the run does not have this requirement) or ``"unknown"``
    (no requirements object, no designs, or the metric is missing).
    ``became_binding`` lists the runs (index >= 1) where the status turned
    binding or violated from anything else; ``released`` the runs where it
    turned slack or not set from binding or violated.
    """

    requirement: str
    metric: str
    limits: tuple[Any, ...]
    values: tuple[Any, ...]
    statuses: tuple[str, ...]
    became_binding: tuple[int, ...]
    released: tuple[int, ...]


# ----------------------------------------------------------------------------------------------
# matching
# ----------------------------------------------------------------------------------------------


def same_design(first: DesignRecord, second: DesignRecord,
                rtol: float = DEFAULT_RTOL) -> float | None:
    """Whether two designs are the same design under the matching rule.

    Parameters
    ----------
    first, second : DesignRecord
        Designs of a document (:mod:`synth.outputs.document`).
    rtol : float
        Relative tolerance on the frequency responses (module docstring).

    Returns
    -------
    float or None
        None when they differ; otherwise the largest relative difference of
        their frequency responses over the band (0.0 for identical ones),
        used to pick the closest of several matches.
    """
    gap = _response_gap(first, second)
    rule = SameDesignRule(rtol=rtol, other_rtol=0.0)
    return gap if rule.same(gap, first.structure, second.structure) else None


def _response_gap(first: DesignRecord, second: DesignRecord) -> float:
    """Largest relative difference of the two compensators' responses over their band."""
    comps = [(first.compensator.num, first.compensator.den),
             (second.compensator.num, second.compensator.den)]
    resp = compensator_responses(comps, comparison_band(comps))
    return float(response_gap(resp[:1], resp[1])[0])


def _tag(i: int) -> str:
    return chr(ord("A") + i) if i < 26 else f"R{i + 1}"


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _metric_changes(before: dict, after: dict) -> dict:
    keys = [k for k in _METRIC_ORDER if k in before and k in after]
    extras = sorted(k for k in before.keys() & after.keys()
                    if k not in _METRIC_ORDER and (_is_number(before[k]) or before[k] is None)
                    and (_is_number(after[k]) or after[k] is None)
                    and not (before[k] is None and after[k] is None))
    out = {}
    for k in [*keys, *extras]:
        a, b = before[k], after[k]
        if not ((a is None or _is_number(a)) and (b is None or _is_number(b))):
            continue
        out[k] = (a, b, (b - a) if (a is not None and b is not None) else None)
    return out


# ----------------------------------------------------------------------------------------------
# binding
# ----------------------------------------------------------------------------------------------


def _limit_ok(entry, limit: Any) -> bool:
    """Whether a limit read from a document has the shape its catalogue entry asks for."""
    if isinstance(entry.value, NumberSpec):
        return _is_number(limit)
    return (isinstance(limit, (list, tuple)) and len(limit) == 2
            and all(_is_number(x) for x in limit) and limit[0] < limit[1])


def _status(entry, limit: Any, value: Any, margin: float) -> str:
    """Slack, binding or violated for one requirement at one design (module docstring)."""
    if not _limit_ok(entry, limit):
        return "unknown"
    if isinstance(limit, list):
        limit = tuple(limit)
    if entry.kind == "within" and not _is_number(value):
        return "unknown"
    if entry.kind == "contain" and value is not None and not (
            isinstance(value, (list, tuple)) and len(value) == 2):
        return "unknown"
    if entry.assess(value, limit, {k: r.default for k, r in REQUIREMENTS.items()}) is not None:
        return "violated"
    return "binding" if entry.room(value, limit) <= margin else "slack"


# ----------------------------------------------------------------------------------------------
# the comparison
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Comparison:
    """The result of :func:`compare_runs`.

    Attributes
    ----------
    runs : tuple of RunSummary
    designs : tuple of SharedDesign
        Every distinct design, in order of first appearance.
    moves : tuple of Move
        Changes between consecutive runs (run i-1 to run i), in run order,
        then by the later run's rank (dropped designs last).
    binding : tuple of Binding
        One entry per requirement set in at least one run.
    metric_changes : tuple of MetricChange
        Every design found in two consecutive runs, moved or not, in run
        order, then by the later run's rank.
    rtol, binding_margin : float
        The tolerances used.
    """

    runs: tuple[RunSummary, ...]
    designs: tuple[SharedDesign, ...]
    moves: tuple[Move, ...]
    binding: tuple[Binding, ...]
    metric_changes: tuple[MetricChange, ...] = ()
    rtol: float = DEFAULT_RTOL
    binding_margin: float = BINDING_MARGIN

    # -- derived -----------------------------------------------------------------------------
    def ranking(self, run: int) -> list[tuple[str, bool]]:
        """``(design id, feasible)`` of run ``run`` in rank order."""
        rows = [(d.entries[run].rank, d.id, d.entries[run].feasible)
                for d in self.designs if d.entries[run] is not None]
        rows.sort(key=lambda r: (r[0], r[1]))
        return [(i, f) for _, i, f in rows]

    @property
    def identical_rankings(self) -> bool:
        """True when every run lists the same designs, in the same order, equally feasible."""
        first = self.ranking(0) if self.runs else []
        return all(self.ranking(i) == first for i in range(1, len(self.runs)))

    # -- JSON --------------------------------------------------------------------------------
    def to_json(self) -> dict:
        """The ``synth.compare/1`` document.

        Fields
        ------
        schema : ``"synth.compare/1"``
        settings : ``relative_tolerance`` (design matching: frequency
            responses) and ``binding_margin`` (fraction of a limit).
        runs : list, one per run: ``name``, ``tag``, ``plant``, ``requirements``
            (null when the run's JSON has none), ``designs`` and ``feasible``
            (counts), ``reference`` (id of the design the binding verdicts
            use) and ``reference_feasible``.
        designs : list, one per distinct design: ``id``, ``structure``,
            ``description``, ``compensator`` (``zeros`` and ``poles`` as
            [re, im] pairs, ``gain``; from its first occurrence) and ``runs``:
            one entry per run, null where absent, else ``rank``, ``feasible``,
            ``metrics`` (as in the design JSON) and ``violations``.
        rankings : list per run of the design ids in rank order.
        identical_rankings : bool, see :attr:`identical_rankings`.
        moves : list: ``design``, ``from_run``, ``to_run`` (run indices),
            ``kind`` (up, down, new, dropped, feasibility), ``from_rank``,
            ``to_rank`` (null where absent), ``feasible_before``,
            ``feasible_after``, ``metric_changes`` ({metric: {before, after,
            change}}; change null where a value is unbounded), ``nearest`` and
            ``nearest_difference`` (for a new design: the closest design of the
            same structure among those the earlier run had and this one lost,
            and how far apart their frequency responses are, as a fraction;
            else null).
        metric_changes : list, one per design found in two consecutive runs
            (moved or not): ``design``, ``from_run``, ``to_run``,
            ``from_rank``, ``to_rank``, ``changes`` (as in ``moves``).
        binding : list: ``requirement``, ``metric``, and per run ``limits``,
            ``values``, ``statuses`` (slack, binding, violated, not set,
            unknown); ``became_binding`` and ``released`` (run indices).

        Metric values that are unbounded stay null, as in the design JSON.
        """
        return {
            "schema": SCHEMA,
            "settings": {"relative_tolerance": self.rtol,
                         "binding_margin": self.binding_margin},
            "runs": [{"name": r.name, "tag": r.tag, "plant": r.plant,
                      "requirements": r.requirements, "designs": r.n_designs,
                      "feasible": r.n_feasible, "reference": r.reference,
                      "reference_feasible": r.reference_feasible} for r in self.runs],
            "designs": [{
                "id": d.id, "structure": d.structure, "description": d.description,
                "compensator": {"zeros": [[z.real, z.imag] for z in d.zeros],
                                "poles": [[p.real, p.imag] for p in d.poles],
                                "gain": d.gain},
                "runs": [None if e is None else {"rank": e.rank, "feasible": e.feasible,
                                                 "metrics": e.metrics,
                                                 "violations": list(e.violations)}
                         for e in d.entries],
            } for d in self.designs],
            "rankings": [[i for i, _ in self.ranking(k)] for k in range(len(self.runs))],
            "identical_rankings": self.identical_rankings,
            "moves": [{"design": m.design, "from_run": m.from_run, "to_run": m.to_run,
                       "kind": m.kind, "from_rank": m.from_rank, "to_rank": m.to_rank,
                       "feasible_before": m.feasible_before, "feasible_after": m.feasible_after,
                       "metric_changes": {k: {"before": a, "after": b, "change": c}
                                          for k, (a, b, c) in m.metric_changes.items()},
                       "nearest": m.nearest, "nearest_difference": m.nearest_difference}
                      for m in self.moves],
            "metric_changes": [{"design": c.design, "from_run": c.from_run, "to_run": c.to_run,
                                "from_rank": c.from_rank, "to_rank": c.to_rank,
                                "changes": {k: {"before": a, "after": b, "change": d}
                                            for k, (a, b, d) in c.changes.items()}}
                               for c in self.metric_changes],
            "binding": [{"requirement": b.requirement, "metric": b.metric,
                         "limits": list(b.limits), "values": list(b.values),
                         "statuses": list(b.statuses),
                         "became_binding": list(b.became_binding),
                         "released": list(b.released)} for b in self.binding],
        }

    # -- terminal ----------------------------------------------------------------------------
    def table_lines(self) -> list[str]:
        """The terminal account as plain lines (see :meth:`text`)."""
        return plain_lines(self.text())

    def text(self) -> TextReport:
        """The terminal account: runs, the design-by-run rank grid, moves, requirements."""
        runs = self.runs
        before = [f"Comparing {len(runs)} design runs "
                  f"(same design: same structure, responses within {self.rtol:.0%})"]
        for r in runs:
            label = r.plant.get("label") if isinstance(r.plant, dict) else None
            extra = f"  plant: {label}" if label else ""
            before.append(f"  [{r.tag}] {r.name}: {r.n_designs} designs, "
                          f"{r.n_feasible} feasible{extra}")
        before.append("")
        if not self.designs:
            before.append("No designs in any run.")
            return TextReport(before=tuple(before))

        # rank grid: one row per design, one column per run; '*' marks an infeasible design
        before.append("Ranks (* = misses a requirement, - = absent)")
        desc_w = min(60, max(len(d.description) for d in self.designs))
        rows = []
        for d in self.designs:
            cells, marks = [d.id], ["", ""]
            desc = d.description if len(d.description) <= desc_w else \
                d.description[:desc_w - 3] + "..."
            cells.append(desc)
            for e in d.entries:
                cells.append("-" if e is None else f"{e.rank}{'' if e.feasible else '*'}")
                marks.append("" if e is None else ("good" if e.feasible else "bad"))
            rows.append(Row(tuple(cells), marks=tuple(marks)))
        table = TextTable(("id", "design", *(r.tag for r in runs)), tuple(rows))

        lines = [""]
        if self.identical_rankings:
            lines.append("Rankings are identical in every run; no design moved.")
        elif not self.moves:
            lines.append("No design moved.")
        else:
            lines.append("Moves")
            for m in self.moves:
                a, b = runs[m.from_run].tag, runs[m.to_run].tag
                if m.kind == "new":
                    what = f"new in {b} at rank {m.to_rank}"
                    if m.nearest is not None:
                        what += (f" (closest in {a}: {m.nearest}, responses "
                                 f"{m.nearest_difference:.0%} apart)")
                elif m.kind == "dropped":
                    what = f"dropped in {b} (was rank {m.from_rank} in {a})"
                elif m.kind == "feasibility":
                    what = f"rank {m.to_rank} in {a} and {b}"
                else:
                    steps = abs(m.to_rank - m.from_rank)
                    what = f"{m.kind} {steps}: rank {m.from_rank} in {a} -> {m.to_rank} in {b}"
                if (m.feasible_before is not None and m.feasible_after is not None
                        and m.feasible_before != m.feasible_after):
                    what += "; now feasible" if m.feasible_after else "; now misses a requirement"
                lines.append(f"  {m.design:<4} {what}")
        changed = [c for c in self.metric_changes
                   if any(k in _METRIC_ORDER and _changed(a, b)
                          for k, (a, b, _) in c.changes.items())]
        if changed:
            lines.append("")
            lines.append(f"Metric changes of designs found in consecutive runs "
                         f"(best {_TABLE_CHANGES} by rank)")
            changed.sort(key=lambda c: (c.to_run, c.to_rank))
            for c in changed[:_TABLE_CHANGES * max(1, len(runs) - 1)]:
                a, b = runs[c.from_run].tag, runs[c.to_run].tag
                parts = [f"{k} {_short(x)} -> {_short(y)}"
                         + (f" ({z:+.3g})" if z is not None else "")
                         for k, (x, y, z) in c.changes.items()
                         if k in _METRIC_ORDER and _changed(x, y)]
                lines.append(f"  {c.design:<4} {a}->{b}: " + "; ".join(parts))
        shown = [b for b in self.binding if any(s in _TIGHT for s in b.statuses)]
        if self.binding and not shown:
            lines.append("")
            lines.append("Every requirement has room at each run's top feasible design "
                         f"(more than {self.binding_margin:.0%} of its limit).")
        if shown:
            lines.append("")
            lines.append("Requirements with little or no room at each run's top feasible design")
            for b in shown:
                cells = []
                for r, lim, val, st in zip(runs, b.limits, b.values, b.statuses, strict=True):
                    if st in ("not set", "unknown"):
                        cells.append(f"{r.tag}: {st}")
                    else:
                        cells.append(f"{r.tag}: {_short(val)} vs {_short(lim)} {st}")
                line = f"  {b.requirement}: " + ", ".join(cells)
                if b.became_binding:
                    line += "  (became binding in " + ", ".join(
                        runs[i].tag for i in b.became_binding) + ")"
                lines.append(line)
        return TextReport(before=tuple(before), table=table, after=tuple(lines))


def _changed(a: Any, b: Any) -> bool:
    if a is None or b is None:
        return (a is None) != (b is None)
    return not math.isclose(a, b, rel_tol=1e-6, abs_tol=1e-12)


def _short(v: Any) -> str:
    if v is None:
        return "unbounded"
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_short(x) if x is not None else "inf" for x in v) + "]"
    if _is_number(v):
        return f"{v:.4g}"
    return str(v)


def _described(record) -> str:
    """A design's description with its reference shaping (the loop alone decides "same")."""
    sh = record.shaping()
    if sh is None:
        return record.description
    from synth.outputs.run import shaping_text

    return f"{record.description}; {shaping_text(sh)}"


def compare_runs(runs: list[tuple[str, Any]], rtol: float = DEFAULT_RTOL,
                 binding_margin: float = BINDING_MARGIN) -> Comparison:
    """Compare several design runs side by side.

    Parameters
    ----------
    runs : list of (str, dict or DesignDocument)
        ``(name, document)`` pairs; each document a ``synth.design/1`` object
        (as returned by :func:`load_design_json` or ``DesignRun.to_json()``)
        or its :class:`~synth.outputs.document.DesignDocument`.  Order
        matters: moves are reported from each run to the next.
    rtol : float
        Tolerance of the design matching rule (module docstring).
    binding_margin : float
        Fraction of a limit within which a met requirement counts as binding.

    Returns
    -------
    Comparison

    Raises
    ------
    InputError
        When a document is not a valid ``synth.design/1`` object (the source
        is the run's name) or no runs are given.
    """
    if not runs:
        raise InputError("nothing to compare: no design runs given")
    if not (rtol >= 0 and binding_margin >= 0):
        raise InputError("tolerances must be non-negative")
    docs: list[DesignDocument] = [
        doc if isinstance(doc, DesignDocument) else read_design(doc, str(name))
        for name, doc in runs]
    names = [str(name) for name, _ in runs]
    rule = SameDesignRule(rtol=rtol, other_rtol=0.0)

    n_runs = len(docs)
    # families: [first DesignRecord, {run: RunEntry}]
    families: list[list] = []
    for r, doc in enumerate(docs):
        for d in doc.designs:
            best, best_gap = None, math.inf
            for fam in families:
                if r in fam[1]:
                    continue
                gap = _response_gap(fam[0], d)
                if rule.same(gap, fam[0].structure, d.structure) and gap < best_gap:
                    best, best_gap = fam, gap
            entry = RunEntry(rank=d.rank, feasible=d.feasible, metrics=thaw(d.metrics),
                             violations=d.violations)
            if best is None:
                families.append([d, {r: entry}])
            else:
                best[1][r] = entry

    shared = tuple(
        SharedDesign(id=f"D{i + 1}", structure=f[0].structure, description=_described(f[0]),
                     zeros=f[0].compensator.zeros, poles=f[0].compensator.poles,
                     gain=f[0].compensator.gain,
                     entries=tuple(f[1].get(r) for r in range(n_runs)))
        for i, f in enumerate(families))
    firsts = {s.id: f[0] for s, f in zip(shared, families, strict=True)}

    moves: list[Move] = []
    metric_changes: list[MetricChange] = []
    for r in range(1, n_runs):
        here = []
        for d in shared:
            a, b = d.entries[r - 1], d.entries[r]
            if a is None and b is None:
                continue
            if a is None:
                kind = "new"
            elif b is None:
                kind = "dropped"
            elif b.rank < a.rank:
                kind = "up"
            elif b.rank > a.rank:
                kind = "down"
            elif a.feasible != b.feasible:
                kind = "feasibility"
            else:
                continue
            changes = _metric_changes(a.metrics, b.metrics) if (a and b) else {}
            nearest, nearest_diff = None, None
            if kind == "new":
                # the closest design of the same structure that the earlier run had and lost
                for other in shared:
                    if (other.entries[r - 1] is None or other.entries[r] is not None
                            or other.structure != d.structure):
                        continue
                    diff = _response_gap(firsts[d.id], firsts[other.id])
                    if nearest_diff is None or diff < nearest_diff:
                        nearest, nearest_diff = other.id, diff
            here.append(Move(design=d.id, from_run=r - 1, to_run=r, kind=kind,
                             from_rank=a.rank if a else None, to_rank=b.rank if b else None,
                             feasible_before=a.feasible if a else None,
                             feasible_after=b.feasible if b else None,
                             metric_changes=changes, nearest=nearest,
                             nearest_difference=nearest_diff))
        here.sort(key=lambda m: (m.to_rank is None, m.to_rank or 0, m.from_rank or 0))
        moves.extend(here)
        pairs = [MetricChange(design=d.id, from_run=r - 1, to_run=r,
                              from_rank=d.entries[r - 1].rank, to_rank=d.entries[r].rank,
                              changes=_metric_changes(d.entries[r - 1].metrics,
                                                      d.entries[r].metrics))
                 for d in shared if d.entries[r - 1] is not None and d.entries[r] is not None]
        pairs.sort(key=lambda c: c.to_rank)
        metric_changes.extend(pairs)

    # reference design of each run: best-ranked feasible one, else rank 1
    summaries = []
    references: list[DesignRecord | None] = []
    for r, (name, doc) in enumerate(zip(names, docs, strict=True)):
        ref = next((d for d in doc.designs if d.feasible), None)
        if ref is None and doc.designs:
            ref = doc.designs[0]
        ref_id = None
        if ref is not None:
            ref_id = next(d.id for d in shared if d.entries[r] is not None
                          and d.entries[r].rank == ref.rank)
        references.append(ref)
        req = doc.requirements
        summaries.append(RunSummary(
            name=name, tag=_tag(r), plant=thaw(doc.raw["plant"])
            if isinstance(doc.raw.get("plant"), Mapping) else {},
            requirements=thaw(req) if req is not None else None,
            n_designs=len(doc.designs), n_feasible=sum(d.feasible for d in doc.designs),
            reference=ref_id, reference_feasible=bool(ref is not None and ref.feasible)))

    binding = []
    used = [entry for key, entry in REQUIREMENTS.items() if entry.kind != "setting"
            and any(s.requirements and key in s.requirements for s in summaries)]
    for entry in used:
        key = entry.key
        limits, values, statuses = [], [], []
        for s, ref in zip(summaries, references, strict=True):
            if s.requirements is None or ref is None:
                limits.append(s.requirements.get(key) if s.requirements else None)
                values.append(None)
                statuses.append("unknown")
                continue
            if key not in s.requirements:
                limits.append(None)
                values.append(None)
                statuses.append("not set")
                continue
            limit = s.requirements[key]
            value = ref.metric(entry.metric)
            limits.append(limit)
            values.append(value)
            statuses.append(_status(entry, limit, value, binding_margin)
                            if ref.has_metric(entry.metric) else "unknown")
        became = tuple(i for i in range(1, len(statuses))
                       if statuses[i] in _TIGHT and statuses[i - 1] not in _TIGHT)
        released = tuple(i for i in range(1, len(statuses))
                         if statuses[i] in ("slack", "not set") and statuses[i - 1] in _TIGHT)
        binding.append(Binding(requirement=key, metric=entry.metric, limits=tuple(limits),
                               values=tuple(values), statuses=tuple(statuses),
                               became_binding=became, released=released))

    return Comparison(runs=tuple(summaries), designs=shared, moves=tuple(moves),
                      binding=tuple(binding), metric_changes=tuple(metric_changes), rtol=rtol,
                      binding_margin=binding_margin)
