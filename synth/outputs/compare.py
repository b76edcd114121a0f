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

Matching rule.  Two designs are *the same design* when they have the same
``structure``, the same number of compensator zeros and poles, and, after
pairing the zeros (and separately the poles) by a minimum-distance
assignment, every pair satisfies ``|a - b| <= rtol * max(|a|, |b|) + atol``,
and so does the gain (same sign required). Defaults: ``rtol = 0.05``
(5 %), ``atol = 1e-9`` (only so that roots at the origin, such as an
integrator's pole, match exactly). Designs are matched against the first
occurrence of each design (no chaining), in run order and within a run in
rank order; a design matches at most one design of each run.

Binding rule.  For each run the *reference design* is its best-ranked
feasible design (or, when no design is feasible, its rank-1 design). A
requirement with limit ``L`` is *violated* at that design when its metric is
on the wrong side of ``L`` (a tolerance of ``1e-9 * max(1, |L|)`` absorbs
rounding), *binding* when it is met with a margin of at most
``binding_margin * |L|`` (default 5 %), and *slack* otherwise. For
``plant_gain_range`` the design's ``stable_plant_gain_range`` must contain
the required interval, and each end counts separately; for ``gain_range``
the margin is measured as a fraction of the range's width. A metric that is
``null`` in the JSON is unbounded: an unbounded settling time violates an
upper limit, an infinite gain margin is slack for a lower limit.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from synth.errors import InputError

__all__ = [
    "BINDING_MARGIN",
    "Binding",
    "Comparison",
    "DEFAULT_ATOL",
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
DESIGN_SCHEMA = "synth.design/1"

DEFAULT_RTOL = 0.05
DEFAULT_ATOL = 1e-9
BINDING_MARGIN = 0.05

# requirement key -> (metric key in the design JSON, kind of limit)
REQUIREMENT_METRICS: dict[str, tuple[str, str]] = {
    "max_overshoot_percent": ("overshoot_percent", "max"),
    "max_settling_time": ("settling_time", "max"),
    "min_damping_ratio": ("min_damping_ratio", "min"),
    "max_rise_time": ("rise_time", "max"),
    "max_steady_state_error": ("steady_state_error", "max"),
    "plant_gain_range": ("stable_plant_gain_range", "range"),
    "gain_range": ("gain", "gain"),
    "min_phase_margin_deg": ("phase_margin_deg", "min"),
    "min_gain_margin_db": ("gain_margin_db", "min"),
    "max_peak_sensitivity": ("peak_sensitivity", "max"),
    "max_control_effort": ("peak_control_effort", "max"),
}

# the contract's scalar metrics first, in its order; other numeric extras follow sorted
_METRIC_ORDER = ("overshoot_percent", "settling_time", "rise_time", "steady_state_error",
                 "min_damping_ratio", "phase_margin_deg", "gain_margin_db",
                 "peak_sensitivity", "peak_control_effort")

_TIGHT = ("binding", "violated")
_TABLE_CHANGES = 5  # designs per pair of runs whose metric changes the table shows


# ----------------------------------------------------------------------------------------------
# loading and checking
# ----------------------------------------------------------------------------------------------


def load_design_json(path: str | Path) -> dict:
    """Read a ``synth.design/1`` document written by ``synth design --json``.

    Parameters
    ----------
    path : str or Path
        The JSON file.

    Returns
    -------
    dict
        The parsed document, unchanged.

    Raises
    ------
    InputError
        Naming the file when it cannot be read, is not valid JSON, is not a
        JSON object, has a ``schema`` other than ``"synth.design/1"`` or a
        malformed ``designs`` list.
    """
    from synth.problem.source import read_input_text

    source = str(path)
    # regular files only, never blocking; a design run of 64 MiB is far beyond any real one
    text = read_input_text(path, max_bytes=64 << 20, kind="design JSON file")
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as err:
        raise InputError(f"not valid JSON: {err.msg} at line {err.lineno}, column {err.colno}",
                         source=source) from None
    except RecursionError:
        raise InputError("not a design JSON file: nested too deeply", source=source) from None
    except ValueError:  # an integer beyond Python's digit limit
        raise InputError("not a design JSON file: a number has too many digits",
                         source=source) from None
    _check_document(doc, source)
    return doc


def _check_document(doc: Any, source: str) -> None:
    """Raise InputError unless ``doc`` looks like a synth.design/1 document."""
    if not isinstance(doc, dict):
        raise InputError("expected a JSON object (a synth.design/1 document)", source=source)
    schema = doc.get("schema")
    if schema != DESIGN_SCHEMA:
        raise InputError(f"schema is {schema!r}, expected {DESIGN_SCHEMA!r}",
                         source=source, key="schema")
    designs = doc.get("designs")
    if not isinstance(designs, list):
        raise InputError("must be a list of designs", source=source, key="designs")
    for i, d in enumerate(designs):
        key = f"designs[{i}]"
        if not isinstance(d, dict):
            raise InputError("must be an object", source=source, key=key)
        if not isinstance(d.get("structure"), str):
            raise InputError("needs a text 'structure'", source=source, key=f"{key}.structure")
        rank = d.get("rank")
        if isinstance(rank, bool) or not isinstance(rank, int):
            raise InputError("needs an integer 'rank'", source=source, key=f"{key}.rank")
        comp = d.get("compensator")
        if not isinstance(comp, dict):
            raise InputError("needs a 'compensator' object", source=source,
                             key=f"{key}.compensator")
        _compensator_roots(comp, source, f"{key}.compensator")
        if "metrics" in d and not isinstance(d["metrics"], dict):
            raise InputError("must be an object", source=source, key=f"{key}.metrics")
    req = doc.get("requirements")
    if req is not None and not isinstance(req, dict):
        raise InputError("must be an object", source=source, key="requirements")


def _pairs_to_complex(value: Any, source: str, key: str) -> np.ndarray:
    if not isinstance(value, list):
        raise InputError("must be a list of [re, im] pairs", source=source, key=key)
    out = []
    for v in value:
        if (not isinstance(v, list) or len(v) != 2
                or not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in v)
                or not all(math.isfinite(x) for x in v)):
            raise InputError("must be a list of finite [re, im] pairs", source=source, key=key)
        out.append(complex(v[0], v[1]))
    return np.array(out, dtype=complex)


def _poly(value: Any, source: str, key: str) -> np.ndarray:
    if (not isinstance(value, list) or not value
            or not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in value)):
        raise InputError("must be a non-empty list of numbers", source=source, key=key)
    p = np.trim_zeros(np.asarray(value, dtype=float), "f")
    if p.size == 0 or not np.all(np.isfinite(p)):
        raise InputError("must be finite and not all zero", source=source, key=key)
    return p


def _compensator_roots(comp: dict, source: str, key: str) -> tuple[np.ndarray, np.ndarray, float]:
    """Zeros, poles and root-locus gain of a compensator object.

    ``zeros``/``poles``/``gain`` are used when present; otherwise they are
    computed from ``numerator``/``denominator`` with numpy.roots.
    """
    if all(k in comp for k in ("zeros", "poles", "gain")):
        zeros = _pairs_to_complex(comp["zeros"], source, f"{key}.zeros")
        poles = _pairs_to_complex(comp["poles"], source, f"{key}.poles")
        gain = comp["gain"]
        if isinstance(gain, bool) or not isinstance(gain, (int, float)) or not math.isfinite(gain):
            raise InputError("must be a finite number", source=source, key=f"{key}.gain")
        return zeros, poles, float(gain)
    if "numerator" in comp and "denominator" in comp:
        num = _poly(comp["numerator"], source, f"{key}.numerator")
        den = _poly(comp["denominator"], source, f"{key}.denominator")
        zeros = np.roots(num) if num.size > 1 else np.zeros(0, dtype=complex)
        poles = np.roots(den) if den.size > 1 else np.zeros(0, dtype=complex)
        return zeros.astype(complex), poles.astype(complex), float(num[0] / den[0])
    raise InputError("needs zeros, poles and gain (or numerator and denominator)",
                     source=source, key=key)


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
    and order in the earlier run (None if there is none) and
    ``nearest_difference`` the largest relative difference of its paired
    zeros, poles and gain (so 0.3 means 30 % apart).
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


def _close(a: complex | float, b: complex | float, rtol: float, atol: float) -> bool:
    if math.isinf(rtol):  # no tolerance: only measuring the difference
        return True
    return abs(a - b) <= rtol * max(abs(a), abs(b)) + atol


def _roots_close(a: np.ndarray, b: np.ndarray, rtol: float, atol: float) -> float | None:
    """Largest relative pairing error if the root sets match, else None."""
    if a.size != b.size:
        return None
    if a.size == 0:
        return 0.0
    from scipy.optimize import linear_sum_assignment

    cost = np.abs(a[:, None] - b[None, :])
    rows, cols = linear_sum_assignment(cost)
    worst = 0.0
    for i, j in zip(rows, cols, strict=True):
        if not _close(a[i], b[j], rtol, atol):
            return None
        scale = max(abs(a[i]), abs(b[j]))
        worst = max(worst, abs(a[i] - b[j]) / scale if scale > 0 else 0.0)
    return worst


def same_design(first: tuple[str, np.ndarray, np.ndarray, float],
                second: tuple[str, np.ndarray, np.ndarray, float],
                rtol: float = DEFAULT_RTOL, atol: float = DEFAULT_ATOL) -> float | None:
    """Whether two compensators are the same design under the matching rule.

    Parameters
    ----------
    first, second : tuple
        ``(structure, zeros, poles, gain)`` with complex zero and pole arrays.
    rtol, atol : float
        Relative and absolute tolerance (see the module docstring).

    Returns
    -------
    float or None
        None when they differ; otherwise the largest relative difference
        among the paired zeros, poles and the gain (0.0 for identical ones),
        used to pick the closest of several matches.
    """
    s1, z1, p1, k1 = first
    s2, z2, p2, k2 = second
    if s1 != s2 or np.sign(k1) != np.sign(k2) or not _close(k1, k2, rtol, atol):
        return None
    dz = _roots_close(z1, z2, rtol, atol)
    dp = _roots_close(p1, p2, rtol, atol)
    if dz is None or dp is None:
        return None
    kscale = max(abs(k1), abs(k2))
    dk = abs(k1 - k2) / kscale if kscale > 0 else 0.0
    return max(dz, dp, dk)


def _relative_difference(first, second) -> float | None:
    """Largest relative difference of paired zeros, poles and gain; None if not comparable."""
    s1, z1, p1, k1 = first
    s2, z2, p2, k2 = second
    if s1 != s2 or z1.size != z2.size or p1.size != p2.size or np.sign(k1) != np.sign(k2):
        return None
    return same_design(first, second, rtol=math.inf, atol=0.0)


def _tag(i: int) -> str:
    return chr(ord("A") + i) if i < 26 else f"R{i + 1}"


def _fmt_root(r: complex) -> str:
    if abs(r.imag) < 1e-12 * max(1.0, abs(r)):
        return f"{r.real:.4g}"
    return f"{r.real:.4g}{r.imag:+.4g}j"


def _describe(structure: str, zeros: np.ndarray, poles: np.ndarray, gain: float) -> str:
    # show one root of each conjugate pair
    def keep(rs):
        return [r for r in rs if r.imag >= -1e-12 * max(1.0, abs(r))]

    parts = [f"{structure}: gain {gain:.4g}"]
    if zeros.size:
        parts.append("zeros " + ", ".join(_fmt_root(r) for r in keep(zeros)))
    if poles.size:
        parts.append("poles " + ", ".join(_fmt_root(r) for r in keep(poles)))
    return ", ".join(parts)


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


def _num_or_inf(v: Any, default: float) -> float:
    return float(v) if _is_number(v) else default


def _status(kind: str, limit: Any, value: Any, margin: float) -> str:
    """Slack, binding or violated for one requirement at one design (module docstring)."""
    if kind in ("max", "min"):
        if not _is_number(limit):
            return "unknown"
        L = float(limit)
        tol = 1e-9 * max(1.0, abs(L))
        room = margin * abs(L)
        if kind == "max":
            v = _num_or_inf(value, math.inf)  # null = unbounded: violates an upper limit
            if v > L + tol:
                return "violated"
            return "binding" if v >= L - room else "slack"
        v = _num_or_inf(value, math.inf)  # null = unbounded: satisfies a lower limit
        if v < L - tol:
            return "violated"
        return "binding" if v <= L + room else "slack"
    if not (isinstance(limit, (list, tuple)) and len(limit) == 2
            and all(_is_number(x) for x in limit)):
        return "unknown"
    a, b = float(limit[0]), float(limit[1])
    tol = 1e-9 * max(1.0, abs(a), abs(b))
    if kind == "range":
        if not (isinstance(value, (list, tuple)) and len(value) == 2):
            return "unknown"
        c = _num_or_inf(value[0], -math.inf)
        d = _num_or_inf(value[1], math.inf)
        if c > a + tol or d < b - tol:
            return "violated"
        if c >= a - margin * abs(a) or d <= b + margin * abs(b):
            return "binding"
        return "slack"
    # compensator gain inside gain_range
    if not _is_number(value):
        return "unknown"
    k = float(value)
    if k < a - tol or k > b + tol:
        return "violated"
    room = margin * (b - a)
    return "binding" if (k - a <= room or b - k <= room) else "slack"


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
    rtol, atol, binding_margin : float
        The tolerances used.
    """

    runs: tuple[RunSummary, ...]
    designs: tuple[SharedDesign, ...]
    moves: tuple[Move, ...]
    binding: tuple[Binding, ...]
    metric_changes: tuple[MetricChange, ...] = ()
    rtol: float = DEFAULT_RTOL
    atol: float = DEFAULT_ATOL
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
        settings : ``relative_tolerance``, ``absolute_tolerance`` (design
            matching) and ``binding_margin`` (fraction of a limit).
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
            and how far apart, as a fraction; else null).
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
            "settings": {"relative_tolerance": self.rtol, "absolute_tolerance": self.atol,
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
        """The terminal account: runs, the design-by-run rank grid, moves, requirements."""
        runs = self.runs
        lines = [f"Comparing {len(runs)} design runs "
                 f"(same design: same structure, parameters within {self.rtol:.0%})"]
        for r in runs:
            label = r.plant.get("label") if isinstance(r.plant, dict) else None
            extra = f"  plant: {label}" if label else ""
            lines.append(f"  [{r.tag}] {r.name}: {r.n_designs} designs, "
                         f"{r.n_feasible} feasible{extra}")
        lines.append("")
        if not self.designs:
            lines.append("No designs in any run.")
            return lines

        # rank grid: one row per design, one column per run; '*' marks an infeasible design
        width = max(len(r.tag) for r in runs) + 2
        desc_w = min(60, max(len(d.description) for d in self.designs))
        head = f"  {'id':<4} {'design':<{desc_w}} " + " ".join(f"{r.tag:>{width}} " for r in runs)
        lines.append("Ranks (* = misses a requirement, - = absent)")
        lines.append(head)
        for d in self.designs:
            cells = []
            for e in d.entries:
                mark = " " if e is None or e.feasible else "*"
                cells.append(f"{'-' if e is None else str(e.rank):>{width}}{mark}")
            desc = d.description if len(d.description) <= desc_w else d.description[:desc_w - 3] + "..."
            lines.append(f"  {d.id:<4} {desc:<{desc_w}} " + " ".join(cells))
        lines.append("")

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
                        what += (f" (closest in {a}: {m.nearest}, parameters "
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
        return lines


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


def compare_runs(runs: list[tuple[str, dict]], rtol: float = DEFAULT_RTOL,
                 atol: float = DEFAULT_ATOL,
                 binding_margin: float = BINDING_MARGIN) -> Comparison:
    """Compare several design runs side by side.

    Parameters
    ----------
    runs : list of (str, dict)
        ``(name, document)`` pairs; each document a ``synth.design/1`` object
        (as returned by :func:`load_design_json` or ``DesignRun.to_json()``).
        Order matters: moves are reported from each run to the next.
    rtol, atol : float
        Tolerances of the design matching rule (module docstring).
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
    if not (rtol >= 0 and atol >= 0 and binding_margin >= 0):
        raise InputError("tolerances must be non-negative")
    parsed = []
    for name, doc in runs:
        _check_document(doc, str(name))
        designs = []
        for i, d in enumerate(doc["designs"]):
            z, p, k = _compensator_roots(d["compensator"], str(name), f"designs[{i}].compensator")
            designs.append((d, z, p, k))
        designs.sort(key=lambda item: item[0]["rank"])
        parsed.append((str(name), doc, designs))

    n_runs = len(parsed)
    # families: [structure, zeros, poles, gain, description, {run: RunEntry}]
    families: list[list] = []
    for r, (_, _, designs) in enumerate(parsed):
        for d, z, p, k in designs:
            key = (d["structure"], z, p, k)
            best, best_err = None, math.inf
            for fam in families:
                if r in fam[5]:
                    continue
                err = same_design((fam[0], fam[1], fam[2], fam[3]), key, rtol, atol)
                if err is not None and err < best_err:
                    best, best_err = fam, err
            entry = RunEntry(rank=int(d["rank"]), feasible=bool(d.get("feasible", False)),
                             metrics=dict(d.get("metrics") or {}),
                             violations=tuple(str(v) for v in d.get("violations") or ()))
            if best is None:
                desc = d.get("description")
                if not isinstance(desc, str) or not desc:
                    desc = _describe(d["structure"], z, p, k)
                families.append([d["structure"], z, p, k, desc, {r: entry}])
            else:
                best[5][r] = entry

    shared = tuple(
        SharedDesign(id=f"D{i + 1}", structure=f[0], description=f[4],
                     zeros=tuple(complex(x) for x in f[1]), poles=tuple(complex(x) for x in f[2]),
                     gain=float(f[3]), entries=tuple(f[5].get(r) for r in range(n_runs)))
        for i, f in enumerate(families))

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
                me = (d.structure, np.array(d.zeros), np.array(d.poles), d.gain)
                for other in shared:
                    if other.entries[r - 1] is None or other.entries[r] is not None:
                        continue
                    diff = _relative_difference(
                        me, (other.structure, np.array(other.zeros), np.array(other.poles),
                             other.gain))
                    if diff is not None and (nearest_diff is None or diff < nearest_diff):
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
    references: list[tuple[dict, float] | None] = []
    for r, (name, doc, designs) in enumerate(parsed):
        ref = next((item for item in designs if item[0].get("feasible")), None)
        if ref is None and designs:
            ref = designs[0]
        ref_id = None
        if ref is not None:
            ref_id = next(d.id for d in shared if d.entries[r] is not None
                          and d.entries[r].rank == ref[0]["rank"])
        references.append(None if ref is None else (ref[0], ref[3]))
        req = doc.get("requirements")
        summaries.append(RunSummary(
            name=name, tag=_tag(r), plant=doc.get("plant") if isinstance(doc.get("plant"), dict)
            else {}, requirements=dict(req) if isinstance(req, dict) else None,
            n_designs=len(designs), n_feasible=sum(bool(d.get("feasible")) for d, *_ in designs),
            reference=ref_id, reference_feasible=bool(ref and ref[0].get("feasible"))))

    binding = []
    used = [k for k in REQUIREMENT_METRICS
            if any(s.requirements and k in s.requirements for s in summaries)]
    for key in used:
        metric, kind = REQUIREMENT_METRICS[key]
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
            design, gain = ref
            mets = design.get("metrics") or {}
            if kind == "gain":
                value, present = gain, True
            else:
                value, present = mets.get(metric), metric in mets
            limits.append(limit)
            values.append(value)
            statuses.append(_status(kind, limit, value, binding_margin) if present else "unknown")
        became = tuple(i for i in range(1, len(statuses))
                       if statuses[i] in _TIGHT and statuses[i - 1] not in _TIGHT)
        released = tuple(i for i in range(1, len(statuses))
                         if statuses[i] in ("slack", "not set") and statuses[i - 1] in _TIGHT)
        binding.append(Binding(requirement=key, metric=metric, limits=tuple(limits),
                               values=tuple(values), statuses=tuple(statuses),
                               became_binding=became, released=released))

    return Comparison(runs=tuple(summaries), designs=shared, moves=tuple(moves),
                      binding=tuple(binding), metric_changes=tuple(metric_changes), rtol=rtol, atol=atol,
                      binding_margin=binding_margin)
