"""The ``[actuator]`` table: what the controller output can really do.

A linear model forgets that an actuator stops at its ends and moves no faster
than it can.  With ``[actuator]`` set, every time-domain verdict simulates the
loop with the saturation and the rate limit (:mod:`synth.verify.saturated`),
and a compensator with integral action is implemented with anti-windup
(:mod:`synth.verify.antiwindup`).

Operating point.  The plant model relates *deviations* from an operating
point: ``u = 0``, ``y = 0`` is the plant at rest there.  The file's
``limits`` are the actuator's own range (absolute values, e.g. a valve from 0
to 100 % open) and ``operating_point`` is the actuator output at the
operating point (default 0), so the simulation limits the deviation ``u`` to
``[low - operating_point, high - operating_point]``.  A range that excludes 0
is legitimate (a heater from 0 to 100 % running at 40 %), but then the
operating point must be given: without it synth cannot tell an absolute
range from a deviation range, and a model at rest outside the actuator's
range is a units mistake, so the file is refused with one line.  The
operating point may sit on an end (a heater off at rest): the loop then cannot
push below it, and the load-step metrics show that.

References
----------
.. [1] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   sec. 3.5 (integrator windup, actuator range and rate).
.. [2] K. J. Astrom and B. Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
   Prentice Hall, 1997, sec. 9.4 (actuator nonlinearities).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from synth.errors import InputError

__all__ = ["ACTUATOR_KEYS", "Actuator", "parse_actuator"]

#: The keys of the ``[actuator]`` table.
ACTUATOR_KEYS = ("limits", "operating_point", "max_rate", "reference_step", "load_step")


@dataclass(frozen=True)
class Actuator:
    """Actuator range, rate and the step sizes of the saturated simulations.

    Attributes
    ----------
    limits : (float, float) or None
        The actuator's range ``[low, high]`` as written in the file
        (``None``: no position limit, only a rate limit).
    operating_point : float
        Actuator output at the operating point of the model (default 0).
    max_rate : float or None
        Largest rate of change of the actuator output, units per second
        (``None``: no rate limit).
    reference_step : float
        Size of the reference step of the saturated simulations (default 1;
        negative for a step down).
    load_step : float
        Size of the load step at the plant input (default 1, the contract's
        unit load step).
    """

    limits: tuple[float, float] | None = None
    operating_point: float = 0.0
    max_rate: float | None = None
    reference_step: float = 1.0
    load_step: float = 1.0

    def __post_init__(self):
        if self.limits is None and self.max_rate is None:
            raise ValueError("an actuator needs limits, a max_rate or both")
        if self.limits is not None:
            lo, hi = self.limits
            if not lo < hi:
                raise ValueError(f"empty actuator range [{lo}, {hi}]")
            if not lo <= self.operating_point <= hi:
                raise ValueError("the operating point lies outside the actuator range")
        if self.max_rate is not None and not self.max_rate > 0:
            raise ValueError("max_rate must be positive")
        if self.reference_step == 0 or self.load_step == 0:
            raise ValueError("step sizes must not be zero")

    @property
    def deviation_limits(self) -> tuple[float, float]:
        """The range of the deviation ``u`` the loop works with (``-inf, inf`` without limits)."""
        if self.limits is None:
            return (-math.inf, math.inf)
        return (self.limits[0] - self.operating_point, self.limits[1] - self.operating_point)

    def describe(self) -> str:
        """The actuator in words, e.g. ``"output in [0, 100] (at rest 40), at most 5 /s"``."""
        parts = []
        if self.limits is not None:
            text = f"output in [{self.limits[0]:.4g}, {self.limits[1]:.4g}]"
            if self.operating_point:
                text += f" (at rest {self.operating_point:.4g})"
            parts.append(text)
        if self.max_rate is not None:
            parts.append(f"rate at most {self.max_rate:.4g} per s")
        return ", ".join(parts)

    def to_json(self) -> dict[str, Any]:
        """The table as plain JSON values (the design JSON's ``actuator``)."""
        return {"limits": None if self.limits is None else list(self.limits),
                "operating_point": self.operating_point, "max_rate": self.max_rate,
                "reference_step": self.reference_step, "load_step": self.load_step}


def _nonzero(v, src, key) -> float:
    from synth.problem.requirements import _num

    x = _num(v, src, key)
    if x == 0:
        raise InputError("must not be 0 (a step of size 0 tests nothing)", src, key)
    return x


def parse_actuator(table: Any, src: str) -> Actuator:
    """Validate the ``[actuator]`` table (one-line errors naming file and key).

    Parameters
    ----------
    table : dict
        The parsed table.
    src : str
        The file name for messages.

    Returns
    -------
    Actuator

    Raises
    ------
    InputError
        Unknown keys, wrong types, an empty range, a non-positive rate, a
        zero step, or an operating point outside the range (or a range that
        excludes 0 without an operating point).
    """
    from synth.problem.requirements import _num, _range, _unknown

    if not isinstance(table, dict):
        raise InputError(f"must be a table ([actuator]), got {type(table).__name__}", src,
                         "actuator")
    _unknown(table, set(ACTUATOR_KEYS), src, "actuator.")
    if "limits" not in table and "max_rate" not in table:
        raise InputError("needs limits = [low, high], max_rate or both", src, "actuator")
    limits = None
    if "limits" in table:
        limits = _range(table["limits"], src, "actuator.limits")
    op = 0.0
    if "operating_point" in table:
        op = _num(table["operating_point"], src, "actuator.operating_point")
        if limits is None:
            raise InputError("needs actuator.limits (it places the model's rest inside them)",
                             src, "actuator.operating_point")
        if not limits[0] <= op <= limits[1]:
            raise InputError(f"{op:g} lies outside the actuator range [{limits[0]:g}, "
                             f"{limits[1]:g}]", src, "actuator.operating_point")
    elif limits is not None and not limits[0] <= 0.0 <= limits[1]:
        raise InputError(f"[{limits[0]:g}, {limits[1]:g}] excludes 0, where the model is at "
                         "rest; give actuator.operating_point (the actuator output at the "
                         "model's operating point) or write the limits as deviations from it",
                         src, "actuator.limits")
    rate = None
    if "max_rate" in table:
        rate = _num(table["max_rate"], src, "actuator.max_rate", lo=0, lo_open=True)
    ref = _nonzero(table["reference_step"], src, "actuator.reference_step") \
        if "reference_step" in table else 1.0
    load = _nonzero(table["load_step"], src, "actuator.load_step") \
        if "load_step" in table else 1.0
    return Actuator(limits=limits, operating_point=op, max_rate=rate, reference_step=ref,
                    load_step=load)
