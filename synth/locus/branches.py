"""Branch tracking: put the closed-loop roots of consecutive gains in a consistent order.

Each step between two gain samples is an assignment problem: match the ``n``
roots of one sample to the ``n`` roots of the next at least total squared
distance.  When every root's nearest neighbour in the next sample is a
different root, that nearest-neighbour map already attains the lower bound
(the sum of the row minima) and is optimal; only the remaining, ambiguous
steps go to the Hungarian method (``scipy.optimize.linear_sum_assignment``).
The per-step permutations are then composed with a log-depth prefix scan, so
no Python loop runs over the gain samples.

Roots at infinity.  Where ``D + K N`` loses degree (equal degrees of ``N`` and
``D`` at ``K = -d0/n0``) a root is ``inf``.  Distances are chordal distances
on the Riemann sphere of the scaled variable ``(s - center) / scale``, which
are finite for ``inf``: a root that runs off to infinity is matched to the
``inf`` entry, and a root that comes back from infinity is matched to it on
the other side, so a branch passing through infinity stays one branch.

References
----------
H. W. Kuhn, "The Hungarian method for the assignment problem", Naval Research
Logistics Quarterly 2, 1955.
W. D. Hillis and G. L. Steele, "Data parallel algorithms", Comm. ACM 29(12),
1986 (the prefix scan used to compose the permutations).
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import linear_sum_assignment


def chordal_distance(a, b, center: complex = 0.0, scale: float = 1.0) -> np.ndarray:
    """Chordal distance on the Riemann sphere between ``(a - center)/scale`` and ``(b - center)/scale``.

    Broadcasts; ``inf`` entries are the point at infinity (distance 0 between two
    of them). Values lie in ``[0, 2]``.
    """
    za = (np.asarray(a, dtype=complex) - center) / scale
    zb = (np.asarray(b, dtype=complex) - center) / scale
    ia = ~np.isfinite(za)
    ib = ~np.isfinite(zb)
    fa = np.where(ia, 0.0, za)
    fb = np.where(ib, 0.0, zb)
    ra = np.sqrt(1.0 + np.abs(fa) ** 2)
    rb = np.sqrt(1.0 + np.abs(fb) ** 2)
    finite = 2.0 * np.abs(fa - fb) / (ra * rb)
    out = np.where(ia & ib, 0.0, np.where(ia, 2.0 / rb, np.where(ib, 2.0 / ra, finite)))
    return out


def step_permutations(roots, center: complex = 0.0, scale: float = 1.0) -> np.ndarray:
    """Optimal matchings between consecutive rows of ``roots``.

    Parameters
    ----------
    roots : array_like, complex, shape (G, n)
        Roots per gain sample, in any order within a row.
    center, scale : complex, float
        Frame for the chordal distance (the middle and size of the locus).

    Returns
    -------
    ndarray of int, shape (G - 1, n)
        ``perm[i, a]`` is the index in row ``i + 1`` matched to index ``a`` of row ``i``.
    """
    r = np.asarray(roots, dtype=complex)
    g, n = r.shape
    if g < 2 or n == 0:
        return np.zeros((max(g - 1, 0), n), dtype=int)
    cost = chordal_distance(r[:-1, :, None], r[1:, None, :], center, scale) ** 2
    nearest = np.argmin(cost, axis=2)
    is_perm = np.all(np.sort(nearest, axis=1) == np.arange(n), axis=1)
    perm = nearest.copy()
    for i in np.flatnonzero(~is_perm):  # only the ambiguous steps
        rows, cols = linear_sum_assignment(cost[i])
        perm[i, rows] = cols
    return perm


def compose_orders(perm: np.ndarray, first=None) -> np.ndarray:
    """Raw index of each branch in every row, from the step permutations.

    ``order[0] = first`` (default: identity) and
    ``order[i + 1] = perm[i][order[i]]``, computed by a prefix scan.
    """
    perm = np.asarray(perm, dtype=int)
    steps, n = perm.shape
    acc = np.empty((steps + 1, n), dtype=int)
    acc[0] = np.arange(n) if first is None else np.asarray(first, dtype=int)
    acc[1:] = perm
    d = 1
    while d <= steps:
        # acc[i] <- acc[i] o acc[i - d]: apply the earlier map first
        acc[d:] = np.take_along_axis(acc[d:], acc[:-d], axis=1)
        d *= 2
    return acc


def track_branches(roots, center: complex = 0.0, scale: float = 1.0, first=None) -> np.ndarray:
    """Reorder every row of ``roots`` so that column ``j`` follows one branch.

    Parameters
    ----------
    roots : array_like, complex, shape (G, n)
        Closed-loop roots at increasing ``|K|``, unordered within rows.
    center, scale : complex, float
        Frame for the chordal distance.
    first : array_like of int, optional
        Order of the first row (default: as given).

    Returns
    -------
    ndarray, complex, shape (G, n)
        ``out[i, j]`` is branch ``j`` at sample ``i``.

    References
    ----------
    H. W. Kuhn, Naval Research Logistics Quarterly 2, 1955 (optimal assignment).
    """
    r = np.asarray(roots, dtype=complex)
    if r.ndim != 2:
        raise ValueError("roots must be a 2-D array (gains x roots)")
    if r.shape[0] == 0 or r.shape[1] == 0:
        return r.copy()
    order = compose_orders(step_permutations(r, center, scale), first)
    return np.take_along_axis(r, order, axis=1)
