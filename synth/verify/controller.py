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

__all__ = ["AntiWindup", "Controller", "ReferenceShaping"]


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
