"""Imaginary-axis crossings of the locus of ``D(s) + K N(s)``: the one implementation.

``synth trace`` (special points), ``synth explain`` (reasons and JSON) and the
exact gain intervals (boundary gains of the stability region) all use
:func:`axis_crossings_all`, so they cannot disagree.

A closed-loop root sits at ``s = j w`` for a real gain exactly when
``Im[D(jw) conj N(jw)] = 0`` (then ``K = -D(jw)/N(jw)`` is real).  That
function is odd in ``w``, ``w Q(w^2)``, so ``w = 0`` is tested directly and the
positive real roots of ``Q`` (in ``u = w^2``) give every other crossing once,
with ``w > 0`` (the conjugate root at ``-j w`` is implied).

Convention on ``K = 0``.  Open-loop poles on the imaginary axis are roots of
the closed loop at ``K = 0``.  They are *not* crossings of the locus for a
gain of either sign, so the public lists (``trace``'s special points for
positive gains, ``explain``'s ``imaginary_axis_crossings``) leave them out;
``explain`` names them as plant facts (``imaginary_axis_poles``).  The gain
intervals need them as boundary gains and ask for them with
``open_loop=True``.

Numerics.  Everything runs on the power-of-two scaled loop of
:class:`synth.numerics.scaling.LoopScaling`; ``Q`` is trimmed only of leading
coefficients below their own rounding-error bound, candidate roots are
polished by Newton steps on ``Im[D(jw) conj N(jw)]`` evaluated from ``D`` and
``N`` directly (not from ``Q``'s rounded coefficients), and the tests "is
``N(jw)`` zero", "is ``D(jw)`` zero" compare with Horner's running error bound
rather than a fixed number.

References
----------
.. [1] E. J. Routh, *A Treatise on the Stability of a Given State of Motion*,
   1877, and A. Hurwitz, Math. Ann. 46, 1895 (the crossing gains bound the
   stable gain ranges).
.. [2] K. Ogata, *Modern Control Engineering*, Prentice Hall (axis crossings
   as a construction rule of the root locus).
.. [3] N. J. Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd
   ed., SIAM, 2002, sec. 5.1 (error bound of Horner's rule).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.numerics.scaling import EPS, LoopScaling, horner_error

#: a computed root u of Q counts as real when |Im u| is below this fraction of |u|
#: (a double root, a tangential touch, is split by about sqrt(eps))
_REAL_RTOL = 1e-6
#: a crossing gain counts as real when |Im K| is below this fraction of |K|
_IMAG_K_RTOL = 1e-6
#: how many rounding-error bounds a value must exceed to count as non-zero
_ZERO_BOUNDS = 8.0


@dataclass(frozen=True)
class AxisCrossing:
    """A closed-loop root on the imaginary axis at ``s = j * frequency``.

    Attributes
    ----------
    frequency : float
        ``w >= 0`` in rad/s (the conjugate crossing at ``-j w`` is implied).
    gain : float
        The gain at which it happens (exactly 0 for an open-loop axis pole).
    toward_right : bool or None
        True when the root moves into the right half-plane as ``|K|`` grows
        past ``gain``, False when it moves back into the left half-plane,
        None when the motion is tangent to the axis (or at ``K = 0``).
    """

    frequency: float
    gain: float
    toward_right: bool | None = None

    def to_json(self) -> dict:
        direction = {True: "into the right half-plane", False: "into the left half-plane",
                     None: "tangent to the axis"}[self.toward_right]
        return {"frequency": self.frequency, "gain": self.gain, "direction": direction}


def _jw_parts(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Ascending coefficients (in w) of Re p(jw) and Im p(jw)."""
    asc = p[::-1].astype(float)
    k = np.arange(asc.size)
    re = np.where(k % 4 == 0, asc, np.where(k % 4 == 2, -asc, 0.0))
    im = np.where(k % 4 == 1, asc, np.where(k % 4 == 3, -asc, 0.0))
    return re, im


def _q_poly(ns: np.ndarray, ds: np.ndarray) -> np.ndarray:
    """``Q`` (descending in ``u = w^2``) with ``Im[D(jw) conj N(jw)] = w Q(w^2)``.

    Leading coefficients below their own rounding-error bound are dropped (they
    are computed sums whose true value may be zero); an empty result means the
    whole axis maps to real gains.
    """
    dr, di = _jw_parts(ds)
    nr, ni = _jw_parts(ns)
    size = max(dr.size + nr.size - 1, 1)
    p = np.zeros(size)
    bound = np.zeros(size)
    for x, y, sgn in ((di, nr, 1.0), (dr, ni, -1.0)):
        c = np.convolve(x, y)
        p[: c.size] += sgn * c
        bound[: c.size] += np.convolve(np.abs(x), np.abs(y))
    q = p[1::2][::-1]
    qb = bound[1::2][::-1] * (_ZERO_BOUNDS * size * EPS)
    keep = np.flatnonzero(np.abs(q) > qb)
    return q[keep[0]:] if keep.size else np.zeros(0)


def _im_f(ns, ds, w):
    """``F(w) = Im[D(jw) conj N(jw)]`` and ``F'(w)``, from D and N directly."""
    s = 1j * w
    dv, nv = np.polyval(ds, s), np.polyval(ns, s)
    dd, nd = np.polyval(np.polyder(ds), s), np.polyval(np.polyder(ns), s)
    f = (dv * np.conj(nv)).imag
    # d/dw: D'(jw) j conj N + D conj(N'(jw) j)
    fp = (1j * dd * np.conj(nv) - 1j * dv * np.conj(nd)).imag
    return f, fp


def _polish(ns, ds, w: float, steps: int = 4) -> float:
    """Newton steps on ``F(w)``, each kept only when it lowers ``|F|`` and stays close."""
    if ds.size < 2:
        return w
    f, fp = _im_f(ns, ds, w)
    for _ in range(steps):
        if fp == 0.0 or not math.isfinite(fp):
            break
        step = f / fp
        wn = w - step
        if not (wn > 0.0 and abs(step) < 1e-3 * w):
            break
        fn, fpn = _im_f(ns, ds, wn)
        if abs(fn) >= abs(f):
            break
        w, f, fp = wn, fn, fpn
    return float(w)


def _direction(ns, ds, s: complex, k: float) -> bool | None:
    """Whether the root at ``s`` moves right as ``|K|`` grows past ``k`` (None: tangent)."""
    # ds/dK = -N / (D' + K N'); moving with |K| growing flips with sign(K)
    with np.errstate(all="ignore"):
        v = -np.polyval(ns, s) / (np.polyval(np.polyder(ds), s) + k * np.polyval(np.polyder(ns), s))
    if not np.isfinite(v) or k == 0.0:
        return None
    re = float(v.real) * np.sign(k)
    if abs(re) <= 1e-9 * abs(v):
        return None
    return bool(re > 0)


def crossings_scaled(ns: np.ndarray, ds: np.ndarray, open_loop: bool = False) -> list[tuple[float, float]]:
    """Crossings ``(w, k)`` of a balanced loop ``ds + k ns`` (scaled units), ``w >= 0``.

    ``open_loop`` adds the roots of ``ds`` on the axis at ``k = 0``.  No
    tolerance here is absolute: each is relative to a root, a gain or a
    rounding-error bound.
    """
    out: list[tuple[float, float]] = []
    # w = 0: a real root at the origin for K = -D(0)/N(0)
    d0, n0 = float(ds[-1]), float(ns[-1])
    if n0 != 0.0:
        k = -d0 / n0
        if k != 0.0 or open_loop:
            out.append((0.0, k + 0.0))
    elif d0 == 0.0 and open_loop:
        out.append((0.0, 0.0))  # a root at the origin for every gain (common factor s)
    q = _q_poly(ns, ds)
    if q.size >= 2:
        u = np.roots(q)
        au = np.abs(u)
        good = (u.real > 0) & (np.abs(u.imag) <= _REAL_RTOL * au)
        for uu in np.unique(u[good].real):
            w = _polish(ns, ds, math.sqrt(uu))
            jw = 1j * w
            nv, dv = np.polyval(ns, jw), np.polyval(ds, jw)
            en, ed = float(horner_error(ns, jw)), float(horner_error(ds, jw))
            # how far w may be from the exact crossing: rounding of F over its slope
            _, fp = _im_f(ns, ds, w)
            dw = (abs(nv) * ed + abs(dv) * en) / abs(fp) if fp != 0.0 else math.inf
            dw = min(dw, w)
            # "N(jw) = 0" and "D(jw) = 0" to the precision with which w is known
            n_zero = abs(nv) <= _ZERO_BOUNDS * (en + abs(np.polyval(np.polyder(ns), jw)) * dw)
            d_zero = abs(dv) <= _ZERO_BOUNDS * (ed + abs(np.polyval(np.polyder(ds), jw)) * dw)
            if n_zero:
                continue  # a zero on the axis (K infinite), or a root common to D and N
            if d_zero:
                if open_loop:
                    out.append((w, 0.0))
                continue
            k = -dv / nv
            if abs(k.imag) > _IMAG_K_RTOL * abs(k):
                continue  # rounding: not a real gain
            out.append((w, float(k.real) + 0.0))
    # one entry per crossing: numerically coincident ones merge
    out.sort(key=lambda c: (c[1], c[0]))
    merged: list[tuple[float, float]] = []
    for w, k in out:
        if merged and abs(merged[-1][1] - k) <= 1e-9 * abs(k) and \
                abs(merged[-1][0] - w) <= 1e-9 * max(w, merged[-1][0]):
            continue
        merged.append((w, k))
    return merged


def axis_crossings_all(num, den, open_loop: bool = False) -> tuple[AxisCrossing, ...]:
    """Every imaginary-axis crossing of the locus of ``den + K num``, gains of both signs.

    Parameters
    ----------
    num, den : array_like
        Loop polynomials, descending powers (leading zeros are exact zeros).
    open_loop : bool
        Also list the open-loop poles on the axis, at ``K = 0`` (see the
        module notes); off for the public lists.

    Returns
    -------
    tuple of AxisCrossing
        Sorted by gain, then frequency; each crossing once with ``w >= 0``.

    References
    ----------
    E. J. Routh (1877), A. Hurwitz (1895); K. Ogata, *Modern Control Engineering*.
    """
    n = np.trim_zeros(np.atleast_1d(np.asarray(num, dtype=float)), "f")
    d = np.trim_zeros(np.atleast_1d(np.asarray(den, dtype=float)), "f")
    if n.size == 0 or d.size < 2:
        return ()
    sc = LoopScaling.for_loop(n, d)
    ns, ds = sc.num(n), sc.den(d)
    out = []
    for w, k in crossings_scaled(ns, ds, open_loop):
        out.append(AxisCrossing(float(sc.frequency_out(w)) + 0.0, float(sc.gain_out(k)) + 0.0,
                                _direction(ns, ds, 1j * w, k)))
    return tuple(out)
