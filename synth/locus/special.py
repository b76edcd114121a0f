"""Exact special points of the root locus of ``D(s) + K N(s)``.

Everything here is computed from the polynomials, not from a gain grid:

* asymptotes: centroid ``(sum of poles - sum of zeros) / (n - m)`` read from
  the coefficients, angles from the sign of ``K * n0 / d0``;
* real-axis segments: the sign of ``K(x) = -D(x)/N(x)`` between consecutive
  real poles and zeros (this is the odd-count rule for monic polynomials and
  stays right for any sign of the leading coefficients);
* breakaway and break-in points, real and complex: roots of
  ``B = N D' - N' D`` at which ``K = -D/N`` is real;
* imaginary-axis crossings: ``Im[D(jw) conj N(jw)] = 0`` is odd in ``w``, so it
  is ``w Q(w^2)``; the positive real roots of ``Q`` give every crossing once;
* departure angles at poles and arrival angles at zeros of any multiplicity
  ``r`` (``r`` angles each) from the local form ``(s - p)^r ~ -K N(p) / c_p``.

Robustness.  Root finding happens in a scaled variable ``z = s / rho`` with
``rho`` a power of two near the geometric mean of the nonzero pole and zero
magnitudes (exact rescaling, balanced coefficients), roots at the origin are
split off exactly, clusters of nearly equal roots (a numerically perturbed
multiple root) are merged into their mean (the mean of a perturbed cluster is
well conditioned), and simple roots get Newton polishing steps.

References
----------
W. R. Evans, "Control system synthesis by root locus method", Trans. AIEE 69,
1950 (angle and magnitude conditions, the construction rules).
K. Ogata, *Modern Control Engineering*, Prentice Hall (the rules for
asymptotes, breakaway points, axis crossings, departure and arrival angles).
J. H. Wilkinson, *Rounding Errors in Algebraic Processes*, 1963 (the
conditioning of multiple roots and of the mean of a root cluster).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.errors import InputError
from synth.locus.axis import AxisCrossing, axis_crossings_all
from synth.locus.core import gain_at  # noqa: F401  (one gain_at: the engine's)
from synth.numerics.poly import coefficients
from synth.numerics.scaling import frequency_scale, horner_error, scale_variable

_EPS = float(np.finfo(float).eps)
#: relative size of Im K under which a candidate special point counts as on the locus
_IMAG_K_RTOL = 1e-6
#: gains below this fraction of the loop's gain scale count as K = 0 (an open-loop pole)
_ZERO_K_RTOL = 1e-12
#: candidate points farther than this (in units of the scale rho) are rounding artefacts
_FAR = 1e10


# ---------------------------------------------------------------------------
# value objects
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Asymptotes:
    """Straight lines the infinite branches approach as ``|K|`` grows.

    Attributes
    ----------
    centroid : float or None
        Where the asymptotes meet on the real axis; ``None`` when ``n == m``.
    angles_deg : tuple of float
        One angle per asymptote in ``[0, 360)``, ascending.
    positive_gain : bool
        Whether these are the asymptotes of the ``K > 0`` locus.
    """

    centroid: float | None
    angles_deg: tuple[float, ...]
    positive_gain: bool = True


@dataclass(frozen=True)
class RealSegment:
    """A piece ``[left, right]`` of the real axis on the locus (``±inf`` for unbounded)."""

    left: float
    right: float

    def contains(self, x: float) -> bool:
        return self.left <= x <= self.right


@dataclass(frozen=True)
class BreakPoint:
    """A point where two or more closed-loop roots meet (breakaway or break-in).

    Attributes
    ----------
    s : complex
        Location.
    gain : float
        The gain at which the roots meet there.
    kind : str
        ``"breakaway"`` (real point where ``|K|`` has a local maximum along the
        axis: roots meet and leave the axis), ``"break-in"`` (local minimum:
        roots arrive on the axis), ``"complex"`` (off the real axis) or
        ``"multiple"`` (three or more roots meet on the axis).
    roots_meeting : int
        How many closed-loop roots coincide there (multiplicity of the root of
        ``N D' - N' D`` plus one).
    """

    s: complex
    gain: float
    kind: str
    roots_meeting: int = 2


@dataclass(frozen=True)
class PointAngles:
    """Angles at which branches leave a pole (or reach a zero).

    Attributes
    ----------
    point : complex
        The pole or zero.
    multiplicity : int
        Its multiplicity ``r``; there are ``r`` angles.
    angles_deg : tuple of float
        Directions in degrees, in ``(-180, 180]``.  Empty when the point
        coincides with a point of the other kind (a pole-zero cancellation).
    """

    point: complex
    multiplicity: int
    angles_deg: tuple[float, ...]


@dataclass(frozen=True)
class SpecialPoints:
    """All special points of the locus for one sign of the gain."""

    positive_gain: bool
    asymptotes: Asymptotes
    segments: tuple[RealSegment, ...]
    breakaways: tuple[BreakPoint, ...]
    crossings: tuple[AxisCrossing, ...]
    departures: tuple[PointAngles, ...]
    arrivals: tuple[PointAngles, ...]

    def gains(self) -> np.ndarray:
        """Sorted gains of the breakaway points and axis crossings."""
        g = [b.gain for b in self.breakaways] + [c.gain for c in self.crossings]
        return np.unique(np.asarray(g, dtype=float))


@dataclass(frozen=True, eq=False)
class LocusFacts:
    """Special points for both signs of the gain, with the open-loop roots.

    Attributes
    ----------
    num, den : ndarray
        Trimmed loop polynomials.
    poles, zeros : ndarray
        Distinct open-loop poles and zeros (complex), multiple roots merged.
    pole_mult, zero_mult : ndarray of int
        Their multiplicities.
    scale : float
        The power of two ``rho`` used to balance the polynomials.
    gain_scale : float
        A typical gain magnitude of the loop (``max|D(rho z)| / max|N(rho z)|``
        over the coefficients), used for tolerances and the gain grid.
    positive, negative : SpecialPoints
    """

    num: np.ndarray
    den: np.ndarray
    poles: np.ndarray
    pole_mult: np.ndarray
    zeros: np.ndarray
    zero_mult: np.ndarray
    scale: float
    gain_scale: float
    positive: SpecialPoints
    negative: SpecialPoints

    def for_sign(self, negative: bool = False) -> SpecialPoints:
        return self.negative if negative else self.positive

    def expanded_poles(self) -> np.ndarray:
        """Poles repeated by multiplicity, sorted by real then imaginary part."""
        return _sorted_complex(np.repeat(self.poles, self.pole_mult))

    def expanded_zeros(self) -> np.ndarray:
        """Zeros repeated by multiplicity, sorted by real then imaginary part."""
        return _sorted_complex(np.repeat(self.zeros, self.zero_mult))


# ---------------------------------------------------------------------------
# polynomial helpers (scaling, robust roots, clustering)
# ---------------------------------------------------------------------------


def _sorted_complex(z: np.ndarray) -> np.ndarray:
    z = np.asarray(z, dtype=complex)
    return z[np.lexsort((z.imag, z.real))] if z.size else z


def loop_pair(num, den) -> tuple[np.ndarray, np.ndarray]:
    """Validate and trim a loop ``K N / D``; raise InputError for unusable loops."""
    n = coefficients(num, "the loop numerator", allow_zero=False)
    d = coefficients(den, "the loop denominator", allow_zero=False)
    if n.size > d.size:
        raise InputError(
            f"the loop has more zeros ({n.size - 1}) than poles ({d.size - 1}); "
            "a root locus needs a proper loop"
        )
    if d.size < 2:
        raise InputError("the loop has no poles, so there is no locus to trace")
    return n, d


def _cluster_tol(size: int) -> float:
    # a root of multiplicity r is perturbed by about eps**(1/r) (relative)
    return min(30.0 * _EPS ** (1.0 / size), 1e-3)


def _cluster(roots: np.ndarray, ref: float) -> tuple[np.ndarray, np.ndarray]:
    """Merge numerically perturbed multiple roots into their means.

    Largest clusters first: a root and its ``r - 1`` nearest neighbours form an
    ``r``-fold root when their diameter is under
    ``_cluster_tol(r) * max(|center|, ref)``.

    Returns
    -------
    values, multiplicity : ndarray
    """
    z = np.asarray(roots, dtype=complex)
    values: list[complex] = []
    mult: list[int] = []
    # only roots with a neighbour within the loosest tolerance can cluster
    if z.size > 1:
        gap = np.abs(z[:, None] - z[None, :])
        np.fill_diagonal(gap, np.inf)
        loose = _cluster_tol(z.size) * np.maximum(np.abs(z), ref)
        left = np.flatnonzero(np.min(gap, axis=1) <= loose)
    else:
        left = np.zeros(0, dtype=int)
    single = np.setdiff1d(np.arange(z.size), left)
    for r in range(left.size, 1, -1):
        i = 0
        while left.size >= r and i < left.size:
            d = np.abs(z[left] - z[left[i]])
            near = left[np.argsort(d, kind="stable")[:r]]
            grp = z[near]
            center = complex(grp.mean())
            diam = float(np.max(np.abs(grp[:, None] - grp[None, :])))
            if diam <= _cluster_tol(r) * max(abs(center), ref):
                if abs(center.imag) <= _cluster_tol(r) * max(abs(center), ref):
                    center = complex(center.real, 0.0)
                values.append(center)
                mult.append(r)
                left = np.setdiff1d(left, near)
                i = 0
            else:
                i += 1
    for k in np.concatenate([left, single]):
        v = complex(z[k])
        if abs(v.imag) <= 1e-13 * max(abs(v), ref):
            v = complex(v.real, 0.0)
        values.append(v)
        mult.append(1)
    return np.asarray(values, dtype=complex), np.asarray(mult, dtype=int)


def _horner2(p: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Values and first derivatives of ``p`` at ``z`` in one Horner pass."""
    val = np.full(z.shape, p[0], dtype=complex)
    der = np.zeros(z.shape, dtype=complex)
    for c in p[1:]:
        der = der * z + val
        val = val * z + c
    return val, der


def _polish(p: np.ndarray, z: np.ndarray, steps: int = 1) -> np.ndarray:
    """Newton steps on simple roots.

    A step is kept only when it lowers ``|p|`` and stays well inside the gap to
    the nearest other root (so it cannot jump to a neighbour).
    """
    if z.size == 0 or p.size < 2:
        return z
    z = z.copy()
    if z.size > 1:
        gap = np.abs(z[:, None] - z[None, :])
        np.fill_diagonal(gap, np.inf)
        gap = np.min(gap, axis=1)
    else:
        gap = np.full(1, np.inf)
    f, df = _horner2(p, z)
    for _ in range(steps):
        with np.errstate(all="ignore"):
            step = f / df
            znew = z - step
            fnew, dfnew = _horner2(p, znew)
            better = np.isfinite(znew) & (np.abs(step) < 0.1 * gap) & (np.abs(fnew) < np.abs(f))
        z = np.where(better, znew, z)
        f = np.where(better, fnew, f)
        df = np.where(better, dfnew, df)
    return z


def _roots_distinct(p: np.ndarray, ref: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Distinct roots and multiplicities of a (balanced) real polynomial."""
    p = np.atleast_1d(np.asarray(p, dtype=float))
    nz = np.flatnonzero(p != 0.0)
    if nz.size == 0 or p.size - nz[0] < 2:
        return np.zeros(0, dtype=complex), np.zeros(0, dtype=int)
    p = p[nz[0]:]
    at_origin = p.size - 1 - int(np.flatnonzero(p != 0.0)[-1])
    q = p[: p.size - at_origin]
    vals = np.zeros(0, dtype=complex)
    mult = np.zeros(0, dtype=int)
    if q.size > 1:
        raw = np.roots(q).astype(complex)
        vals, mult = _cluster(raw, ref)
        simple = mult == 1
        vals[simple] = _polish(q, vals[simple])
        vals = np.where(vals.imag == 0.0, vals.real + 0j, vals)
    if at_origin:
        vals = np.concatenate([vals, [0j]])
        mult = np.concatenate([mult, [at_origin]])
    return vals, mult


def _trim_noise(p: np.ndarray, bound: np.ndarray) -> np.ndarray:
    """Drop leading coefficients of a computed polynomial that are below their rounding bound."""
    keep = np.flatnonzero(np.abs(p) > bound)
    return p[keep[0]:] if keep.size else np.zeros(0)


def _deg_angle(x: np.ndarray) -> np.ndarray:
    """Degrees folded into (-180, 180]."""
    a = np.mod(np.asarray(x, dtype=float) + 180.0, 360.0) - 180.0
    a[a <= -180.0 + 1e-9] = 180.0
    a[np.abs(a) < 1e-9] = 0.0
    return a


# ---------------------------------------------------------------------------
# public functions
# ---------------------------------------------------------------------------


def asymptotes(num, den, negative: bool = False) -> Asymptotes:
    """Asymptotes of the locus for ``K > 0`` (or ``K < 0`` with ``negative``).

    The ``n - m`` infinite branches follow ``s^(n-m) ~ -K n0 / d0``: angles
    ``(180 + 360 q) / (n - m)`` when ``K n0 / d0 > 0`` and ``360 q / (n - m)``
    otherwise, all from the centroid
    ``(sum of poles - sum of zeros) / (n - m) = (n1/n0 - d1/d0) / (n - m)``.

    References
    ----------
    K. Ogata, *Modern Control Engineering* (rules of root-locus construction).
    """
    n, d = loop_pair(num, den)
    return _asymptotes(n, d, negative)


def _asymptotes(n: np.ndarray, d: np.ndarray, negative: bool) -> Asymptotes:
    excess = (d.size - 1) - (n.size - 1)
    if excess == 0:
        return Asymptotes(None, (), not negative)
    sum_p = -d[1] / d[0]
    sum_z = -n[1] / n[0] if n.size > 1 else 0.0
    centroid = float((sum_p - sum_z) / excess) + 0.0
    sign = (-1.0 if negative else 1.0) * np.sign(n[0] / d[0])
    offset = 180.0 if sign > 0 else 0.0
    angles = (offset + 360.0 * np.arange(excess)) / excess
    return Asymptotes(centroid, tuple(float(a) for a in np.sort(angles)), not negative)


def real_axis_segments(num, den, negative: bool = False) -> tuple[RealSegment, ...]:
    """Pieces of the real axis on the locus for ``K > 0`` (``K < 0`` with ``negative``).

    A real ``x`` is on the locus when ``K(x) = -D(x)/N(x)`` has the sign of the
    gain.  The sign can only change at real poles and zeros, so one test point
    per gap decides each piece; pieces touching at a pole or zero of even
    multiplicity are joined.

    References
    ----------
    K. Ogata, *Modern Control Engineering* (real-axis rule).
    """
    facts = locus_facts(num, den)
    return facts.for_sign(negative).segments


def _segments(n, d, poles, zeros, rho, negative: bool) -> tuple[RealSegment, ...]:
    pts = np.concatenate([poles, zeros])
    real = np.sort(np.unique(pts[np.abs(pts.imag) <= 1e-9 * np.maximum(np.abs(pts), rho)].real))
    want = -1.0 if negative else 1.0
    if real.size == 0:
        k0 = -np.polyval(d, 0.0) / np.polyval(n, 0.0)
        return (RealSegment(-math.inf, math.inf),) if k0 * want > 0 else ()
    width = max(rho, real[-1] - real[0])
    tests = np.concatenate([[real[0] - width], 0.5 * (real[:-1] + real[1:]), [real[-1] + width]])
    with np.errstate(all="ignore"):
        k = -np.polyval(d, tests) / np.polyval(n, tests)
    on = k * want > 0
    edges = np.concatenate([[-math.inf], real, [math.inf]])
    out: list[RealSegment] = []
    for i in np.flatnonzero(on):
        lo, hi = float(edges[i]), float(edges[i + 1])
        if out and out[-1].right == lo:
            out[-1] = RealSegment(out[-1].left, hi)
        else:
            out.append(RealSegment(lo, hi))
    return tuple(out)


def breakaway_points(num, den, negative: bool = False) -> tuple[BreakPoint, ...]:
    """Breakaway and break-in points (real and complex) with their gains.

    Candidates are the roots of ``N D' - N' D`` (where ``dK/ds = 0``); a
    candidate is on the locus when ``K = -D/N`` is real there with the sign of
    the gain.  Points at ``K = 0`` (multiple open-loop poles) and ``K = inf``
    (multiple zeros) are not listed: see the departure and arrival angles.

    References
    ----------
    K. Ogata, *Modern Control Engineering* (breakaway points from dK/ds = 0).
    """
    return locus_facts(num, den).for_sign(negative).breakaways


def axis_crossings(num, den, negative: bool = False) -> tuple[AxisCrossing, ...]:
    """Imaginary-axis crossings ``s = j w`` (``w >= 0``, each once) with their gains.

    ``D(jw) + K N(jw) = 0`` with real ``K`` means ``Im[D(jw) conj N(jw)] = 0``,
    an odd polynomial ``w Q(w^2)``; ``w = 0`` is tested directly and the
    positive real roots of ``Q`` give the others.

    References
    ----------
    E. J. Routh (1877) and A. Hurwitz (1895): the same crossing gains bound the
    stable gain ranges; K. Ogata, *Modern Control Engineering* (axis crossings).
    """
    return locus_facts(num, den).for_sign(negative).crossings


def departure_angles(num, den, negative: bool = False) -> tuple[PointAngles, ...]:
    """Angles at which branches leave each distinct pole (``r`` angles at an ``r``-fold pole).

    Near a pole ``p`` of multiplicity ``r``, ``D(s) ~ c_p (s - p)^r`` with
    ``c_p = d0 * prod (p - p_j)^(m_j)`` over the other poles, so the branches
    leave along ``arg(-K N(p) / c_p) / r + 360 q / r`` degrees.

    References
    ----------
    K. Ogata, *Modern Control Engineering* (angle of departure).
    """
    return locus_facts(num, den).for_sign(negative).departures


def arrival_angles(num, den, negative: bool = False) -> tuple[PointAngles, ...]:
    """Angles at which branches reach each distinct zero as ``|K| -> inf``.

    References
    ----------
    K. Ogata, *Modern Control Engineering* (angle of arrival).
    """
    return locus_facts(num, den).for_sign(negative).arrivals


def _point_angles(points, mult, others, others_mult, lead_ratio, rho):
    """Departure angles (points = poles, others = zeros, ``lead_ratio = n0/d0``) or
    arrival angles (points = zeros, others = poles, ``lead_ratio = d0/n0``).

    Both follow ``(s - p)^r ~ -sign(K) * lead_ratio * prod(p - others) / prod(p - same)``,
    the products running over the other points with their multiplicities.

    Returns
    -------
    positive, negative : tuple of PointAngles
        For ``K > 0`` and ``K < 0`` (the phases differ by 180 degrees).
    """
    points = np.asarray(points, dtype=complex)
    if points.size == 0:
        return (), ()
    dz = points[:, None] - np.asarray(others, dtype=complex)[None, :]
    ds = points[:, None] - points[None, :]
    cancelled = np.any(np.abs(dz) <= 1e-9 * np.maximum(np.abs(points), rho)[:, None], axis=1)
    ang_other = np.sum(np.asarray(others_mult)[None, :] * np.angle(dz), axis=1) if dz.size else 0.0
    offdiag = ~np.eye(points.size, dtype=bool)
    ang_same = np.sum(np.where(offdiag, mult[None, :] * np.angle(ds), 0.0), axis=1)
    phase = np.broadcast_to(ang_other - ang_same, points.shape)
    sides = []
    for sign in (1.0, -1.0):
        base = math.atan2(0.0, -sign * lead_ratio)
        out = []
        folded_all = [np.sort(_deg_angle(np.degrees((base + ph + 2.0 * np.pi * np.arange(r)) / r)))
                      for ph, r in zip(phase, mult, strict=True)]
        for p, r, gone, folded in zip(points, mult, cancelled, folded_all, strict=True):
            angles = () if gone else tuple(float(x) for x in folded)
            out.append(PointAngles(complex(p), int(r), angles))
        sides.append(tuple(out))
    return sides[0], sides[1]


def _breakaways(n, d, ns, ds, rho, kscale):
    """Both signs' break points: (positive, negative) tuples."""
    b = np.polysub(np.polymul(ns, np.polyder(ds)), np.polymul(np.polyder(ns), ds))
    # rounding bound of each computed coefficient (sum of the magnitudes of its terms)
    bb = np.polyadd(np.polymul(np.abs(ns), np.abs(np.polyder(ds))),
                    np.polymul(np.abs(np.polyder(ns)), np.abs(ds))) * (8.0 * ds.size * _EPS)
    if ns.size == ds.size and b.size:
        b, bb = b[1:], bb[1:]  # its leading coefficient (n - m) n0 d0 is exactly zero here
    b = _trim_noise(np.atleast_1d(b), np.atleast_1d(bb)[-np.atleast_1d(b).size:])
    pos: list[BreakPoint] = []
    neg: list[BreakPoint] = []
    if b.size < 2:
        return (), ()
    vals, mult = _roots_distinct(b, 1.0)
    keep = np.isfinite(vals) & (np.abs(vals) <= _FAR)
    vals, mult = vals[keep], mult[keep]
    nz = np.polyval(ns, vals)
    dz = np.polyval(ds, vals)
    slope = np.polyval(np.polyder(b), vals.real)
    # a candidate at a multiple zero meets at K = inf: skip it
    finite = np.abs(nz) > 1e3 * horner_error(ns, vals)
    with np.errstate(all="ignore"):
        k = np.where(finite, -dz / np.where(finite, nz, 1.0), np.inf)
    for z, mu, kk, sl in zip(vals, mult, k, slope, strict=True):
        if not np.isfinite(kk) or abs(kk) <= _ZERO_K_RTOL * kscale:
            continue  # K = inf, or K = 0 (a multiple pole)
        if abs(kk.imag) > _IMAG_K_RTOL * abs(kk):
            continue
        kr = float(kk.real)
        s = complex(z) * rho
        if abs(z.imag) <= 1e-9 * abs(z):
            s = complex(s.real, 0.0)
            if mu > 1:
                kind = "multiple"
            else:
                kind = "breakaway" if np.sign(kr) * sl > 0 else "break-in"
        else:
            kind = "complex"
        bp = BreakPoint(s, kr, kind, int(mu) + 1)
        (pos if kr > 0 else neg).append(bp)
    key = lambda p: (p.gain if p.gain > 0 else -p.gain, p.s.real, -p.s.imag)  # noqa: E731
    return tuple(sorted(pos, key=key)), tuple(sorted(neg, key=key))


def _crossings(n, d):
    """Both signs' imaginary-axis crossings (the shared implementation): (positive, negative)."""
    every = axis_crossings_all(n, d)
    pos = sorted((c for c in every if c.gain > 0), key=lambda c: (c.gain, c.frequency))
    neg = sorted((c for c in every if c.gain < 0), key=lambda c: (-c.gain, c.frequency))
    return tuple(pos), tuple(neg)


def locus_facts(num, den) -> LocusFacts:
    """Every exact special point of the locus of ``den + K num``, both signs of ``K``.

    Parameters
    ----------
    num, den : array_like
        Loop polynomials, descending powers, ``deg num <= deg den``.

    Returns
    -------
    LocusFacts

    Raises
    ------
    InputError
        For a non-finite, empty, zero or improper loop.

    References
    ----------
    W. R. Evans, Trans. AIEE 69, 1950; K. Ogata, *Modern Control Engineering*
    (the construction rules); J. H. Wilkinson, 1963 (multiple roots).
    """
    n, d = loop_pair(num, den)
    rho = frequency_scale(n, d)
    ns, ds = scale_variable(n, rho), scale_variable(d, rho)
    kscale = float(np.max(np.abs(ds)) / np.max(np.abs(ns)))
    pz, pm = _roots_distinct(ds, 1.0)
    zz, zm = _roots_distinct(ns, 1.0)
    poles, zeros = pz * rho, zz * rho
    lead = float(n[0] / d[0])
    bpos, bneg = _breakaways(n, d, ns, ds, rho, kscale)
    cpos, cneg = _crossings(n, d)

    dep = _point_angles(poles, pm, zeros, zm, lead, rho)
    arr = _point_angles(zeros, zm, poles, pm, 1.0 / lead, rho)

    def side(negative: bool, brk, crs) -> SpecialPoints:
        return SpecialPoints(
            positive_gain=not negative,
            asymptotes=_asymptotes(n, d, negative),
            segments=_segments(n, d, poles, zeros, rho, negative),
            breakaways=brk,
            crossings=crs,
            departures=dep[1] if negative else dep[0],
            arrivals=arr[1] if negative else arr[0],
        )

    return LocusFacts(
        num=n,
        den=d,
        poles=poles,
        pole_mult=pm,
        zeros=zeros,
        zero_mult=zm,
        scale=rho,
        gain_scale=kscale,
        positive=side(False, bpos, cpos),
        negative=side(True, bneg, cneg),
    )


def special_points(num, den, negative: bool = False) -> SpecialPoints:
    """Special points of the ``K > 0`` locus (``K < 0`` with ``negative``); see :func:`locus_facts`."""
    return locus_facts(num, den).for_sign(negative)
