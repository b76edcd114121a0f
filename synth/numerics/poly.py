"""Polynomial helpers shared by every stage: trimming, validated coefficient lists,
products, roots shared by two polynomials and readable complex numbers.

Polynomials are numpy arrays of real coefficients in descending powers.
"""

from __future__ import annotations

import numpy as np

from synth.errors import InputError


def trim(poly) -> np.ndarray:
    """Return ``poly`` as a float array without its leading EXACT zeros (at least one entry).

    A coefficient is never dropped for being small next to another: a plant
    whose coefficients span thirty decades is an ordinary plant in other units
    (see :mod:`synth.numerics.scaling`).  Code that produces a polynomial by
    arithmetic and knows a leading coefficient is rounding noise removes it
    itself, against that computation's own error bound.
    """
    p = np.atleast_1d(np.asarray(poly, dtype=float))
    nz = np.flatnonzero(p)
    if nz.size == 0:
        return np.zeros(1)
    return p[nz[0]:].copy()


def coefficients(poly, what: str, *, allow_zero: bool = True, key: str | None = None) -> np.ndarray:
    """Validated coefficient list without its exact leading zeros.

    The one reader of user- or document-supplied coefficient lists, so every
    module rejects the same bad input with the same words.

    Parameters
    ----------
    poly : array_like
        Coefficients in descending powers.
    what : str
        How the message names the list, for example ``"the numerator"``.
    allow_zero : bool, optional
        Return ``array([0.])`` for the zero polynomial (default) instead of
        raising.
    key : str, optional
        The input key the error points at.

    Returns
    -------
    ndarray
        A fresh float array; only exact zeros are trimmed (as :func:`trim`).

    Raises
    ------
    InputError
        For non-numbers, an empty or nested list, a non-finite coefficient,
        or (with ``allow_zero=False``) the zero polynomial.
    """
    try:
        arr = np.atleast_1d(np.asarray(poly, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"{what} must be a list of numbers", key=key) from None
    if arr.ndim != 1 or arr.size == 0:
        raise InputError(f"{what} must be a non-empty 1-D list of numbers", key=key)
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{what} has a non-finite coefficient", key=key)
    nz = np.flatnonzero(arr)
    if nz.size == 0:
        if allow_zero:
            return np.zeros(1)
        raise InputError(f"{what} is the zero polynomial", key=key)
    return arr[nz[0]:].copy()


def poly_from_roots(roots, gain: float = 1.0) -> np.ndarray:
    """Real polynomial ``gain * prod(s - r)`` (complex roots must come in conjugate pairs)."""
    roots = np.asarray(roots, dtype=complex)
    p = np.poly(roots) if roots.size else np.ones(1)
    return gain * np.real(p)


def scaled_roots(poly) -> np.ndarray:
    """Roots of a real polynomial, computed on its power-of-two scaled form.

    ``p(w0 z)`` with ``w0`` the geometric-mean root magnitude has balanced
    coefficients; its roots times ``w0`` are the roots of ``p`` (the scaling
    is exact). Roots at the origin (trailing zeros) are exact zeros.

    References
    ----------
    J. H. Wilkinson, *Rounding Errors in Algebraic Processes*, 1963, ch. 2.
    """
    return scaled_roots_with_uncertainty(poly)[0]


#: parts of a root below this many rounding uncertainties are exactly zero (``tidy``)
_SNAP = 10.0


def scaled_roots_with_uncertainty(poly, tidy: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """:func:`scaled_roots` and each root's rounding uncertainty (same units).

    With ``tidy``, a real or imaginary part smaller than ten times the root's
    uncertainty (:func:`synth.numerics.scaling.root_uncertainty`) is set to
    exactly zero: double precision cannot tell it from zero, so no verdict
    (and no printed factor) may hang on it.

    References
    ----------
    J. H. Wilkinson, *Rounding Errors in Algebraic Processes*, 1963, ch. 2.
    """
    from synth.numerics.scaling import LoopScaling, root_uncertainty

    p = trim(poly)
    if p.size < 2:
        return np.zeros(0, dtype=complex), np.zeros(0)
    sc = LoopScaling.for_poly(p)
    ps = sc.den(p)
    z = np.roots(ps).astype(complex)
    unc = root_uncertainty(ps, z)
    if tidy:
        err = _SNAP * unc
        z = np.where(np.abs(z.real) <= err, 1j * z.imag, z)
        z = np.where(np.abs(z.imag) <= err, z.real + 0j, z)
    return sc.point_out(z), sc.w0 * unc


def common_roots(a, b, rtol: float = 1e-6) -> list[complex]:
    """Roots shared by polynomials ``a`` and ``b`` (within a relative tolerance).

    Two roots are shared when they differ by at most ``rtol`` times the larger
    of the two, so roots at the origin match only exactly (they are exact
    zeros) and a slow cancellation at 1e-7 rad/s is found as readily as one at
    1 rad/s. Roots come from the power-of-two scaled polynomials
    (:func:`scaled_roots`). Used to *report* pole-zero cancellations; synth
    never cancels them.
    """
    ra = scaled_roots(a)
    rb = list(scaled_roots(b))
    shared = []
    for r in ra:
        if not rb:
            break
        d = np.abs(np.asarray(rb) - r)
        j = int(np.argmin(d))
        if d[j] <= rtol * max(abs(r), abs(rb[j])):
            shared.append(complex(r))
            rb.pop(j)
    return shared


def format_complex(z: complex, digits: int = 4) -> str:
    """Short readable form of a complex number, e.g. ``-1.5`` or ``-0.5+2j``."""
    z = complex(z)
    fmt = f"{{:.{digits}g}}"
    if abs(z.imag) <= 1e-12 * abs(z):
        return fmt.format(z.real)
    sign = "+" if z.imag >= 0 else "-"
    return f"{fmt.format(z.real)}{sign}{fmt.format(abs(z.imag))}j"


def batch_polymul(P, q) -> np.ndarray:
    """Row-wise product of a polynomial batch with one polynomial, or with one per row.

    Parameters
    ----------
    P : ndarray, shape (B, a)
        One polynomial per row, descending powers, all of the same length.
    q : array_like, shape (b,) or (B, b)
        The common factor, or one factor per row, descending powers.

    Returns
    -------
    ndarray, shape (B, a + b - 1)
        Row ``i`` equals ``numpy.polymul(P[i], q)`` (or ``q[i]``), without trimming.
    """
    # one shifted axpy per coefficient of q: vectorised across the batch
    q = np.asarray(q, dtype=float)
    if q.ndim == 1:
        out = np.zeros((P.shape[0], P.shape[1] + q.size - 1))
        for j, c in enumerate(q):
            out[:, j:j + P.shape[1]] += c * P
        return out
    out = np.zeros((P.shape[0], P.shape[1] + q.shape[1] - 1))
    for j in range(q.shape[1]):
        out[:, j:j + P.shape[1]] += q[:, j:j + 1] * P
    return out


def left_pad(P, width: int) -> np.ndarray:
    """A batch of polynomials (rows) padded with leading zeros to ``width`` columns."""
    if P.shape[1] == width:
        return P
    out = np.zeros((P.shape[0], width))
    out[:, width - P.shape[1]:] = P
    return out
