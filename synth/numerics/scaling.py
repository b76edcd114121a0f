"""Frequency and gain normalisation of a loop, so the numerics never see raw units.

A plant at 1e-4 rad/s or at 1e6 rad/s is an ordinary plant, but its raw
coefficients are not: ``(s + 1e5)^3`` has coefficients from 1 to 1e15, and a
thermal chain with poles near 1e-4 rad/s has a constant term 1e-11 next to a
leading 1.  Fixed tolerances on such numbers are wrong in one direction or the
other.  Every root and gain computation therefore first maps the loop
``D(s) + K N(s)`` to balanced form

    s = w0 * z,        D(w0 z) = cd * Dz(z),     N(w0 z) = cn * Nz(z),
    K = g0 * k,        g0 = cd / cn,

so that ``D(s) + K N(s) = cd * (Dz(z) + k Nz(z))``.  ``w0`` is the geometric
mean magnitude of the non-zero open-loop poles and zeros (``|p_m / p_0|^(1/m)``
for each polynomial ``p`` with its exact roots at the origin removed), and
``cd``, ``cn`` are the largest coefficients of the frequency-scaled
polynomials.  All three are rounded to powers of two, so the scaling is exact
in binary floating point: the scaled problem has exactly the same roots (times
``1 / w0``) and gains (times ``1 / g0``) as the original one.

Inside the scaled domain the number 1 is the problem's own scale, so a
tolerance written there as ``rtol * max(1, |z|)`` is relative to the problem.
Results go back through the inverse maps: roots ``x w0``, gains ``x g0``,
frequencies ``x w0``, a decay rate ``sigma`` enters as ``sigma / w0``
(a damping ratio is scale-free).

References
----------
.. [1] J. H. Wilkinson, *Rounding Errors in Algebraic Processes*, Prentice
   Hall, 1963, ch. 2 (scaling a polynomial's variable by a power of the radix
   changes no significant digit; conditioning of roots).
.. [2] B. N. Parlett and C. Reinsch, "Balancing a matrix for calculation of
   eigenvalues and eigenvectors", Numer. Math. 13, 1969 (powers-of-two
   diagonal scaling, the same idea applied to the companion matrix).
.. [3] N. J. Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd
   ed., SIAM, 2002, sec. 5.1 (the running error bound of Horner's rule used
   by :func:`horner_error`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: unit roundoff of IEEE double precision
EPS = float(np.finfo(float).eps)


def pow2(x: float) -> float:
    """The power of two nearest to ``x > 0`` in the logarithmic sense (1 for 0, inf or nan)."""
    if not (x > 0.0 and math.isfinite(x)):
        return 1.0
    e = round(math.log2(x))
    # stay inside the normal range: a scale is never the reason for an overflow
    return math.ldexp(1.0, max(min(e, 1000), -1000))


def _log_root_sum(p: np.ndarray) -> tuple[float, int]:
    """``sum log|r|`` and count over the non-zero roots of ``p`` (exact zeros stripped)."""
    nz = np.flatnonzero(p)
    if nz.size == 0:
        return 0.0, 0
    q = p[nz[0]: nz[-1] + 1]
    deg = q.size - 1
    if deg <= 0:
        return 0.0, 0
    # product of the roots' magnitudes is |q_last / q_first|; logs avoid overflow
    return math.log(abs(q[-1])) - math.log(abs(q[0])), deg


def frequency_scale(*polys) -> float:
    """Power of two near the geometric-mean magnitude of the non-zero roots of ``polys``.

    Roots exactly at the origin (trailing zero coefficients) do not count: they
    are invariant under scaling.  Returns 1 when no polynomial has a non-zero root.
    """
    total, count = 0.0, 0
    for p in polys:
        t, c = _log_root_sum(np.atleast_1d(np.asarray(p, dtype=float)))
        total += t
        count += c
    if count == 0:
        return 1.0
    return pow2(math.exp(total / count))


def scale_variable(p, w0: float) -> np.ndarray:
    """Coefficients of ``p(w0 z)`` (exact when ``w0`` is a power of two)."""
    p = np.asarray(p, dtype=float)
    deg = p.size - 1
    # ldexp keeps the exactness promise and never overflows through w0**deg
    e = round(math.log2(w0))
    if math.ldexp(1.0, e) == w0:
        return np.ldexp(p, e * np.arange(deg, -1, -1))
    return p * w0 ** np.arange(deg, -1, -1, dtype=float)


def coefficient_scale(p) -> float:
    """Power of two near the largest coefficient magnitude of ``p`` (1 for the zero polynomial)."""
    m = float(np.max(np.abs(p))) if np.size(p) else 0.0
    return pow2(m) if m > 0 else 1.0


@dataclass(frozen=True)
class LoopScaling:
    """The exact power-of-two normalisation of a loop ``K N(s) / D(s)``.

    Attributes
    ----------
    w0 : float
        Frequency scale: ``s = w0 z``.
    cd, cn : float
        Coefficient scales: ``D(w0 z) = cd Dz(z)``, ``N(w0 z) = cn Nz(z)``.

    Notes
    -----
    The gain scale is ``g0 = cd / cn``: a gain ``K`` of the original loop is
    ``k = K / g0`` of the scaled one.  Every attribute is a power of two, so
    the forward and inverse maps are exact.

    References
    ----------
    J. H. Wilkinson, *Rounding Errors in Algebraic Processes*, 1963, ch. 2.
    """

    w0: float = 1.0
    cd: float = 1.0
    cn: float = 1.0

    @classmethod
    def for_loop(cls, num, den) -> LoopScaling:
        """The scaling of the loop ``K num / den`` (``w0`` from both polynomials' roots)."""
        n = np.atleast_1d(np.asarray(num, dtype=float))
        d = np.atleast_1d(np.asarray(den, dtype=float))
        w0 = frequency_scale(n, d)
        return cls(w0, coefficient_scale(scale_variable(d, w0)),
                    coefficient_scale(scale_variable(n, w0)))

    @classmethod
    def for_poly(cls, p) -> LoopScaling:
        """The scaling of a single polynomial (its ``cn`` is 1)."""
        p = np.atleast_1d(np.asarray(p, dtype=float))
        w0 = frequency_scale(p)
        return cls(w0, coefficient_scale(scale_variable(p, w0)), 1.0)

    @property
    def g0(self) -> float:
        """Gain scale: ``K = g0 k``."""
        return self.cd / self.cn

    # -- forward maps ------------------------------------------------------------------
    def den(self, d) -> np.ndarray:
        """``Dz(z) = D(w0 z) / cd``."""
        return scale_variable(d, self.w0) / self.cd

    def num(self, n) -> np.ndarray:
        """``Nz(z) = N(w0 z) / cn``."""
        return scale_variable(n, self.w0) / self.cn

    def gain_in(self, k):
        """Original gain(s) ``K`` to scaled gain(s) ``k = K / g0``."""
        return np.asarray(k, dtype=float) / self.g0

    def point_in(self, s):
        """Original s-plane point(s) to scaled ones ``z = s / w0``."""
        return _times(np.asarray(s, dtype=complex), 1.0 / self.w0)

    def region_in(self, region):
        """The region in the scaled plane: decay rate ``sigma / w0``, the same damping."""
        if region is None:
            return None
        return type(region)(float(region.sigma) / self.w0, float(region.zeta))

    # -- inverse maps ------------------------------------------------------------------
    def gain_out(self, k):
        """Scaled gain(s) back to ``K = g0 k``."""
        return np.asarray(k, dtype=float) * self.g0

    def point_out(self, z):
        """Scaled root(s) back to ``s = w0 z`` (a root at complex infinity stays ``inf+0j``)."""
        return _times(np.asarray(z), self.w0)

    def frequency_out(self, w):
        """Scaled frequency (or decay rate) back to rad/s: ``w0 w``."""
        return np.asarray(w, dtype=float) * self.w0


def _times(z: np.ndarray, f: float) -> np.ndarray:
    """``z * f`` for real ``f``, part by part (complex times real must not make ``inf * 0j`` a nan)."""
    if not np.iscomplexobj(z):
        return z * f
    out = np.empty(z.shape, dtype=complex)
    out.real = z.real * f
    out.imag = z.imag * f
    return out if out.ndim else out[()]


def horner_error(p, z) -> np.ndarray:
    """Rounding-error bound of evaluating ``p`` at ``z`` by Horner's rule.

    ``|fl(p(z)) - p(z)| <= gamma_2m * sum |p_i| |z|^i`` (Higham 2002, eq. 5.3);
    returned as that bound with ``gamma_2m ~ 2 m eps``.
    """
    p = np.abs(np.asarray(p, dtype=float))
    az = np.abs(np.asarray(z, dtype=complex))
    m = max(p.size - 1, 1)
    return 2.0 * m * EPS * np.polyval(p, az)


def root_uncertainty(p, roots) -> np.ndarray:
    """How far each computed simple root of ``p`` may be from the true root, to first order.

    A coefficient perturbation of relative size ``eps`` moves a simple root
    ``r`` by about ``eps * sum |p_i| |r|^i / |p'(r)|`` (Wilkinson 1963, ch. 2).
    At a computed root near a multiple root ``p'(r)`` is itself small, so the
    estimate grows accordingly (to about ``eps^(1/m)`` for an ``m``-fold root).

    Parameters
    ----------
    p : array_like
        Real polynomial, descending powers.
    roots : array_like of complex
        Its computed roots.

    Returns
    -------
    ndarray of float
        Absolute uncertainty per root (same units as the roots).

    References
    ----------
    J. H. Wilkinson, *Rounding Errors in Algebraic Processes*, 1963, ch. 2.
    """
    p = np.asarray(p, dtype=float)
    r = np.asarray(roots, dtype=complex)
    if p.size < 2 or r.size == 0:
        return np.zeros(r.shape)
    with np.errstate(all="ignore"):
        bound = horner_error(p, r) / (2.0 * max(p.size - 1, 1))  # eps * sum |p_i||r|^i
        first = bound / np.abs(np.polyval(np.polyder(p), r))
    return np.where(np.isfinite(first), first, np.inf)
