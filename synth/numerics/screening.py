"""Vectorised screening of closed-loop polynomials without eigenvalues.

The global search proposes candidates by the thousand; each one is a
closed-loop characteristic polynomial. This module decides, for a whole batch
at once, whether every root lies in the requirement region

    R = {Re s <= -sigma}  intersected with  {damping ratio >= zeta},

using Routh-type recursions only (no root finding):

* decay rate: all roots of c(s) satisfy Re s < -sigma exactly when the shifted
  polynomial c(w - sigma) is Hurwitz (:func:`taylor_shift_batch`);
* damping: all roots lie strictly inside the sector |arg(-s)| < arccos(zeta)
  exactly when q(w) = c(w exp(j beta)), beta = pi/2 - arccos(zeta), is
  Hurwitz (:func:`rotate_batch`); a complex q is Hurwitz exactly when the real
  polynomial q(w) * conj_coeffs(q)(w) is.

Batches are 2-D arrays, one polynomial per row, coefficients in descending
powers, padded on the left with zeros to a common length. Leading zeros are
read as padding: a row ``[0, 0, 1, 3, 2]`` is the quadratic s^2 + 3 s + 2.

Boundary convention (the tolerance band)
----------------------------------------
The tests are strict: a root ON the boundary of the region counts as outside.
In floating point a root near the boundary produces a Routh pivot that is the
difference of two nearly equal numbers. A pivot is accepted only when it is
positive AND larger than ``rtol`` times the sum of the magnitudes of the two
terms it was computed from; anything smaller is indistinguishable from a zero
pivot and the row is declared "not in the region". The default
``rtol = 1e-9`` makes the verdict agree with eigenvalue-based tests
(numpy.linalg.eigvals) for roots farther than about 1e-5 times their own
modulus from the boundary (measured for degrees up to 12, roots spread over
two decades; the first disagreements appeared at 1e-6). The tests in
tests/test_screening.py check agreement outside a band of 1e-4 (|s| + sigma). Inside that band the answer is conservative
("outside") by design: a candidate that barely grazes the boundary is of no
use to a controller anyway.

Rows containing non-finite numbers, and rows that are identically zero, are
reported as not in the region. A nonzero constant (degree 0) has no roots and
is reported as in the region.

References
----------
.. [1] E. J. Routh, "A Treatise on the Stability of a Given State of Motion",
   Macmillan, 1877 (the tabular recursion).
.. [2] F. R. Gantmacher, "The Theory of Matrices", Vol. II, Chelsea, 1959,
   ch. XV (Routh-Hurwitz theorem, Routh scheme).
.. [3] D. Henrion, M. Sebek and V. Kucera, "Positive polynomials and robust
   stabilization with fixed-order controllers", IEEE Trans. Automatic Control
   48(7), 2003 (shift and rotation of the s-plane onto the imaginary axis).
"""

from __future__ import annotations

import math

import numpy as np

from synth.errors import InputError

__all__ = [
    "DEFAULT_RTOL",
    "hurwitz_batch",
    "in_region_batch",
    "region_parameters",
    "rotate_batch",
    "rotated_product_batch",
    "taylor_shift_batch",
]

#: Relative pivot tolerance of the Routh recursion (see module docstring).
DEFAULT_RTOL = 1e-9

# Rows are processed in chunks so that the working set of one Routh table
# stays in cache; the value was chosen by tests/benchmarks/bench_screening.py.
_CHUNK = 8192


# ----------------------------------------------------------------------------
# input handling
# ----------------------------------------------------------------------------


def _as_batch(polys, name: str = "polys", allow_complex: bool = False) -> tuple[np.ndarray, tuple]:
    """Return ``(batch (B, L), leading_shape)`` for 1-D or N-D input."""
    try:
        arr = np.asarray(polys)
    except Exception as exc:  # ragged lists and the like
        raise InputError(f"{name} must be an array of polynomial coefficients ({exc})") from None
    if arr.dtype == object or not (
        np.issubdtype(arr.dtype, np.number) or np.issubdtype(arr.dtype, np.bool_)
    ):
        raise InputError(f"{name} must hold numbers, got dtype {arr.dtype}")
    if np.iscomplexobj(arr) and not allow_complex:
        raise InputError(f"{name} must have real coefficients")
    if arr.ndim == 0 or arr.shape[-1] == 0:
        raise InputError(f"{name} must have at least one coefficient per polynomial")
    lead_shape = arr.shape[:-1]
    dtype = np.complex128 if np.iscomplexobj(arr) else np.float64
    return arr.reshape(-1, arr.shape[-1]).astype(dtype, copy=False), lead_shape


def region_parameters(region) -> tuple[float, float]:
    """Validated ``(sigma, zeta)`` of a region-like object.

    Shared by the batch screen here and the convex strategy, which test the
    same region and must reject the same bad input with the same message.

    Parameters
    ----------
    region : object
        Anything with numeric attributes ``.sigma`` (>= 0) and ``.zeta``
        (in [0, 1)), such as :class:`synth.requirements.Region`.

    Returns
    -------
    tuple of float
        ``(sigma, zeta)`` as plain floats.

    Raises
    ------
    InputError
        If an attribute is missing, not numeric, or out of range.
    """
    try:
        sigma = float(region.sigma)
        zeta = float(region.zeta)
    except (AttributeError, TypeError, ValueError):
        raise InputError("region must have numeric attributes .sigma and .zeta") from None
    if not math.isfinite(sigma) or sigma < 0.0:
        raise InputError(f"region.sigma must be a finite number >= 0, got {sigma}")
    if not math.isfinite(zeta) or not 0.0 <= zeta < 1.0:
        raise InputError(f"region.zeta must lie in [0, 1), got {zeta}")
    return sigma, zeta


# ----------------------------------------------------------------------------
# coefficient-major internals: row k of a block holds the coefficient of
# s^(n-k) of every candidate, so each numpy operation below is one long
# contiguous vector across the batch
# ----------------------------------------------------------------------------


def _routh_block(a: np.ndarray, rtol: float) -> np.ndarray:
    """Routh test for a coefficient-major block of same-degree polynomials.

    Parameters
    ----------
    a : ndarray, shape (n + 1, B)
        Row k holds the coefficient of s^(n-k) of every candidate; the
        leading row must be strictly positive (rows failing that are
        reported False).
    rtol : float
        Relative pivot tolerance.

    Returns
    -------
    ndarray of bool, shape (B,)
        True where the first column of the Routh table is positive beyond
        the tolerance, i.e. the polynomial is Hurwitz.
    """
    n = a.shape[0] - 1
    nb = a.shape[1]
    ok = a[0] > 0.0
    if n == 0:
        return ok
    width = n // 2 + 2  # one spare zero row keeps the slices below in range
    prev, cur, new = np.zeros((3, width, nb))
    prev[: (n + 2) // 2] = a[0::2]
    cur[: (n + 1) // 2] = a[1::2]
    ok &= cur[0] > 0.0
    term = np.empty((width, nb))
    scale = np.empty(nb)
    # rows that already failed may divide by zero; their garbage (inf, nan)
    # stays in their own columns and their verdict is already False
    with np.errstate(all="ignore"):
        for k in range(1, n):
            length = (n - k + 1) // 2  # entries in row k+1 of the table
            mult = prev[0] / cur[0]
            t = term[:length]
            np.multiply(mult, cur[1 : length + 1], out=t)
            np.subtract(prev[1 : length + 1], t, out=new[:length])
            new[length:] = 0.0
            # a pivot lost to cancellation is treated as zero (boundary band)
            np.abs(prev[1], out=scale)
            scale += np.abs(t[0])
            scale *= rtol
            ok &= new[0] > scale
            prev, cur, new = cur, new, prev
    return ok


def _taylor_shift_cm(cols: np.ndarray, shift) -> np.ndarray:
    """In-place Taylor shift p(s) -> p(s + shift) of a coefficient-major block."""
    n = cols.shape[0] - 1
    for i in range(n):
        for j in range(1, n + 1 - i):
            cols[j] += shift * cols[j - 1]
    return cols


def _rotated_product_cm(cols: np.ndarray, beta: float) -> np.ndarray:
    """Coefficient-major real product q * conj_coeffs(q), q(w) = p(w e^{j beta}).

    Uses r_m = sum_{i+k=m} p_i p_k cos(beta (i - k)) and the symmetry in
    (i, k): the diagonal once, every off-diagonal pair twice.
    """
    length = cols.shape[0]
    out = np.zeros((2 * length - 1, cols.shape[1]))
    for i in range(length):
        out[2 * i] += cols[i] * cols[i]
        if i + 1 < length:
            w = 2.0 * np.cos(beta * np.arange(1, length - i))[:, None]
            out[2 * i + 1 : i + length] += (w * cols[i]) * cols[i + 1 :]
    return out


def _screen_block(cols: np.ndarray, sigma: float, beta: float | None, rtol: float) -> np.ndarray:
    """Region test of a coefficient-major block, leading row nonzero, finite.

    ``beta`` None skips the damping test; ``sigma`` 0 skips the shift.
    """
    cols = cols * np.sign(cols[0])  # Routh needs a positive leading coefficient
    first = _taylor_shift_cm(cols.copy(), -sigma) if sigma > 0.0 else cols
    ok = _routh_block(first, rtol)
    if beta is not None:
        idx = np.flatnonzero(ok)
        if idx.size == ok.size:
            ok = _routh_block(_rotated_product_cm(cols, beta), rtol)
        elif idx.size:
            ok[idx] = _routh_block(_rotated_product_cm(cols[:, idx], beta), rtol)
    return ok


def _screen(batch: np.ndarray, sigma: float, beta: float | None, rtol: float) -> np.ndarray:
    """Region test of a real (B, L) batch: chunking and grouping by degree."""
    nb, length = batch.shape
    out = np.zeros(nb, dtype=bool)
    for lo in range(0, nb, _CHUNK):
        cols = np.ascontiguousarray(batch[lo : lo + _CHUNK].T)
        good = np.isfinite(cols).all(axis=0)
        lead_nonzero = cols[0] != 0.0
        if good.all() and lead_nonzero.all():  # the common case: one degree
            out[lo : lo + cols.shape[1]] = _screen_block(cols, sigma, beta, rtol)
            continue
        nonzero = cols != 0.0
        lead = np.where(good & nonzero.any(axis=0), nonzero.argmax(axis=0), length)
        res = np.zeros(cols.shape[1], dtype=bool)
        # one group per distinct degree: a loop over at most L values, not rows
        for start in np.unique(lead):
            if start >= length:
                continue  # all-zero or non-finite rows stay False
            idx = np.flatnonzero(lead == start)
            res[idx] = _screen_block(cols[start:, idx], sigma, beta, rtol)
        out[lo : lo + cols.shape[1]] = res
    return out


def _conj_product(batch: np.ndarray) -> np.ndarray:
    """Real coefficients of q(w) * conj_coeffs(q)(w) for complex rows q."""
    nb, length = batch.shape
    out = np.zeros((nb, 2 * length - 1))
    qc = np.conj(batch)
    # descending-order convolution, one column at a time (L vector ops)
    for i in range(length):
        out[:, i : i + length] += (batch[:, i : i + 1] * qc).real
    return out


# ----------------------------------------------------------------------------
# public kernel
# ----------------------------------------------------------------------------


def hurwitz_batch(polys, rtol: float = DEFAULT_RTOL) -> np.ndarray:
    """Decide Hurwitz stability for a batch of polynomials without roots.

    Parameters
    ----------
    polys : array_like, shape (..., L)
        Coefficients in descending powers, one polynomial per row, padded on
        the left with zeros. Real, or complex (then the real polynomial
        ``q * conj_coeffs(q)`` of twice the degree is tested, whose roots are
        the roots of q and their complex conjugates). The sign of the leading
        coefficient is irrelevant.
    rtol : float, optional
        Relative pivot tolerance (module docstring, "Boundary convention").

    Returns
    -------
    ndarray of bool, shape (...)
        True where every root has a strictly negative real part. All-zero
        and non-finite rows give False; nonzero constants give True.

    References
    ----------
    .. [1] E. J. Routh, "A Treatise on the Stability of a Given State of
       Motion", 1877.
    .. [2] F. R. Gantmacher, "The Theory of Matrices", Vol. II, 1959, ch. XV.
    """
    batch, shape = _as_batch(polys, allow_complex=True)
    if np.iscomplexobj(batch):
        finite = np.isfinite(batch).all(axis=1)
        batch = _conj_product(np.where(finite[:, None], batch, np.nan))
    return _screen(batch, 0.0, None, float(rtol)).reshape(shape)


def taylor_shift_batch(polys, a) -> np.ndarray:
    """Coefficients of p(s + a) for every row p, by repeated synthetic division.

    Parameters
    ----------
    polys : array_like, shape (B, L) or (L,)
        Coefficients in descending powers (real or complex).
    a : float or array_like, shape (B,)
        Shift, one for all rows or one per row.

    Returns
    -------
    ndarray, same shape as ``polys``
        Coefficients of p(s + a) in descending powers. Leading zeros stay
        exactly zero, so padding is preserved.

    Notes
    -----
    Horner's scheme applied n times, O(n^2) vector operations across the
    batch. To test a decay rate sigma use ``a = -sigma``: the roots of
    c(w - sigma) are w = s + sigma.

    References
    ----------
    .. [1] D. E. Knuth, "The Art of Computer Programming", Vol. 2, 3rd ed.,
       1997, sec. 4.6.4 (Taylor shift by repeated synthetic division).
    """
    batch, shape = _as_batch(polys, allow_complex=True)
    shift = np.asarray(a)
    if np.iscomplexobj(shift) and not np.iscomplexobj(batch):
        batch = batch.astype(np.complex128)
    shift = shift.astype(batch.dtype, copy=False)
    if shift.ndim not in (0, 1) or (shift.ndim == 1 and shift.shape[0] != batch.shape[0]):
        raise InputError("shift a must be a scalar or one value per polynomial")
    # coefficient-major copy: each step is one vector operation
    cols = _taylor_shift_cm(np.array(batch.T, order="C"), shift)
    return cols.T.reshape(*shape, cols.shape[0]) if shape else cols[:, 0].copy()


def rotate_batch(polys, beta) -> np.ndarray:
    """Complex coefficients of q(w) = p(w * exp(j * beta)) for every row p.

    Parameters
    ----------
    polys : array_like, shape (B, L) or (L,)
        Coefficients in descending powers.
    beta : float
        Rotation angle in radians. The roots of q are w = s * exp(-j*beta).

    Returns
    -------
    ndarray of complex, same shape as ``polys``
        The coefficient of w^m is p_m * exp(j * m * beta).

    Notes
    -----
    With phi = arccos(zeta) and beta = pi/2 - phi, the upper edge of the
    damping sector maps onto the positive imaginary axis, so the roots of a
    real p lie strictly inside the sector exactly when q is Hurwitz.

    References
    ----------
    .. [1] D. Henrion, M. Sebek and V. Kucera, IEEE Trans. Automatic Control
       48(7), 2003.
    """
    batch, shape = _as_batch(polys, allow_complex=True)
    length = batch.shape[1]
    powers = np.arange(length - 1, -1, -1)
    out = batch * np.exp(1j * float(beta) * powers)[None, :]
    return out.reshape(*shape, length)


def rotated_product_batch(polys, beta) -> np.ndarray:
    """Real coefficients of q * conj_coeffs(q), q(w) = p(w exp(j beta)), p real.

    Parameters
    ----------
    polys : array_like, shape (B, L) or (L,)
        Real coefficients in descending powers.
    beta : float
        Rotation angle in radians.

    Returns
    -------
    ndarray, shape (B, 2L - 1) or (2L - 1,)
        The coefficient of w^m is sum_{i + k = m} p_i p_k cos(beta (i - k)),
        p_i the coefficient of s^i: computed in real arithmetic, each
        symmetric pair (i, k) once, without forming q.
    """
    batch, shape = _as_batch(polys)
    length = batch.shape[1]
    out = _rotated_product_cm(np.ascontiguousarray(batch.T), float(beta)).T
    return out.reshape(*shape, 2 * length - 1)


def in_region_batch(polys, region, rtol: float = DEFAULT_RTOL) -> np.ndarray:
    """Test whether every root of each polynomial lies in the region.

    Parameters
    ----------
    polys : array_like, shape (..., L)
        Real coefficients in descending powers, rows padded on the left.
    region : object
        Anything with attributes ``sigma`` (minimum decay rate, >= 0) and
        ``zeta`` (minimum damping ratio, in [0, 1)), e.g.
        ``synth.requirements.Region``.
    rtol : float, optional
        Relative pivot tolerance (module docstring).

    Returns
    -------
    ndarray of bool, shape (...)
        True where every root s has Re s < -sigma and damping > zeta
        (strictly; the boundary and the tolerance band around it count as
        outside).

    Notes
    -----
    Two Routh tests: on c(w - sigma) (degree n) for the decay rate and on
    the real product q * conj_coeffs(q) of the rotated polynomial (degree
    2n) for the damping sector; the second runs only on rows that passed
    the first. With sigma = 0 and zeta = 0 this is :func:`hurwitz_batch`.

    References
    ----------
    .. [1] D. Henrion, M. Sebek and V. Kucera, IEEE Trans. Automatic Control
       48(7), 2003.
    .. [2] F. R. Gantmacher, "The Theory of Matrices", Vol. II, 1959, ch. XV.
    """
    sigma, zeta = region_parameters(region)
    batch, shape = _as_batch(polys)
    beta = 0.5 * math.pi - math.acos(zeta) if zeta > 0.0 else None
    return _screen(batch, sigma, beta, float(rtol)).reshape(shape)


def hurwitz_exact(poly) -> bool:
    """Whether a real polynomial is Hurwitz, decided in exact rational arithmetic.

    The coefficients (binary floats) are converted to :class:`fractions.Fraction`
    exactly and the Routh scheme runs without rounding, so the answer is the
    truth for the polynomial as stored: every root strictly in the open left
    half-plane exactly when every first-column entry is positive (a zero entry
    means a root on the axis or in the right half-plane, so "not Hurwitz").
    Slow next to :func:`hurwitz_batch`; meant for the few gains where double
    precision cannot place a root (see :func:`synth.locus.core.gain_intervals`).

    References
    ----------
    E. J. Routh, 1877; F. R. Gantmacher, *The Theory of Matrices*, Vol. II,
    1959, ch. XV (the Routh scheme and the Routh-Hurwitz theorem).
    """
    from fractions import Fraction

    c = [Fraction(float(x)) for x in np.atleast_1d(np.asarray(poly, dtype=float))]
    while c and c[0] == 0:
        c.pop(0)
    if not c:
        return False
    if c[0] < 0:
        c = [-x for x in c]
    n = len(c) - 1
    if any(x <= 0 for x in c):  # the necessary condition, and it keeps the scheme regular
        return False
    a, b = c[0::2], c[1::2]
    for _ in range(n):
        if not b or b[0] <= 0:
            return False
        nxt = [(b[0] * a[i + 1] - a[0] * (b[i + 1] if i + 1 < len(b) else 0)) / b[0]
               for i in range(len(a) - 1)]
        a, b = b, nxt
    return True
