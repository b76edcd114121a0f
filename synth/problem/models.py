"""The set of plant models a design must satisfy: nominal plant, parameter ranges, variants.

A requirements file may describe more than one plant (see
``docs/requirements-file.md``, "Uncertain and multiple plants"):

* ``[plant.parameters]`` gives nominal values to names used in
  ``plant.expression`` (the expression grammar of
  :mod:`synth.problem.expression` looks the names up; nothing is evaluated);
* ``[plant.ranges]`` gives each of some parameters (and ``dead_time``) a
  closed interval: every point of the box is a model of the plant;
* ``[[plant.variants]]`` are further fixed models (operating points), each
  with its own label, plant form and dead time.

The nominal plant stays ``Problem.plant``: whatever ignores the other models
keeps working unchanged.  :class:`ModelSet` is the value every later stage
reads; how the verifier and the search walk the box is
:mod:`synth.verify.robust`.

Same input and output
---------------------
Every model must describe the same loop: the same actuator input and the same
measured output.  synth checks what that implies and a file can get wrong:
the low-frequency behaviour ``G(s) ~ c / s^n`` as ``s -> 0`` must have the
same number ``n`` of integrators (a negative ``n`` counts zeros at the origin)
and the same sign of ``c`` as the nominal plant (:func:`io_signature`).  A
variant with the opposite static sign would be a reverse-acting plant that
no single controller direction suits; a different number of integrators means
a different output (position versus speed).  Over a range the check runs at
every corner of the box, together with the order of the plant, so that no
range crosses a value where the plant changes order (a time constant through
zero).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from synth.problem.plant import Plant

__all__ = ["ModelSet", "ParameterRange", "Variant", "io_signature", "point_text"]

#: The name of the dead time among the ranges (it is no parameter of the expression).
DEAD_TIME = "dead_time"


@dataclass(frozen=True)
class ParameterRange:
    """One ``[plant.ranges]`` entry: the closed interval ``[lo, hi]`` of a parameter.

    Attributes
    ----------
    name : str
        A parameter of the expression, or ``"dead_time"``.
    lo, hi : float
        ``lo < hi``.
    nominal : float
        Its nominal value (inside the interval).
    """

    name: str
    lo: float
    hi: float
    nominal: float

    def value(self, u: float) -> float:
        """The value at the fraction ``u`` in [0, 1] of the interval (exact at both ends)."""
        if u <= 0.0:
            return self.lo
        if u >= 1.0:
            return self.hi
        return self.lo + u * (self.hi - self.lo)

    def unit(self, value: float) -> float:
        """The fraction of the interval at ``value`` (inverse of :meth:`value`)."""
        return (value - self.lo) / (self.hi - self.lo)


@dataclass(frozen=True)
class Variant:
    """A further fixed model (``[[plant.variants]]``): its label and plant."""

    label: str
    plant: Plant


def point_text(point: Mapping[str, float]) -> str:
    """A range point in words, ``"{k=2.6, T=6, dead_time=1.5}"`` (four significant digits)."""
    return "{" + ", ".join(f"{k}={v:.4g}" for k, v in point.items()) + "}"


def io_signature(plant: Plant) -> tuple[int, int]:
    """``(n, sign)`` of the plant's low-frequency form ``G(s) ~ c / s^n`` as ``s -> 0``.

    ``n`` counts poles at the origin minus zeros at the origin (exact zero
    trailing coefficients); ``sign`` is the sign of ``c``.  Two models with
    different signatures do not describe the same input and output (see the
    module docstring).
    """
    num, den = plant.rational_num, plant.rational_den

    def lowest(p):
        nz = np.flatnonzero(p)
        last = int(nz[-1])
        return p.size - 1 - last, float(p[last])

    zn, cn = lowest(num)
    zd, cd = lowest(den)
    return zd - zn, 1 if cn / cd > 0 else -1


def io_text(signature: tuple[int, int]) -> str:
    """A signature in words: ``"1 integrator, positive gain"``."""
    n, sign = signature
    word = "positive" if sign > 0 else "negative"
    if n == 0:
        return f"a {word} static gain"
    if n > 0:
        return f"{n} integrator{'s' if n > 1 else ''} and a {word} gain"
    return f"{-n} zero{'s' if n < -1 else ''} at the origin and a {word} gain"


@dataclass(frozen=True)
class ModelSet:
    """The plant models of a problem: the nominal plant, ranges of its parameters, variants.

    Attributes
    ----------
    nominal : Plant
        ``Problem.plant``.
    expression : str or None
        The nominal plant's expression when it names parameters.
    parameters : tuple of (str, float)
        Nominal parameter values, in the file's order.
    ranges : tuple of ParameterRange
        Parameter (and dead-time) ranges, in the file's order.
    variants : tuple of Variant
    """

    nominal: Plant
    expression: str | None = None
    parameters: tuple[tuple[str, float], ...] = ()
    ranges: tuple[ParameterRange, ...] = ()
    variants: tuple[Variant, ...] = ()

    # -- what there is ----------------------------------------------------------------------
    @property
    def is_single(self) -> bool:
        """Only the nominal plant (no ranges, no variants)."""
        return not self.ranges and not self.variants

    @property
    def names(self) -> tuple[str, ...]:
        """The names of the ranges (the box's coordinates), in the file's order."""
        return tuple(r.name for r in self.ranges)

    @property
    def nominal_point(self) -> dict[str, float]:
        """The nominal plant as a point of the box."""
        return {r.name: r.nominal for r in self.ranges}

    def parameter_values(self) -> dict[str, float]:
        return dict(self.parameters)

    # -- models -----------------------------------------------------------------------------
    def plant_at(self, point: Mapping[str, float]) -> Plant:
        """The plant at a point of the ranges (names left out keep their nominal values).

        Raises
        ------
        synth.errors.InputError
            When the expression cannot be built there (the parser's one-line
            message; the file's ranges were checked at every corner, so a
            point inside the box only fails for a programming error).
        """
        values = dict(self.parameters)
        dead = self.nominal.dead_time
        for name, v in point.items():
            if name == DEAD_TIME:
                dead = float(v)
            elif name in values:
                values[name] = float(v)
            else:
                raise KeyError(f"{name!r} is not a range of this model set")
        if self.expression is None:
            return Plant(self.nominal.numerator, self.nominal.denominator, dead,
                         self.nominal.pade_order, self.nominal.label)
        from synth.problem.expression import parse_rational

        num, den = parse_rational(self.expression, values)
        return Plant.from_coefficients(num, den, dead_time=dead,
                                       pade_order=self.nominal.pade_order,
                                       label=self.nominal.label)

    def point_from_unit(self, u) -> dict[str, float]:
        """The point of the box at unit coordinates ``u`` (one entry per range, in [0, 1])."""
        return {r.name: r.value(float(x)) for r, x in zip(self.ranges, u, strict=True)}

    def unit_of(self, point: Mapping[str, float]) -> np.ndarray:
        """Unit coordinates of a point (inverse of :meth:`point_from_unit`)."""
        return np.array([r.unit(float(point.get(r.name, r.nominal))) for r in self.ranges])

    @cached_property
    def corner_plants(self) -> tuple[tuple[dict[str, float], Plant], ...]:
        """Every corner of the box and its plant, ``(point, plant)`` (computed once).

        Raises
        ------
        synth.errors.InputError
            Naming the corner where the plant cannot be built (no file or key:
            the caller adds them).
        """
        from synth.errors import InputError

        out = []
        for corner in itertools.product((0.0, 1.0), repeat=len(self.ranges)):
            point = self.point_from_unit(corner)
            try:
                out.append((point, self.plant_at(point)))
            except InputError as err:
                raise InputError(f"at the corner {point_text(point)}: {err.message}") from None
        return tuple(out)

    # -- words and JSON ---------------------------------------------------------------------
    def describe(self) -> str:
        """The set in one line, e.g. ``"nominal, 2 variants, ranges of k, T, dead_time"``."""
        parts = ["nominal"]
        if self.variants:
            n = len(self.variants)
            parts.append(f"{n} variant{'s' if n > 1 else ''} ("
                         + ", ".join(v.label for v in self.variants) + ")")
        if self.ranges:
            parts.append("ranges " + ", ".join(
                f"{r.name} in [{r.lo:.4g}, {r.hi:.4g}]" for r in self.ranges))
        return "; ".join(parts)

    def to_json(self) -> dict:
        """The design document's ``models`` object (plain JSON values).

        ``{"expression": ..., "parameters": {name: value}, "ranges": {name: [lo, hi]},
        "variants": [{"label": ..., "plant": <plant object>}]}``; a reader
        rebuilds the plant at a range point with the same expression grammar.
        """
        out: dict = {}
        if self.expression is not None:
            out["expression"] = self.expression
            out["parameters"] = dict(self.parameters)
        if self.ranges:
            out["ranges"] = {r.name: [r.lo, r.hi] for r in self.ranges}
        if self.variants:
            out["variants"] = [{"label": v.label, "plant": v.plant.to_json()}
                               for v in self.variants]
        return out


def finite_point(point: Mapping[str, float]) -> bool:
    """Every coordinate finite (a guard for points produced by an optimiser)."""
    return all(math.isfinite(v) for v in point.values())
