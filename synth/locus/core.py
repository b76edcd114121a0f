"""Core of the root-locus engine: batched closed-loop roots and exact gain intervals.

The loop is ``L(s) = K N(s) / D(s)`` under unity negative feedback, so the
closed-loop characteristic polynomial is ``D(s) + K N(s)``.  Gains may be any
real number (negative gains describe a reverse-acting controller).

Gain intervals are computed from the boundary crossings, not from a grid: a
closed-loop root can only leave a region at a gain for which some root lies on
the region's boundary, and on a straight line ``s = a + b t`` (t real) that
happens exactly when ``Im[D(s) conj(N(s))] = 0`` (then ``K = -D(s)/N(s)`` is
real).  That condition is a real polynomial in ``t``; its real roots give every
candidate boundary gain.  Between consecutive candidates membership cannot
change, so one root computation per sub-interval decides it.

References
----------
W. R. Evans, "Control system synthesis by root locus method", Trans. AIEE 69,
1950 (the locus and its angle/magnitude conditions).
E. J. Routh, *A Treatise on the Stability of a Given State of Motion*, 1877,
and A. Hurwitz, Math. Ann. 46, 1895 (stability ranges from the boundary gains).
"""

from __future__ import annotations

import numpy as np

from synth.locus.axis import crossings_scaled
from synth.numerics.poly import trim
from synth.numerics.scaling import EPS, LoopScaling, horner_error
from synth.numerics.screening import hurwitz_exact

#: the leading coefficient ``d0 + K n0`` is zero (the degree drops) when it is
#: below this many rounding errors of its own computation
_LEAD_ROUNDING = 4.0
#: a root whose distance to the region boundary is below this fraction of its
#: own size is "on the boundary" as far as double precision can tell
_MARGIN_RTOL = 1e-7
#: relative width under which a gain interval is narrower than the precision of its ends
MARGINAL_RTOL = 1e-9


def _pad(p: np.ndarray, n: int) -> np.ndarray:
    return np.concatenate([np.zeros(n - p.size, dtype=p.dtype), p])


def loop_polys(num, den) -> tuple[np.ndarray, np.ndarray]:
    """Trim (exact zeros only) and pad ``num`` and ``den`` to a common length."""
    n = trim(num)
    d = trim(den)
    size = max(n.size, d.size)
    return _pad(n, size), _pad(d, size)


def char_poly(num, den, gain) -> np.ndarray:
    """Characteristic polynomial(s) ``den + K num``; a 1-D gain array gives a 2-D batch."""
    n, d = loop_polys(num, den)
    k = np.asarray(gain, dtype=float)
    return d + k[..., None] * n


def roots_batch(polys: np.ndarray, degenerate: np.ndarray | None = None) -> np.ndarray:
    """Roots of every row of a batch of real polynomials of one nominal degree.

    Rows whose leading coefficient vanishes (``degenerate``; by default an exact
    zero) lose degree; the missing roots are returned as complex infinity so
    every row has the same number of entries. Uses batched companion-matrix
    eigenvalues (LAPACK balances each matrix). The rows should be scaled
    (see :mod:`synth.numerics.scaling`); :func:`closed_loop_roots` does that.
    """
    P = np.atleast_2d(np.asarray(polys, dtype=float))
    B, m = P.shape
    n = m - 1
    out = np.full((B, n), complex(np.inf, 0.0))
    if n == 0:
        return out
    full = P[:, 0] != 0.0 if degenerate is None else ~np.asarray(degenerate, dtype=bool)
    full &= np.all(np.isfinite(P), axis=1)
    if np.any(full):
        Q = P[full]
        C = np.zeros((Q.shape[0], n, n))
        C[:, 0, :] = -Q[:, 1:] / Q[:, :1]
        if n > 1:
            idx = np.arange(n - 1)
            C[:, idx + 1, idx] = 1.0
        out[full] = np.linalg.eigvals(C)
    for i in np.flatnonzero(~full):  # rare: only at the degree-drop gain
        row = P[i].copy()
        row[0] = 0.0
        if not np.all(np.isfinite(row)):
            continue
        r = np.roots(trim(row)) if np.any(row != 0) else np.zeros(0)
        out[i, : r.size] = r
    return out


def _scaled_loop(num, den):
    """``(scaling, ns, ds)``: the padded loop in balanced power-of-two scaled form."""
    n, d = loop_polys(num, den)
    sc = LoopScaling.for_loop(n, d)
    return sc, sc.num(n), sc.den(d)


def _roots_scaled(ns: np.ndarray, ds: np.ndarray, k: np.ndarray) -> np.ndarray:
    """Closed-loop roots of the scaled loop at scaled gains ``k``."""
    lead = ds[0] + k * ns[0]
    # the leading coefficient vanishes only by cancellation (equal degrees); it is
    # zero when below the rounding error of its own computation
    degenerate = np.abs(lead) <= _LEAD_ROUNDING * EPS * (abs(ds[0]) + np.abs(k * ns[0]))
    return roots_batch(ds + k[:, None] * ns, degenerate)


def closed_loop_roots(num, den, gains) -> np.ndarray:
    """Closed-loop roots of ``den + K num`` for every gain in ``gains``.

    Parameters
    ----------
    num, den : array_like
        Loop numerator and denominator (descending powers), ``deg num <= deg den``.
    gains : array_like
        Real gains, any sign.

    Returns
    -------
    ndarray, complex, shape (len(gains), deg den)
        Roots per gain, in no particular order (see :mod:`synth.locus.branches`
        for branch tracking).  Where the degree drops, the lost root is ``inf``.

    Notes
    -----
    The roots are computed on the power-of-two scaled loop
    (:class:`synth.numerics.scaling.LoopScaling`) and mapped back exactly.
    """
    g = np.atleast_1d(np.asarray(gains, dtype=float))
    sc, ns, ds = _scaled_loop(num, den)
    return sc.point_out(_roots_scaled(ns, ds, sc.gain_in(g)))


def gain_at(num, den, s):
    """The gain ``K = -D(s)/N(s)`` that puts a closed-loop root at ``s``.

    Parameters
    ----------
    num, den : array_like
        Loop polynomials (descending powers).
    s : complex or array_like of complex
        Points of the s-plane.

    Returns
    -------
    complex or ndarray of complex
        The gain (complex in general). ``s`` lies on the locus exactly when it
        is real. At a zero of ``N`` that is not a root of ``D`` it is complex
        infinity (no finite gain puts a root there); at a root common to both
        it is ``nan`` (every gain does).  Evaluated on the scaled loop, so
        large or small ``s`` neither overflow nor underflow needlessly.

    References
    ----------
    W. R. Evans, Trans. AIEE 69, 1950 (the magnitude condition).
    """
    sc, ns, ds = _scaled_loop(num, den)
    z = sc.point_in(s)
    with np.errstate(divide="ignore", invalid="ignore"):
        nv = np.polyval(ns, z)
        dv = np.polyval(ds, z)
        k = np.where(nv != 0, -(dv * sc.g0) / np.where(nv != 0, nv, 1.0),
                     np.where(dv != 0, complex(np.inf), complex(np.nan)))
    return complex(k) if np.ndim(k) == 0 else k


def compose_line(p, a: complex, b: complex) -> np.ndarray:
    """Coefficients in ``t`` of ``p(a + b t)`` (Horner with polynomial arithmetic)."""
    out = np.zeros(1, dtype=complex)
    lin = np.array([b, a], dtype=complex)
    for c in np.asarray(p, dtype=complex):
        out = np.polymul(out, lin)
        out[-1] += c
    return out


def _real_roots(p: np.ndarray, tol: float = 1e-6) -> np.ndarray:
    """Real roots of a real polynomial (relative tolerance on Im), polished by Newton steps."""
    p = trim(p)
    if p.size < 2:
        return np.zeros(0)
    r = np.roots(p)
    t = r[np.abs(r.imag) <= tol * np.abs(r)].real
    dp = np.polyder(p)
    for _ in range(3):
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.polyval(p, t) / np.polyval(dp, t)
        t = np.where(np.isfinite(step) & (np.abs(step) < 1e-3 * np.abs(t)), t - step, t)
    return np.unique(t)


def _line_crossings_scaled(ns, ds, a: complex, b: complex) -> tuple[np.ndarray, np.ndarray]:
    """Line crossings of a balanced loop: scaled gains and line parameters."""
    n, d = trim(ns), trim(ds)
    Nt = compose_line(n, a, b)
    Dt = compose_line(d, a, b)
    F = np.polymul(Dt, np.conj(Nt))
    f = F.imag
    # a coefficient of f below the rounding bound of its computation is zero
    bound = np.polymul(np.abs(Dt), np.abs(Nt)).real * (8.0 * F.size * EPS)
    f = np.where(np.abs(f) > bound, f, 0.0)
    if not np.any(f):
        # the whole line maps to real gains (symmetric case): the interval ends are
        # where K(t) is stationary along the line, plus t = 0
        g = np.polysub(np.polymul(Nt, np.polyder(Dt)), np.polymul(np.polyder(Nt), Dt)).real
        t = np.concatenate([_real_roots(g), [0.0]])
    else:
        t = _real_roots(f)
    s = a + b * t
    Ns = np.polyval(n, s)
    Ds = np.polyval(d, s)
    ok = np.abs(Ns) > 8.0 * horner_error(n, s)
    k = -(Ds[ok] / Ns[ok]).real
    return k, t[ok]


def line_crossing_gains(num, den, a: complex, b: complex) -> tuple[np.ndarray, np.ndarray]:
    """Real gains at which a root of ``den + K num`` lies on the line ``s = a + b t``.

    Computed on the scaled loop (``s = w0 z``, ``K = g0 k``); ``t`` is the
    parameter of the original line.

    Returns
    -------
    gains, t : ndarray
        Finite real gains and the line parameters of the crossing points.
    """
    sc, ns, ds = _scaled_loop(num, den)
    k, t = _line_crossings_scaled(ns, ds, complex(sc.point_in(a)), complex(sc.point_in(b)))
    return sc.gain_out(k), t


def _shift(p: np.ndarray, a: float) -> np.ndarray:
    """Coefficients of ``p(z - a)`` (Taylor shift by Horner's scheme)."""
    out = np.array(p[:1], dtype=float)  # a constant stays itself (a static loop)
    for c in p[1:]:
        out = np.polymul(out, [1.0, -a])
        out[-1] += c
    return _pad(out, p.size)


def _boundary_gains_scaled(ns, ds, region) -> np.ndarray:
    """Sorted scaled candidate gains at which membership of the (scaled) region may change."""
    sigma = 0.0 if region is None else float(region.sigma)
    zeta = 0.0 if region is None else float(region.zeta)
    if sigma > 0.0:
        # the line Re z = -sigma is the imaginary axis of the shifted loop
        cands = [np.array([k for _, k in crossings_scaled(_shift(ns, sigma), _shift(ds, sigma),
                                                          open_loop=True)])]
    else:
        cands = [np.array([k for _, k in crossings_scaled(ns, ds, open_loop=True)])]
    if zeta > 0.0:
        phi = np.arccos(zeta)
        # the line through the origin along the upper ray; the lower ray is its
        # mirror image, crossed at the same gains because the polynomial is real
        k, _ = _line_crossings_scaled(ns, ds, 0j, complex(np.cos(np.pi - phi), np.sin(np.pi - phi)))
        cands.append(k)
    if ns[0] != 0.0:  # equal degrees: a root passes through infinity here
        cands.append(np.array([-ds[0] / ns[0]]))
    k = np.concatenate(cands)
    k = k[np.isfinite(k)]
    if k.size == 0:
        return k
    k = np.sort(k)
    # merge candidates equal to working precision
    keep = np.concatenate([[True], np.diff(k) > 16.0 * EPS * np.abs(k[1:])])
    return k[keep]


def boundary_gains(num, den, region=None) -> np.ndarray:
    """Sorted candidate gains at which closed-loop membership of ``region`` may change."""
    sc, ns, ds = _scaled_loop(num, den)
    return sc.gain_out(_boundary_gains_scaled(ns, ds, sc.region_in(region)))


def _inside_scaled(ns, ds, k, region, strict: bool = False) -> np.ndarray:
    """Whether every closed-loop root is in the (scaled) region, per scaled gain.

    A root within ``_MARGIN_RTOL`` of its own size from the boundary cannot be
    placed by double precision.  For stability such rows are decided by an
    exact rational Routh test of the (rounded) characteristic polynomial; with
    ``strict`` (used at candidate gains, where a root sits on the boundary by
    construction) they are outside.
    """
    from synth.problem.region import Region

    reg = region if region is not None else Region()
    k = np.atleast_1d(np.asarray(k, dtype=float))
    r = _roots_scaled(ns, ds, k)
    if r.shape[1] == 0:
        return np.ones(k.size, dtype=bool)
    finite = np.isfinite(r)
    rr = np.where(finite, r, 0.0)
    margin = reg.margin(rr)
    size = np.maximum(np.abs(rr), float(reg.sigma))
    clear_in = np.all((margin > _MARGIN_RTOL * size) & finite, axis=1)
    clear_out = np.any((margin < -_MARGIN_RTOL * size) | ~finite, axis=1)
    out = clear_in.copy()
    if strict:
        return out
    unsure = ~clear_in & ~clear_out
    for i in np.flatnonzero(unsure):
        if reg.is_stability_only:
            out[i] = hurwitz_exact(ds + k[i] * ns)
        else:
            out[i] = bool(np.all(margin[i] > 0.0))
    return out


def _intervals_scaled(ns, ds, region) -> list[tuple[float | None, float | None]]:
    k = _boundary_gains_scaled(ns, ds, region)
    if k.size == 0:
        inside = bool(_inside_scaled(ns, ds, [0.0], region)[0])
        return [(None, None)] if inside else []
    width = np.maximum(1.0, np.abs(k))  # 1 is the loop's own gain scale here
    mids = np.concatenate([[k[0] - width[0]], 0.5 * (k[:-1] + k[1:]), [k[-1] + width[-1]]])
    seg_in = _inside_scaled(ns, ds, mids, region)
    at_k = _inside_scaled(ns, ds, k, region, strict=True)
    edges: list[float | None] = [None, *(float(x) + 0.0 for x in k), None]
    out: list[tuple[float | None, float | None]] = []
    i = 0
    while i < seg_in.size:
        if not seg_in[i]:
            i += 1
            continue
        j = i
        # a candidate that is itself clearly inside was spurious: join across it
        while j + 1 < seg_in.size and seg_in[j + 1] and at_k[j]:
            j += 1
        out.append((edges[i], edges[j + 1]))
        i = j + 1
    return out


def gain_intervals(num, den, region=None) -> list[tuple[float | None, float | None]]:
    """Open intervals of real gains for which every closed-loop root is inside ``region``.

    Parameters
    ----------
    num, den : array_like
        Loop polynomials.
    region : Region, optional
        Defaults to the open left half-plane (stability).

    Returns
    -------
    list of (lo, hi)
        Sorted, disjoint open intervals; ``None`` marks an unbounded end.

    Notes
    -----
    Computed on the power-of-two scaled loop (exact scaling, so the ends are
    the original gains to rounding), from the boundary crossings; a gain
    between two candidates whose roots double precision cannot place is
    decided by an exact rational Routh test (stability).

    References
    ----------
    E. J. Routh, 1877; A. Hurwitz, 1895; J. H. Wilkinson, *Rounding Errors in
    Algebraic Processes*, 1963 (scaling by powers of the radix).
    """
    sc, ns, ds = _scaled_loop(num, den)
    ivs = _intervals_scaled(ns, ds, sc.region_in(region))

    def back(x):
        return None if x is None else float(sc.gain_out(x)) + 0.0

    return [(back(a), back(b)) for a, b in ivs]


def marginal_intervals(intervals, rtol: float = MARGINAL_RTOL) -> list[tuple[float | None, float | None]]:
    """The intervals of ``intervals`` narrower than the precision of their ends.

    An interval ``(lo, hi)`` with ``hi - lo <= rtol * max(|lo|, |hi|)`` may be
    an artefact of rounding (or hide one that rounding closed): a result a
    user should not rely on without exact arithmetic.
    """
    out = []
    for lo, hi in intervals:
        if lo is not None and hi is not None and hi - lo <= rtol * max(abs(lo), abs(hi)):
            out.append((lo, hi))
    return out


def stable_gain_intervals(num, den) -> list[tuple[float | None, float | None]]:
    """Open intervals of real gains for which ``den + K num`` is Hurwitz (exact)."""
    return gain_intervals(num, den, None)


def region_gain_intervals(num, den, region) -> list[tuple[float | None, float | None]]:
    """Open intervals of real gains that put every closed-loop root inside ``region`` (exact)."""
    return gain_intervals(num, den, region)


def interval_containing(intervals, x: float) -> tuple[float | None, float | None] | None:
    """The interval of ``intervals`` that contains ``x``, or ``None``."""
    for lo, hi in intervals:
        if (lo is None or lo < x) and (hi is None or x < hi):
            return (lo, hi)
    return None
