"""Adaptive gain grid for tracing a root locus.

The grid starts log-spaced in ``|K|`` over a span chosen from the loop itself
(small enough that every root is still next to its pole, large enough that
the infinite branches are far out along their asymptotes and the finite ones
next to their zeros), with ``K = 0`` and every special-point gain inserted
exactly.  It is then refined in rounds: an interval between two samples is
split when the root sets of its ends differ by more than a tolerance (the
Hausdorff distance in the chordal metric of the locus frame, so far-out tails
are judged relative to their size).  Each round computes the roots of all new
samples in one batch: simultaneous Aberth-Ehrlich iterations started from the
neighbouring sample's roots moved along the locus tangent ``ds/dK``, with
batched companion-matrix eigenvalues as the fallback for any row that does
not converge cleanly.

References
----------
O. Aberth, "Iteration methods for finding all zeros of a polynomial
simultaneously", Math. Comp. 27, 1973; L. W. Ehrlich, Comm. ACM 10, 1967.
E. L. Allgower and K. Georg, *Numerical Continuation Methods*, Springer, 1990
(predictor-corrector continuation along a parameter).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.locus.branches import chordal_distance
from synth.locus.special import LocusFacts, SpecialPoints, locus_facts

#: Hausdorff step (chordal, in the locus frame) above which an interval is split
DEFAULT_TOL = 0.04


@dataclass(frozen=True, eq=False)
class GainGrid:
    """Gain samples and the closed-loop roots at each (rows unordered).

    Attributes
    ----------
    gains : ndarray, shape (G,)
        Sorted by ``|K|``, starting at 0; all of one sign.
    roots : ndarray, complex, shape (G, n)
        Roots of ``den + K num`` per sample, in no particular order.
    center, scale : complex, float
        The locus frame used for the distances (middle and half-size of the
        region holding the poles, zeros and special points).
    rounds : int
        Refinement rounds that ran.
    """

    gains: np.ndarray
    roots: np.ndarray
    center: complex
    scale: float
    rounds: int


def locus_frame(facts: LocusFacts, points: SpecialPoints) -> tuple[complex, float]:
    """Center and half-size of the box holding poles, zeros and special points."""
    pts = [facts.poles, facts.zeros]
    pts.append(np.array([b.s for b in points.breakaways], dtype=complex))
    w = np.array([c.frequency for c in points.crossings], dtype=float)
    pts.append(np.concatenate([1j * w, -1j * w]))
    if points.asymptotes.centroid is not None:
        pts.append(np.array([points.asymptotes.centroid], dtype=complex))
    z = np.concatenate(pts)
    z = z[np.isfinite(z)]
    if z.size == 0:
        return 0j, 1.0
    lo_r, hi_r = float(z.real.min()), float(z.real.max())
    hi_i = float(np.abs(z.imag).max())
    half = max(0.5 * (hi_r - lo_r), hi_i)
    if half <= 1e-9 * max(abs(lo_r), abs(hi_r)) or half == 0.0:
        half = facts.scale  # a single point: use the loop's own scale
    return complex(0.5 * (lo_r + hi_r), 0.0), half


def gain_span(facts: LocusFacts, points: SpecialPoints, scale: float, center: complex,
              k_max: float | None = None) -> tuple[float, float]:
    """Smallest and largest ``|K|`` worth sampling.

    ``k_lo`` leaves every root within 1 % of the frame of its pole
    (``|s - p|^r ~ |K N(p) / c_p|``); ``k_hi`` puts the asymptotic roots at
    about six frame sizes from the centroid (``|s|^(n-m) ~ |K n0/d0|``) and the
    others within 1 % of their zeros; both are widened to bracket every
    special-point gain by a factor of ten.
    """
    n, d = facts.num, facts.den
    every = np.concatenate([facts.poles, facts.zeros])

    def local(x: complex) -> float:
        # 1 % of the frame, or of the gap to the nearest other pole or zero
        gaps = np.abs(every - x)
        gaps = gaps[gaps > 1e-12 * max(abs(x), scale)]
        return 0.01 * min(scale, float(gaps.min()) if gaps.size else scale)

    lows: list[float] = []
    for k, (p, r) in enumerate(zip(facts.poles, facts.pole_mult, strict=True)):
        others = np.delete(facts.poles, k)
        om = np.delete(facts.pole_mult, k)
        near = local(p)
        with np.errstate(divide="ignore"):
            log_c = math.log(abs(d[0])) + float(np.sum(om * np.log(np.abs(p - others))))
            nabs = abs(np.polyval(n, p))
        if nabs > 0 and np.isfinite(log_c):
            lows.append(math.exp(min(log_c + r * math.log(near) - math.log(nabs), 700.0)))
    highs: list[float] = []
    excess = d.size - n.size
    if excess > 0:
        centroid = points.asymptotes.centroid or 0.0
        radius = 6.0 * scale + abs(centroid - center.real)
        highs.append(abs(d[0] / n[0]) * radius**excess)
    for k, (z, r) in enumerate(zip(facts.zeros, facts.zero_mult, strict=True)):
        others = np.delete(facts.zeros, k)
        om = np.delete(facts.zero_mult, k)
        near = local(z)
        with np.errstate(divide="ignore"):
            log_c = math.log(abs(n[0])) + float(np.sum(om * np.log(np.abs(z - others))))
            dabs = abs(np.polyval(d, z))
        if dabs > 0 and np.isfinite(log_c):
            highs.append(math.exp(min(math.log(dabs) - log_c - r * math.log(near), 700.0)))
    special = np.abs(points.gains())
    special = special[special > 0]
    k_lo = min(lows) if lows else facts.gain_scale * 1e-4
    k_hi = max(highs) if highs else facts.gain_scale * 1e4
    if special.size:
        k_lo = min(k_lo, 0.1 * float(special.min()))
        k_hi = max(k_hi, 10.0 * float(special.max()))
    if k_max is not None:
        k_hi = float(k_max)
        k_lo = min(k_lo, k_hi * 1e-3)
    k_lo = max(k_lo, k_hi * 1e-14)
    return k_lo, k_hi


def batch_roots(num, den, gains) -> np.ndarray:
    """Roots of ``den + K num`` for every gain by batched companion eigenvalues.

    The degree drops only where ``d0 + K n0`` vanishes (equal degrees); the lost
    root is then ``inf``.  For ``deg num < deg den`` the leading coefficient is
    ``d0`` whatever the gain, so large gains keep every root.
    """
    n = np.asarray(num, dtype=float)
    d = np.asarray(den, dtype=float)
    k = np.atleast_1d(np.asarray(gains, dtype=float))
    npad = np.concatenate([np.zeros(d.size - n.size), n])
    polys = d[None, :] + k[:, None] * npad[None, :]
    deg = d.size - 1
    out = np.full((k.size, deg), complex(np.inf))
    full = np.abs(polys[:, 0]) > 1e-13 * (abs(d[0]) + np.abs(k * npad[0]))
    if np.any(full):
        q = polys[full]
        comp = np.zeros((q.shape[0], deg, deg))
        comp[:, 0, :] = -q[:, 1:] / q[:, :1]
        idx = np.arange(deg - 1)
        comp[:, idx + 1, idx] = 1.0
        out[full] = np.linalg.eigvals(comp)
    for i in np.flatnonzero(~full):  # only at the degree-drop gain itself
        p = np.trim_zeros(np.where(np.abs(polys[i]) > 1e-13 * np.max(np.abs(polys[i])), polys[i], 0.0), "f")
        r = np.roots(p) if p.size > 1 else np.zeros(0)
        out[i, : r.size] = r
    return out


def _horner(p: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Row-wise polynomial values: ``p`` (B, m+1), ``z`` (B, n)."""
    out = np.broadcast_to(p[:, :1], z.shape).astype(complex)
    for j in range(1, p.shape[1]):
        out = out * z + p[:, j : j + 1]
    return out


def aberth_roots(polys, init, maxit: int = 6, rtol: float = 1e-10) -> tuple[np.ndarray, np.ndarray]:
    """Simultaneous Aberth-Ehrlich iterations on a batch of polynomials.

    Parameters
    ----------
    polys : ndarray, shape (B, n + 1)
        Real polynomials with nonzero leading coefficients.
    init : ndarray, complex, shape (B, n)
        Starting points (distinct within a row).
    maxit : int
        Iteration limit; with good starting points simple roots converge in
        three or four, and rows that need more (near a multiple root) are
        better served by the eigenvalue fallback.
    rtol : float
        Convergence: every correction below ``rtol`` times the root size (the
        iteration converges cubically near simple roots, so the error after
        that last correction is at rounding level).

    Returns
    -------
    roots : ndarray, complex, shape (B, n)
    ok : ndarray of bool, shape (B,)
        Rows that converged and pass the check ``sum(roots) = -p1/p0``.

    References
    ----------
    O. Aberth, Math. Comp. 27, 1973.
    """
    P = np.asarray(polys, dtype=float)
    z = np.array(init, dtype=complex)
    b, n = z.shape
    if b == 0 or n == 0:
        return z, np.ones(b, dtype=bool)
    P = P / P[:, :1]
    dP = P[:, :-1] * np.arange(n, 0, -1, dtype=float)
    size = np.max(np.abs(z), axis=1, keepdims=True) + 1e-300
    done = np.zeros(b, dtype=bool)
    eye = np.eye(n, dtype=bool)
    active = np.arange(b)
    for _ in range(maxit):
        za = z[active]
        with np.errstate(all="ignore"):
            ratio = _horner(P[active], za) / _horner(dP[active], za)
            diff = za[:, :, None] - za[:, None, :]
            diff[:, eye] = np.inf
            rep = np.sum(1.0 / diff, axis=2)
            w = ratio / (1.0 - ratio * rep)
        bad = ~np.all(np.isfinite(w), axis=1)
        w[bad] = 0.0
        za = za - w
        z[active] = za
        conv = np.all(np.abs(w) <= rtol * np.maximum(np.abs(za), 1e-3 * size[active]), axis=1)
        done[active[conv & ~bad]] = True
        keep = ~conv & ~bad
        active = active[keep]
        if active.size == 0:
            break
    total = np.sum(z, axis=1)
    vieta = np.abs(total + P[:, 1]) <= 1e-9 * (np.sum(np.abs(z), axis=1) + 1e-300)
    distinct = np.ones(b, dtype=bool)
    if n > 1:
        gap = np.abs(z[:, :, None] - z[:, None, :])
        gap[:, eye] = np.inf
        distinct = np.min(gap.reshape(b, -1), axis=1) > 1e-7 * size[:, 0]
    ok = done & vieta & distinct & np.all(np.isfinite(z), axis=1)
    return z, ok


def continued_roots(num, den, gains, from_gains, from_roots) -> np.ndarray:
    """Roots of ``den + K num`` at ``gains``, continued from known roots at ``from_gains``.

    A tangent predictor (``ds/dK = -N(s) / (D'(s) + K N'(s))``, each move capped
    at a third of the gap to the nearest other root) feeds Aberth iterations;
    rows that fail, and rows whose degree drops, use batched eigenvalues.
    """
    n = np.asarray(num, dtype=float)
    d = np.asarray(den, dtype=float)
    k = np.asarray(gains, dtype=float)
    k0 = np.asarray(from_gains, dtype=float)
    s0 = np.asarray(from_roots, dtype=complex)
    npad = np.concatenate([np.zeros(d.size - n.size), n])
    polys = d[None, :] + k[:, None] * npad[None, :]
    out = np.empty(s0.shape, dtype=complex)
    lead = np.abs(polys[:, 0]) > 1e-9 * (abs(d[0]) + np.abs(k * npad[0]))
    finite = np.all(np.isfinite(s0), axis=1)
    use = lead & finite
    if np.any(use):
        s = s0[use]
        with np.errstate(all="ignore"):
            dd, dn = np.polyder(d), np.polyder(n) if n.size > 1 else np.zeros(1)
            v = -np.polyval(n, s) / (np.polyval(dd, s) + k0[use, None] * np.polyval(dn, s))
            move = v * (k[use] - k0[use])[:, None]
            if s.shape[1] > 1:
                gap = np.abs(s[:, :, None] - s[:, None, :])
                gap[:, np.eye(s.shape[1], dtype=bool)] = np.inf
                cap = np.min(gap, axis=2) / 3.0
            else:
                cap = np.abs(s) + 1.0
            mag = np.abs(move)
            move = np.where(np.isfinite(move), move * np.minimum(1.0, cap / np.maximum(mag, 1e-300)), 0)
        guess = s + move
        # break ties (e.g. a multiple pole) so the iteration can separate the roots
        spread = 1e-6 * (np.max(np.abs(guess), axis=1, keepdims=True) + 1e-12)
        guess = guess + spread * np.exp(1j * (0.7 + 2.0 * np.pi * np.arange(s.shape[1]) / s.shape[1]))
        z, ok = aberth_roots(polys[use], guess)
        idx = np.flatnonzero(use)
        out[idx[ok]] = z[ok]
        use[idx[~ok]] = False
    if np.any(~use):
        out[~use] = batch_roots(n, d, k[~use])
    return out


def _hausdorff(roots: np.ndarray, center: complex, scale: float) -> np.ndarray:
    """Chordal Hausdorff distance between consecutive rows."""
    cost = chordal_distance(roots[:-1, :, None], roots[1:, None, :], center, scale)
    return np.maximum(cost.min(axis=2).max(axis=1), cost.min(axis=1).max(axis=1))


def adaptive_grid(
    num,
    den,
    negative: bool = False,
    facts: LocusFacts | None = None,
    extra_gains=(),
    k_max: float | None = None,
    tol: float = DEFAULT_TOL,
    per_decade: int = 5,
    rounds: int = 10,
    max_points: int = 1500,
) -> GainGrid:
    """Adaptive gain samples and closed-loop roots for the ``K >= 0`` (or ``K <= 0``) locus.

    Parameters
    ----------
    num, den : array_like
        Loop polynomials.
    negative : bool
        Sample ``K <= 0`` instead of ``K >= 0``.
    facts : LocusFacts, optional
        Precomputed :func:`synth.locus.special.locus_facts` (saves work).
    extra_gains : iterable of float
        More gains to include exactly (e.g. gain-interval ends); those of the
        wrong sign are ignored.
    k_max : float, optional
        Largest ``|K|`` to sample (default: from :func:`gain_span`).
    tol : float
        Refinement threshold (chordal Hausdorff distance between neighbours).
    per_decade : int
        Initial samples per decade of ``|K|``.
    rounds : int
        At most this many refinement rounds (one batched root computation each).
    max_points : int
        Stop refining at this many samples.

    Returns
    -------
    GainGrid

    References
    ----------
    O. Aberth, Math. Comp. 27, 1973; E. L. Allgower and K. Georg, 1990.
    """
    if facts is None:
        facts = locus_facts(num, den)
    n, d = facts.num, facts.den
    pts = facts.for_sign(negative)
    center, scale = locus_frame(facts, pts)
    k_lo, k_hi = gain_span(facts, pts, scale, center, k_max)
    sign = -1.0 if negative else 1.0
    decades = math.log10(k_hi / k_lo)
    count = int(min(max(per_decade * decades, 24), 160))
    mags = np.concatenate([[0.0], np.geomspace(k_lo, k_hi, count)])
    special = np.abs(pts.gains())
    extra = np.asarray(list(extra_gains), dtype=float)
    extra = np.abs(extra[np.isfinite(extra) & (extra * sign > 0)])
    drop = -d[0] / n[0] if n.size == d.size else None
    cand = np.concatenate([special, extra])
    cand = cand[(cand > 0) & (cand <= k_hi)]
    mags = np.unique(np.concatenate([mags, cand]))
    if drop is not None and drop * sign > 0:
        # the degree-drop gain itself would hold a root at infinity: step around it
        mags = mags[np.abs(mags - abs(drop)) > 1e-12 * abs(drop)]
    gains = sign * mags
    roots = batch_roots(n, d, gains)
    # K = 0 holds the open-loop poles exactly (clustered multiple poles included)
    roots[0] = facts.expanded_poles()
    done = 0
    for done in range(1, rounds + 1):
        if gains.size >= max_points:
            done -= 1
            break
        h = _hausdorff(roots, center, scale)
        a, b = np.abs(gains[:-1]), np.abs(gains[1:])
        wide = (b - a) > 1e-9 * b
        split = np.flatnonzero((h > tol) & wide)
        if split.size == 0:
            done -= 1
            break
        # split each flagged interval into about h / tol pieces (geometric in |K|)
        pieces = np.clip(np.ceil(h[split] / tol), 2, 8).astype(int)
        room = max_points - gains.size
        while split.size and int(np.sum(pieces - 1)) > room:
            keep = np.argsort(-h[split])[: max(split.size // 2, 1)]
            keep = np.sort(keep)
            split, pieces = split[keep], np.minimum(pieces[keep], 2)
            if int(np.sum(pieces - 1)) > room:
                split, pieces = split[:room], pieces[:room]
        if split.size == 0:
            done -= 1
            break
        src_idx = np.repeat(split, pieces - 1)
        frac = np.concatenate([np.arange(1, p) / p for p in pieces])
        lo, hi = a[src_idx], b[src_idx]
        mid = np.where(lo > 0, lo * (hi / np.where(lo > 0, lo, 1.0)) ** frac, hi * 8.0 ** (frac - 1.0) / 8.0)
        if drop is not None and drop * sign > 0:
            mid = np.where(np.abs(mid - abs(drop)) > 1e-12 * abs(drop), mid, 0.5 * (lo + mid))
        new_g = sign * mid
        new_r = continued_roots(n, d, new_g, gains[src_idx], roots[src_idx])
        order = np.argsort(np.concatenate([np.abs(gains), mid]), kind="stable")
        gains = np.concatenate([gains, new_g])[order]
        roots = np.concatenate([roots, new_r])[order]
    return GainGrid(gains=gains, roots=roots, center=center, scale=scale, rounds=done)
