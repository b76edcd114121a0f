"""Rational approximation of a dead time.

A transport delay ``exp(-s T)`` is not rational, so the root-locus engine and
the compensator search work with its diagonal Pade approximant, an all-pass
rational function whose zeros are the mirror images of its poles (they lie in
the right half-plane and limit what any compensator can achieve). Time-domain
verdicts still come from a simulation with the exact delay.
"""

from __future__ import annotations

import math
import numbers

import numpy as np

from synth.errors import InputError

__all__ = ["pade", "MAX_PADE_ORDER"]

#: Highest order accepted; beyond it the coefficients span too many decades
#: to be useful in double precision for typical delays.
MAX_PADE_ORDER = 10


def pade(T: float, order: int) -> tuple[np.ndarray, np.ndarray]:
    """Diagonal Pade approximant of ``exp(-s T)``.

    Parameters
    ----------
    T : float
        The dead time in seconds, finite and ``>= 0``.
    order : int
        Degree of numerator and denominator, 1 to :data:`MAX_PADE_ORDER`.

    Returns
    -------
    num, den : numpy.ndarray
        Coefficients in descending powers of ``s``, each of length
        ``order + 1``, normalised so that both constant terms equal 1 (unit
        static gain, like the delay itself). ``num(s) = den(-s)``. For
        ``T == 0`` the result is ``([1.], [1.])`` whatever the order.

    Raises
    ------
    synth.errors.InputError
        When ``T`` is negative or not finite, or ``order`` is not an integer
        from 1 to :data:`MAX_PADE_ORDER`.

    Notes
    -----
    With ``n = order`` and ``x = s T`` the approximant is
    ``P(-x) / P(x)``, ``P(x) = sum_k c_k x^k``,
    ``c_k = (2n - k)! n! / ((2n)! k! (n - k)!)``. It matches the Taylor
    series of ``exp(-x)`` through the term ``x^(2n)``.

    References
    ----------
    .. [1] G. A. Baker and P. Graves-Morris, *Pade Approximants*, 2nd ed.,
       Cambridge University Press, 1996 (the exponential's diagonal table).
    .. [2] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control
       of Dynamic Systems*, Pearson (section on time delay).

    Examples
    --------
    >>> num, den = pade(2.0, 1)
    >>> num.tolist(), den.tolist()
    ([-1.0, 1.0], [1.0, 1.0])
    """
    if isinstance(order, bool) or not isinstance(order, numbers.Integral):
        raise InputError(f"the Pade order must be an integer, got {order!r}")
    order = int(order)
    if not 1 <= order <= MAX_PADE_ORDER:
        raise InputError(f"the Pade order must be from 1 to {MAX_PADE_ORDER}, got {order}")
    if isinstance(T, bool) or not isinstance(T, numbers.Real):
        raise InputError(f"the dead time must be a number, got {T!r}")
    T = float(T)
    if not math.isfinite(T) or T < 0.0:
        raise InputError(f"the dead time must be finite and >= 0, got {T!r}")
    if T == 0.0:
        return np.ones(1), np.ones(1)
    n = order
    k = np.arange(n + 1)
    c = np.array(
        [math.factorial(2 * n - j) * math.factorial(n)
         / (math.factorial(2 * n) * math.factorial(j) * math.factorial(n - j)) for j in k]
    )
    den_ascending = c * T ** k
    num_ascending = den_ascending * (-1.0) ** k
    return num_ascending[::-1].copy(), den_ascending[::-1].copy()
