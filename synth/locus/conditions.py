"""The root-locus angle and magnitude conditions, and the classical section constructions.

A closed-loop pole of ``den + K num`` sits at a chosen point ``s_d`` exactly
when the loop satisfies

* the angle condition ``arg num(s_d)/den(s_d) = 180 deg`` (``K > 0``) or
  ``0 deg`` (``K < 0``), and
* the magnitude condition ``K = -den(s_d) / num(s_d)``.

Plain functions over polynomials and points (descending coefficients,
complex points, angles in degrees), in the style of ``scipy.signal``: the
placement strategy (:mod:`synth.strategies.placement`) and the structure
families' placement constructions (:mod:`synth.families`) build on them.

References
----------
.. [1] W. R. Evans, "Control system synthesis by root locus method",
   Trans. AIEE 69, 1950 (angle and magnitude conditions).
.. [2] K. Ogata, *Modern Control Engineering*, 4th ed., Prentice Hall, 2002,
   sec. 6-8 (lead compensation by the bisector method).
.. [3] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control of
   Dynamic Systems*, 4th ed., Prentice Hall, 2002, sec. 5.4 (zero placed
   first, pole from the angle condition).
"""

from __future__ import annotations

import cmath
import math

import numpy as np

from synth.locus.core import line_crossing_gains
from synth.numerics.poly import trim

__all__ = [
    "MAX_SECTION_DEG",
    "angle_deficiency",
    "arg_deg",
    "evaluate",
    "lead_bisector",
    "lead_from_zero",
    "line_points",
    "magnitude_gain",
    "ray_points",
    "section_angle",
    "wrap_deg",
]

#: Largest phase one lead (or lag) section is asked to supply (common
#: practice: about 60 to 70 deg; beyond that the pole/zero ratio explodes).
MAX_SECTION_DEG = 65.0
#: A polynomial value this small relative to the sum of its terms' magnitudes
#: is a root (relative, so the test means the same at every frequency scale).
_ROOT_RTOL = 1e-14


def wrap_deg(a: float) -> float:
    """Angle in degrees wrapped to (-180, 180]."""
    a = math.fmod(a, 360.0)
    if a <= -180.0:
        a += 360.0
    elif a > 180.0:
        a -= 360.0
    return a


def arg_deg(z: complex) -> float:
    """Argument of ``z`` in degrees, in (-180, 180]."""
    return math.degrees(cmath.phase(z))


def _at_root(p: np.ndarray, s: complex, value: complex) -> bool:
    """Whether ``value = p(s)`` vanishes relative to the size of p's terms at ``|s|``."""
    size = float(np.polyval(np.abs(p), abs(s)))
    return abs(value) <= _ROOT_RTOL * size


def evaluate(num, den, s: complex) -> complex | None:
    """``num(s) / den(s)``, or None at a pole or a zero (relative test)."""
    n_p, d_p = trim(num), trim(den)
    n = complex(np.polyval(n_p, s))
    d = complex(np.polyval(d_p, s))
    if _at_root(d_p, s, d) or n == 0.0 or _at_root(n_p, s, n):
        return None
    return n / d


def angle_deficiency(num, den, s: complex, sign: int = 1) -> float | None:
    """Angle (deg) a compensator must add at ``s`` for ``s`` to be on the locus.

    Parameters
    ----------
    num, den : array_like
        Loop (plant) polynomials, descending powers.
    s : complex
        The desired closed-loop pole.
    sign : {1, -1}
        Sign of the compensator gain: the angle condition asks for 180 deg
        (``K > 0``) or 0 deg (``K < 0``).

    Returns
    -------
    float or None
        ``wrap(180 - arg G(s))`` (or ``wrap(-arg G(s))``) in (-180, 180];
        positive means phase lead is needed.  None at a plant pole or zero.

    References
    ----------
    .. [1] K. Ogata, *Modern Control Engineering*, 4th ed., 2002, sec. 6-8
       (angle deficiency of the lead design).
    """
    g = evaluate(num, den, complex(s))
    if g is None:
        return None
    want = 180.0 if sign > 0 else 0.0
    return wrap_deg(want - arg_deg(g))


def magnitude_gain(num_c, den_c, num, den, s: complex) -> float | None:
    """The real gain ``K = -1 / (C_m(s) G(s))`` of the magnitude condition.

    Returns None when ``s`` is not on the locus of ``C_m G`` (the value has a
    relative imaginary part above 1e-6) or at a pole or zero of the loop.

    References
    ----------
    .. [1] W. R. Evans, "Control system synthesis by root locus method",
       Trans. AIEE 69, 1950.
    """
    c = evaluate(num_c, den_c, complex(s))
    g = evaluate(num, den, complex(s))
    if c is None or g is None:
        return None
    k = -1.0 / (c * g)
    if abs(k.imag) > 1e-6 * abs(k):
        return None
    return float(k.real)


def _real_axis_hit(s: complex, direction_deg: float) -> float | None:
    """Magnitude ``a > 0`` of the real point ``-a`` reached from ``s`` along a direction.

    ``direction_deg`` is the angle, from the positive real axis, of the ray
    from ``s`` (upper half-plane) down to the real axis; it must lie in
    (-180, 0).
    """
    if not -180.0 < direction_deg < 0.0:
        return None
    x = s.real + s.imag / math.tan(math.radians(-direction_deg))
    return -x if x < 0.0 else None


def lead_bisector(s: complex, phi_deg: float) -> tuple[float, float] | None:
    """Zero and pole magnitudes ``(z, p)`` of a section ``(s + z)/(s + p)`` by the bisector method.

    Parameters
    ----------
    s : complex
        Target point in the upper half-plane.
    phi_deg : float
        Angle the section must supply at ``s``: positive for a lead (``z < p``),
        negative for a lag (``z > p``).

    Returns
    -------
    (z, p) or None
        None when the lines miss the negative real axis.

    Notes
    -----
    With ``theta = arg s``, the bisector of the angle between the horizontal
    line from ``s`` to the left and the line from ``s`` to the origin points
    at ``theta/2 - 180 deg``; the zero line lies at ``+phi/2`` and the pole
    line at ``-phi/2`` from it.  The construction gives the largest ratio
    ``z/p`` for the angle, i.e. the least high-frequency gain.

    References
    ----------
    .. [1] K. Ogata, *Modern Control Engineering*, 4th ed., Prentice Hall,
       2002, sec. 6-8 (lead compensation by the bisector method).
    """
    theta = arg_deg(s)
    base = 0.5 * theta - 180.0
    z = _real_axis_hit(s, base + 0.5 * phi_deg)
    p = _real_axis_hit(s, base - 0.5 * phi_deg)
    if z is None or p is None:
        return None
    return z, p


def lead_from_zero(s: complex, zero: float, phi_deg: float) -> float | None:
    """Pole magnitude ``p`` so that ``(s + zero)/(s + p)`` supplies ``phi_deg`` at ``s``.

    Returns None when no pole on the negative real axis does it.

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control
       of Dynamic Systems*, 4th ed., 2002, sec. 5.4 (zero placed first, pole
       from the angle condition).
    """
    psi_z = arg_deg(s + zero)               # angle of the zero's vector at s
    psi_p = psi_z - phi_deg                 # the pole's vector must make this angle
    if not 0.0 < psi_p < 180.0:
        return None
    # the vector from -p to s has angle psi_p: s + p = |.| e^{j psi_p}
    p = -s.real + s.imag / math.tan(math.radians(psi_p))
    return p if p > 0.0 else None


def section_angle(s: complex, z: float, p: float) -> float:
    """Angle (deg) of ``(s + z)/(s + p)`` at ``s`` (``p = 0`` allowed)."""
    return wrap_deg(arg_deg(s + z) - arg_deg(s + p))


def ray_points(num, den, zeta: float, sigma_floor: float, sign_ok) -> list[tuple[complex, float]]:
    """Points ``(s, K)`` where the locus of ``num/den`` crosses the damping ray ``zeta``.

    Only points with decay rate at least ``sigma_floor`` and a gain accepted
    by ``sign_ok(K)`` are kept.
    """
    direction = cmath.exp(1j * (math.pi - math.acos(zeta)))
    ks, ts = line_crossing_gains(num, den, 0j, direction)
    out = []
    for k, t in zip(ks, ts, strict=True):
        s = complex(t * direction)
        if t > 0 and -s.real >= sigma_floor and sign_ok(k):
            out.append((s, float(k)))
    return out


def line_points(num, den, sigma: float, sign_ok) -> list[tuple[complex, float]]:
    """Points ``(s, K)`` where the locus crosses the decay line ``Re s = -sigma`` (Im s > 0).

    ``sigma > 0``; a crossing within ``1e-12 sigma`` of the real axis is the
    real point itself, not a pair, and is left out (relative, so the test
    means the same at every frequency scale).
    """
    ks, ts = line_crossing_gains(num, den, complex(-sigma, 0.0), 1j)
    return [(complex(-sigma, t), float(k)) for k, t in zip(ks, ts, strict=True)
            if t > 1e-12 * sigma and sign_ok(k)]
