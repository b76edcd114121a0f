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

from synth.numerics.poly import trim

#: relative size under which a characteristic polynomial's leading coefficient counts as zero
_LEAD_RTOL = 1e-12


def _pad(p: np.ndarray, n: int) -> np.ndarray:
    return np.concatenate([np.zeros(n - p.size, dtype=p.dtype), p])


def loop_polys(num, den) -> tuple[np.ndarray, np.ndarray]:
    """Trim and pad ``num`` and ``den`` to a common length (``den`` degree rules)."""
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
    eigenvalues (LAPACK balances each matrix).
    """
    P = np.atleast_2d(np.asarray(polys, dtype=float))
    B, m = P.shape
    n = m - 1
    out = np.full((B, n), complex(np.inf, 0.0))
    if n == 0:
        return out
    full = P[:, 0] != 0.0 if degenerate is None else ~np.asarray(degenerate, dtype=bool)
    if np.any(full):
        Q = P[full]
        C = np.zeros((Q.shape[0], n, n))
        C[:, 0, :] = -Q[:, 1:] / Q[:, :1]
        if n > 1:
            idx = np.arange(n - 1)
            C[:, idx + 1, idx] = 1.0
        out[full] = np.linalg.eigvals(C)
    for i in np.flatnonzero(~full):  # rare: only at the degree-drop gain
        r = np.roots(trim(P[i])) if np.any(P[i] != 0) else np.zeros(0)
        out[i, : r.size] = r
    return out


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
    """
    g = np.atleast_1d(np.asarray(gains, dtype=float))
    n, d = loop_polys(num, den)
    # the leading coefficient d0 + K n0 vanishes only by cancellation (equal degrees)
    lead = d[0] + g * n[0]
    degenerate = np.abs(lead) <= _LEAD_RTOL * (abs(d[0]) + np.abs(g * n[0]))
    return roots_batch(d + g[:, None] * n, degenerate)


def gain_at(num, den, s) -> np.ndarray:
    """The gain ``K = -D(s)/N(s)`` that puts a closed-loop root at ``s``.

    The value is complex in general; ``s`` is on the locus exactly when it is real.
    """
    s = np.asarray(s, dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        return -np.polyval(trim(den), s) / np.polyval(trim(num), s)


def compose_line(p, a: complex, b: complex) -> np.ndarray:
    """Coefficients in ``t`` of ``p(a + b t)`` (Horner with polynomial arithmetic)."""
    out = np.zeros(1, dtype=complex)
    lin = np.array([b, a], dtype=complex)
    for c in np.asarray(p, dtype=complex):
        out = np.polymul(out, lin)
        out[-1] += c
    return out


def _real_roots(p: np.ndarray, tol: float = 1e-6) -> np.ndarray:
    """Real roots of a real polynomial, polished by Newton steps."""
    p = trim(p)
    if p.size < 2:
        return np.zeros(0)
    r = np.roots(p)
    scale = np.maximum(1.0, np.abs(r))
    t = r[np.abs(r.imag) <= tol * scale].real
    dp = np.polyder(p)
    for _ in range(3):
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.polyval(p, t) / np.polyval(dp, t)
        t = np.where(np.isfinite(step) & (np.abs(step) < 1e-3 * np.maximum(1, np.abs(t))), t - step, t)
    return np.unique(t)


def line_crossing_gains(num, den, a: complex, b: complex) -> tuple[np.ndarray, np.ndarray]:
    """Real gains at which a root of ``den + K num`` lies on the line ``s = a + b t``.

    Returns
    -------
    gains, t : ndarray
        Finite real gains and the line parameters of the crossing points.
    """
    n, d = trim(num), trim(den)
    Nt = compose_line(n, a, b)
    Dt = compose_line(d, a, b)
    F = np.polymul(Dt, np.conj(Nt))
    f = F.imag
    scale = np.max(np.abs(F)) if F.size else 1.0
    if np.max(np.abs(f), initial=0.0) <= 1e-12 * scale:
        # the whole line maps to real gains (symmetric case): the interval ends are
        # where K(t) is stationary along the line, plus t = 0
        g = np.polysub(np.polymul(Nt, np.polyder(Dt)), np.polymul(np.polyder(Nt), Dt)).real
        t = np.concatenate([_real_roots(g), [0.0]])
    else:
        t = _real_roots(f)
    s = a + b * t
    Ns = np.polyval(n, s)
    Ds = np.polyval(d, s)
    ok = np.abs(Ns) > 1e-12 * np.maximum(1.0, np.abs(Ds))
    k = -(Ds[ok] / Ns[ok]).real
    return k, t[ok]


def _boundary_lines(region) -> list[tuple[complex, complex]]:
    """Lines whose union contains the region boundary."""
    sigma = 0.0 if region is None else float(region.sigma)
    zeta = 0.0 if region is None else float(region.zeta)
    lines = [(complex(-sigma, 0.0), 1j)]
    if zeta > 0.0:
        phi = np.arccos(zeta)
        # the line through the origin along the upper ray; the lower ray is its
        # mirror image, crossed at the same gains because the polynomial is real
        lines.append((0j, complex(np.cos(np.pi - phi), np.sin(np.pi - phi))))
    return lines


def _inside(num, den, gains, region) -> np.ndarray:
    from synth.problem.region import Region

    reg = region if region is not None else Region()
    return reg.contains(closed_loop_roots(num, den, gains))


def boundary_gains(num, den, region=None) -> np.ndarray:
    """Sorted candidate gains at which closed-loop membership of ``region`` may change."""
    n, d = loop_polys(num, den)
    cands = []
    for a, b in _boundary_lines(region):
        k, _ = line_crossing_gains(n, d, a, b)
        cands.append(k)
    if n[0] != 0.0:  # equal degrees: a root passes through infinity here
        cands.append(np.array([-d[0] / n[0]]))
    k = np.concatenate(cands) if cands else np.zeros(0)
    k = k[np.isfinite(k)]
    if k.size == 0:
        return k
    # a crossing at a pole on the boundary has K = 0 up to rounding: make it exact
    k_scale = np.max(np.abs(d)) / max(np.max(np.abs(n)), 1e-300)
    k = np.where(np.abs(k) <= 1e-12 * k_scale, 0.0, k)
    k = np.sort(k)
    # merge numerically coincident candidates
    keep = np.concatenate([[True], np.diff(k) > 1e-12 * np.maximum(1.0, np.abs(k[1:]))])
    return k[keep]


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
    """
    n, d = loop_polys(num, den)
    k = boundary_gains(n, d, region)
    if k.size == 0:
        inside = bool(_inside(n, d, [0.0], region)[0])
        return [(None, None)] if inside else []
    width = np.maximum(1.0, np.abs(k))
    mids = np.concatenate([[k[0] - width[0]], 0.5 * (k[:-1] + k[1:]), [k[-1] + width[-1]]])
    tests = np.concatenate([mids, k])
    flags = _inside(n, d, tests, region)
    seg_in = flags[: mids.size]
    at_k = flags[mids.size:]
    edges: list[float | None] = [None, *(float(x) + 0.0 for x in k), None]
    out: list[tuple[float | None, float | None]] = []
    i = 0
    while i < seg_in.size:
        if not seg_in[i]:
            i += 1
            continue
        j = i
        # a candidate that is itself inside was spurious: join across it
        while j + 1 < seg_in.size and seg_in[j + 1] and at_k[j]:
            j += 1
        out.append((edges[i], edges[j + 1]))
        i = j + 1
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
