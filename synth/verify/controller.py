"""The controller a verdict is about: the loop compensator plus what lives outside the loop.

A design is more than ``C(s)``: a reference prefilter ``F(s)`` or PID set-point
weights shape the reference response without touching the loop, and an
anti-windup scheme decides what the compensator does while the actuator
saturates.  :class:`Controller` carries all three, so the verifier, the
outputs and the firmware export read one value.

Loop signals (see the contract's diagram)::

    r -> F -> (+) -> C -> sat -> (+) -> G -> (+) -> y
             ^ -                  ^ d_load  ^ d_out     measurement = y + n

``F`` never changes the loop: stability and every frequency-domain metric are
``F``-free; only the reference-step metrics see it.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

__all__ = ["AntiWindup", "Controller", "ReferenceShaping", "setpoint_numerator"]


@dataclass(frozen=True)
class ReferenceShaping:
    """A reference prefilter ``F(s) = numerator / denominator`` or PID set-point weights.

    Exactly one of the two is given.  Set-point weights ``(b, c)`` act on the
    proportional and derivative terms of a PID (or PI, ``c`` unused):
    ``u = kp (b r - y) + ki/s (r - y) + kd s/(1 + s Tf) (c r - y)``.

    Attributes
    ----------
    numerator, denominator : tuple of float or None
        ``F(s)``, descending powers of s.
    setpoint_weights : tuple of (float, float) or None
        ``(b, c)``.
    method : str
        How it was chosen, in words (for the report).
    """

    numerator: tuple[float, ...] | None = None
    denominator: tuple[float, ...] | None = None
    setpoint_weights: tuple[float, float] | None = None
    method: str = ""

    def __post_init__(self):
        has_filter = self.numerator is not None or self.denominator is not None
        if has_filter == (self.setpoint_weights is not None):
            raise ValueError("give either a prefilter (numerator and denominator) or set-point "
                             "weights, not both or neither")
        if has_filter and (self.numerator is None or self.denominator is None):
            raise ValueError("a prefilter needs both numerator and denominator")


@dataclass(frozen=True)
class AntiWindup:
    """How the compensator behaves while the actuator saturates.

    Attributes
    ----------
    scheme : str
        ``"back-calculation"`` (PI/PID, with ``tracking_time``) or another
        documented scheme (see docs/methods.md).
    parameters : mapping of str to float
        The scheme's parameters, e.g. ``{"tracking_time": 1.3}``.
    """

    scheme: str
    parameters: Mapping[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class Controller:
    """A complete design: loop compensator ``C(s) = num/den``, reference shaping, anti-windup.

    Attributes
    ----------
    num, den : tuple of float
        ``C(s)``: numerator with the gain, monic denominator, descending powers.
    shaping : ReferenceShaping or None
        Reference prefilter or set-point weights (``None``: ``F = 1``).
    anti_windup : AntiWindup or None
        Anti-windup scheme (``None``: none; only matters with actuator limits).
    """

    num: tuple[float, ...]
    den: tuple[float, ...]
    shaping: ReferenceShaping | None = None
    anti_windup: AntiWindup | None = None

    @classmethod
    def of(cls, num_or_controller, den=None) -> Controller:
        """A :class:`Controller` from one, or from compensator polynomials ``(num, den)``."""
        if isinstance(num_or_controller, Controller):
            return num_or_controller
        if den is None:
            raise TypeError("compensator polynomials need both numerator and denominator")
        return cls(tuple(float(x) for x in num_or_controller), tuple(float(x) for x in den))

    def reference_path(self) -> tuple[np.ndarray, np.ndarray]:
        """The reference path ``C_r(s) = num_r / (den_extra * den)``: ``(num_r, den_extra)``.

        The control law is ``U = C_r R - C Y``.  Without shaping ``C_r = C``
        (``(num, [1])``); with set-point weights ``C_r`` has the loop's own
        denominator (:func:`setpoint_numerator`, ``den_extra = [1]``); with a
        prefilter ``C_r = F C`` (``(num_F num, den_F)``).  So the reference
        response is ``Y/R = num_G num_r / (den_extra (den_C den_G + num_C num_G))``.
        """
        num = np.asarray(self.num, dtype=float)
        s = self.shaping
        if s is None:
            return num, np.ones(1)
        if s.setpoint_weights is not None:
            b, c = s.setpoint_weights
            return setpoint_numerator(num, np.asarray(self.den, dtype=float), b, c), np.ones(1)
        return (np.polymul(np.asarray(s.numerator, dtype=float), num),
                np.asarray(s.denominator, dtype=float))


def setpoint_numerator(num, den, b: float, c: float) -> np.ndarray:
    """Numerator over ``den`` of the reference path of ``C = num/den`` with set-point weights.

    ``C`` is split into its integral, proportional and derivative parts,
    ``C(s) = ki/s + kp + D(s)`` with ``ki`` the residue at a simple pole at
    the origin (0 without one), ``kp`` the value at ``s = 0`` of what is left
    and ``D(0) = 0``; the reference path is ``ki/s + b kp + c D(s)`` over the
    same denominator (for a PID in parallel form ``kp + ki/s + kd s/(1 + s Tf)``
    this is ``b kp + ki/s + c kd s/(1 + s Tf)``).

    Parameters
    ----------
    num, den : array_like
        The compensator, descending powers of s (``den`` with at most a simple
        root at the origin).
    b, c : float
        Weights of the proportional and the derivative part.

    Returns
    -------
    ndarray
        Descending powers of s, over ``den`` (as long as ``den``).

    References
    ----------
    .. [1] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
       sec. 3.4 (set-point weighting).
    """
    num = np.trim_zeros(np.asarray(num, dtype=float), "f")
    den = np.trim_zeros(np.asarray(den, dtype=float), "f")
    width = den.size
    row = np.zeros((1, width))
    row[0, width - num.size:] = num
    return setpoint_numerators(row, den[None, :], b, c)[0]


def setpoint_numerators(num, den, b, c) -> np.ndarray:
    """:func:`setpoint_numerator` for a batch: rows of ``num`` and ``den`` of one shape.

    ``num`` and ``den`` are (B, k) arrays padded on the left to the same
    width ``k``, ``den`` monic or not, every row with a root at the origin
    or none; ``b`` and ``c`` scalars or (B,) arrays.  Returns (B, k).
    """
    num = np.asarray(num, dtype=float)
    den = np.asarray(den, dtype=float)
    b = np.asarray(b, dtype=float).reshape(-1, 1) if np.ndim(b) else float(b)
    c = np.asarray(c, dtype=float).reshape(-1, 1) if np.ndim(c) else float(c)
    integral = bool(den[0, -1] == 0.0) and den.shape[1] > 1
    d1 = den[:, :-1] if integral else den                # (B, k - 1) or (B, k)
    if integral and np.any(d1[:, -1] == 0.0):
        raise ValueError("set-point weights need at most one integrator in the compensator")
    if integral:
        ki = num[:, -1:] / d1[:, -1:]
        rest = num.copy()
        rest[:, 1:] -= ki * d1               # num - ki d1: its constant term cancels
        q = rest[:, :-1]                     # ... so divide by s
    else:
        ki = np.zeros((num.shape[0], 1))
        q = num
    kp = q[:, -1:] / d1[:, -1:]
    part = b * kp * d1 + c * (q - kp * d1)               # b kp + c D(s), over d1
    if integral:
        # ki d1 + s * part, over s d1 = den
        out = np.zeros_like(num)
        out[:, 1:] += ki * d1
        out[:, :-1] += part
        return out
    return part
