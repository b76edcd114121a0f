"""The traced root locus: branches on an adaptive gain grid plus every exact special point.

:func:`trace_locus` is what ``synth trace`` calls.  It combines

* the exact special points of :mod:`synth.locus.special` (both signs of K),
* the exact gain intervals of :mod:`synth.locus.core` (stability and, when a
  region is given, the requirement region),
* the adaptive gain grid of :mod:`synth.locus.grid`, with every special-point
  gain and every interval end inserted exactly, and
* branch tracking by optimal matching (:mod:`synth.locus.branches`),

into one frozen :class:`LocusTrace` with ``to_json()`` (schema
``synth.trace/1``) and ``summary_lines()``.

Everything here describes the linear model the user supplied; the real
machine differs from it (saturation, unmodelled dynamics, parameter drift).

References
----------
W. R. Evans, "Control system synthesis by root locus method", Trans. AIEE 69,
1950.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.locus import core
from synth.locus.branches import track_branches
from synth.locus.grid import DEFAULT_TOL, adaptive_grid
from synth.locus.special import (
    Asymptotes,
    AxisCrossing,
    BreakPoint,
    PointAngles,
    RealSegment,
    SpecialPoints,
    locus_facts,
)

SCHEMA = "synth.trace/1"

Interval = tuple[float | None, float | None]


def _f(x: float) -> float | None:
    """A JSON-safe float (``None`` for an infinite or undefined value)."""
    x = float(x)
    return x + 0.0 if np.isfinite(x) else None


def _pair(z: complex) -> list[float | None]:
    z = complex(z)
    return [_f(z.real), _f(z.imag)]


def _num(x: float, digits: int = 4) -> str:
    x = float(x)
    if not np.isfinite(x):
        return "inf" if x > 0 else "-inf"
    return f"{x + 0.0:.{digits}g}"


def _cnum(z: complex, digits: int = 4) -> str:
    z = complex(z)
    if abs(z.imag) <= 1e-12 * abs(z):
        return _num(z.real, digits)
    sign = "+" if z.imag > 0 else "-"
    return f"{_num(z.real, digits)}{sign}{_num(abs(z.imag), digits)}j"


def _intervals_text(intervals) -> str:
    if not intervals:
        return "no gain"
    parts = []
    for lo, hi in intervals:
        parts.append(f"({'-inf' if lo is None else _num(lo)}, {'inf' if hi is None else _num(hi)})")
    return "K in " + " or ".join(parts)


def _asymptotes_json(a: Asymptotes) -> dict:
    return {"centroid": None if a.centroid is None else _f(a.centroid),
            "angles_deg": [_f(x) for x in a.angles_deg]}


def _break_json(b: BreakPoint) -> dict:
    return {"s": _pair(b.s), "gain": _f(b.gain), "kind": b.kind, "roots_meeting": b.roots_meeting}


def _cross_json(c: AxisCrossing) -> dict:
    direction = {True: "into the right half-plane", False: "into the left half-plane",
                 None: "tangent to the axis"}[c.toward_right]
    return {"frequency": _f(c.frequency), "gain": _f(c.gain), "direction": direction}


def _segments_json(segs: tuple[RealSegment, ...]) -> list:
    return [[_f(s.left), _f(s.right)] for s in segs]


def _angles_json(items: tuple[PointAngles, ...], key: str) -> list:
    return [{key: _pair(a.point), "multiplicity": a.multiplicity,
             "angles_deg": [_f(x) for x in a.angles_deg]} for a in items]


def _intervals_json(iv) -> list:
    return [[None if lo is None else _f(lo), None if hi is None else _f(hi)] for lo, hi in iv]


def _points_json(p: SpecialPoints) -> dict:
    return {
        "asymptotes": _asymptotes_json(p.asymptotes),
        "breakaway_points": [_break_json(b) for b in p.breakaways],
        "imaginary_axis_crossings": [_cross_json(c) for c in p.crossings],
        "real_axis_segments": _segments_json(p.segments),
        "departure_angles": _angles_json(p.departures, "pole"),
        "arrival_angles": _angles_json(p.arrivals, "zero"),
    }


@dataclass(frozen=True, eq=False)
class LocusTrace:
    """A traced root locus of ``den + K num`` and its exact special points.

    Attributes
    ----------
    num, den : ndarray
        Trimmed loop polynomials (descending powers).
    negative : bool
        The branches cover ``K <= 0`` instead of ``K >= 0``.
    gains : ndarray, shape (G,)
        Gain samples, by increasing ``|K|``, from 0.
    roots : ndarray, complex, shape (G, n)
        Closed-loop roots in branch order: branch ``j`` is ``roots[:, j]`` and
        starts at ``poles[j]``.
    poles, zeros : ndarray, complex
        Open-loop poles and zeros, repeated by multiplicity, sorted.
    positive_points, negative_points : SpecialPoints
        Exact special points for ``K > 0`` and ``K < 0``.
    stable_intervals : tuple of (lo, hi)
        Open gain intervals (all real K) with a stable closed loop.
    region : Region or None
        The requirement region, when one was given.
    region_intervals : tuple of (lo, hi) or None
        Open gain intervals putting every closed-loop pole in ``region``.
    center, scale : complex, float
        Middle and half-size of the box holding the poles, zeros and special
        points (the plot frames this).
    """

    num: np.ndarray
    den: np.ndarray
    negative: bool
    gains: np.ndarray
    roots: np.ndarray
    poles: np.ndarray
    zeros: np.ndarray
    positive_points: SpecialPoints
    negative_points: SpecialPoints
    stable_intervals: tuple[Interval, ...]
    region: object | None
    region_intervals: tuple[Interval, ...] | None
    center: complex
    scale: float

    # the special points of the traced sign, by their plain names
    @property
    def points(self) -> SpecialPoints:
        return self.negative_points if self.negative else self.positive_points

    @property
    def asymptotes(self) -> Asymptotes:
        return self.points.asymptotes

    @property
    def breakaways(self) -> tuple[BreakPoint, ...]:
        return self.points.breakaways

    @property
    def crossings(self) -> tuple[AxisCrossing, ...]:
        return self.points.crossings

    @property
    def segments(self) -> tuple[RealSegment, ...]:
        return self.points.segments

    @property
    def departures(self) -> tuple[PointAngles, ...]:
        return self.points.departures

    @property
    def arrivals(self) -> tuple[PointAngles, ...]:
        return self.points.arrivals

    @property
    def angles(self) -> dict[str, tuple[PointAngles, ...]]:
        """Departure angles at the poles and arrival angles at the zeros."""
        return {"departure": self.departures, "arrival": self.arrivals}

    def roots_at(self, gain: float) -> np.ndarray:
        """Closed-loop roots at any gain (batched eigenvalues, unordered)."""
        return core.closed_loop_roots(self.num, self.den, [gain])[0]

    def to_json(self) -> dict:
        """The ``synth.trace/1`` object of the contract (plus extra fields).

        The contract's fields (``asymptotes``, ``breakaway_points``,
        ``imaginary_axis_crossings``) are for positive gains; the negative-gain
        ones sit under ``negative_gain``.  ``branches.roots[i][j]`` is branch
        ``j`` at ``branches.gains[i]``.
        """
        pos = _points_json(self.positive_points)
        doc: dict = {
            "schema": SCHEMA,
            "loop": {"numerator": [_f(c) for c in self.num],
                     "denominator": [_f(c) for c in self.den]},
            "gain_sign": "negative" if self.negative else "positive",
            "poles": [_pair(p) for p in self.poles],
            "zeros": [_pair(z) for z in self.zeros],
            **pos,
            "negative_gain": _points_json(self.negative_points),
            "stable_gain_intervals": _intervals_json(self.stable_intervals),
        }
        if self.region is not None:
            doc["region"] = {"sigma": _f(self.region.sigma), "zeta": _f(self.region.zeta)}
            doc["region_gain_intervals"] = _intervals_json(self.region_intervals or ())
        r = self.roots
        pairs = np.stack([r.real, r.imag], axis=-1)
        rows = [[[_f(x), _f(y)] for x, y in row] for row in pairs.tolist()]
        doc["branches"] = {"gains": [_f(g) for g in self.gains], "roots": rows}
        return doc

    def summary_lines(self) -> list[str]:
        """A short terminal account of the special points (plain text lines)."""
        p = self.points
        sign = "K < 0" if self.negative else "K > 0"
        n, m = self.poles.size, self.zeros.size
        lines = [
            f"root locus for {sign}: {n} pole{'s' * (n != 1)}, {m} zero{'s' * (m != 1)}, "
            f"{self.gains.size} gain samples up to |K| = {_num(np.max(np.abs(self.gains)), 3)}"
        ]
        a = p.asymptotes
        if a.centroid is None:
            lines.append("  no branch goes to infinity (as many zeros as poles)")
        else:
            angles = ", ".join(_num(x, 4) for x in a.angles_deg)
            count = len(a.angles_deg)
            verb = "branches go" if count != 1 else "branch goes"
            lines.append(f"  {count} {verb} to infinity from s = {_num(a.centroid)} "
                         f"along {angles} deg")
        if p.segments:
            segs = ", ".join(
                f"{'(' if math.isinf(s.left) else '['}{_num(s.left)}, {_num(s.right)}"
                f"{')' if math.isinf(s.right) else ']'}" for s in p.segments)
            lines.append(f"  real axis on the locus: {segs}")
        else:
            lines.append("  no part of the real axis is on the locus")
        for b in p.breakaways:
            what = {"breakaway": "roots meet and leave the real axis",
                    "break-in": "roots arrive on the real axis",
                    "complex": "roots meet off the real axis",
                    "multiple": f"{b.roots_meeting} roots meet"}[b.kind]
            lines.append(f"  {what} at s = {_cnum(b.s)} (K = {_num(b.gain)})")
        for c in p.crossings:
            move = {True: "moving right", False: "moving left", None: "touching"}[c.toward_right]
            where = "s = 0" if c.frequency == 0 else f"s = +/-{_num(c.frequency)}j"
            lines.append(f"  imaginary axis at {where} (w = {_num(c.frequency)} rad/s, "
                         f"K = {_num(c.gain)}, {move})")
        many = {2: "double ", 3: "triple "}
        for items, verb, what in ((p.departures, "leave", "pole"), (p.arrivals, "arrive at", "zero")):
            for d in items:
                if not d.angles_deg or not (d.point.imag > 0 or d.multiplicity > 1):
                    continue
                ang = ", ".join(_num(x, 4) for x in d.angles_deg)
                kind = many.get(d.multiplicity, f"{d.multiplicity}-fold " if d.multiplicity > 1 else "")
                lines.append(f"  branches {verb} the {kind}{what} {_cnum(d.point)} at {ang} deg")
        if self.stable_intervals:
            lines.append(f"  closed loop stable for {_intervals_text(self.stable_intervals)}")
        else:
            lines.append("  no gain makes the closed loop stable")
        if self.region is not None:
            desc = self.region.describe() if hasattr(self.region, "describe") else "the region"
            if self.region_intervals:
                lines.append(f"  every pole in the region ({desc}) for "
                             f"{_intervals_text(self.region_intervals)}")
            else:
                lines.append(f"  no gain puts every pole in the region ({desc})")
        return lines


def trace_locus(
    num,
    den,
    region=None,
    negative: bool = False,
    k_max: float | None = None,
    tol: float = DEFAULT_TOL,
    max_points: int = 1500,
) -> LocusTrace:
    """Trace the root locus of the loop ``K num / den`` (unity negative feedback).

    Parameters
    ----------
    num, den : array_like
        Loop numerator and denominator, descending powers, ``deg num <= deg den``.
    region : Region, optional
        Requirement region; its exact gain intervals are added and its boundary
        gains sampled exactly.
    negative : bool
        Trace ``K <= 0`` instead of ``K >= 0``.
    k_max : float, optional
        Largest ``|K|`` to sample (default: far enough to show the end behaviour).
    tol : float
        Refinement tolerance of the gain grid (smaller = more samples).
    max_points : int
        Upper bound on gain samples.

    Returns
    -------
    LocusTrace

    Raises
    ------
    InputError
        For an empty, zero, non-finite or improper loop, or bad options.

    References
    ----------
    W. R. Evans, Trans. AIEE 69, 1950; H. W. Kuhn, Naval Res. Logist. Q. 2, 1955.
    """
    from synth.errors import InputError

    for name, value in (("largest gain to trace", k_max), ("grid tolerance", tol)):
        if value is not None and not isinstance(value, int | float | np.floating | np.integer):
            raise InputError(f"the {name} must be a number, not {value!r}")
    if k_max is not None and not (np.isfinite(k_max) and k_max > 0):
        raise InputError(f"the largest gain to trace must be a positive number, not {k_max}")
    if not (np.isfinite(tol) and 0 < tol < 2):
        raise InputError(f"the grid tolerance must be in (0, 2), not {tol}")
    try:
        max_points = int(max_points)
    except (TypeError, ValueError):
        raise InputError(f"the number of gain samples must be a whole number, not {max_points!r}") from None
    if max_points < 8:
        raise InputError("at least 8 gain samples are needed")
    facts = locus_facts(num, den)
    n, d = facts.num, facts.den
    stable = tuple(core.stable_gain_intervals(n, d))
    reg_iv = tuple(core.region_gain_intervals(n, d, region)) if region is not None else None
    ends = [x for iv in stable + (reg_iv or ()) for x in iv if x is not None]
    grid = adaptive_grid(n, d, negative=negative, facts=facts, extra_gains=ends,
                         k_max=k_max, tol=tol, max_points=int(max_points))
    roots = track_branches(grid.roots, grid.center, grid.scale)
    for arr in (roots, grid.gains):
        arr.setflags(write=False)
    return LocusTrace(
        num=n,
        den=d,
        negative=bool(negative),
        gains=grid.gains,
        roots=roots,
        poles=facts.expanded_poles(),
        zeros=facts.expanded_zeros(),
        positive_points=facts.positive,
        negative_points=facts.negative,
        stable_intervals=stable,
        region=region,
        region_intervals=reg_iv,
        center=grid.center,
        scale=grid.scale,
    )
