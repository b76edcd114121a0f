"""The verifier along a design's root locus: every check at a dense set of gains around it.

An engineer understands a loop by moving the gain and watching poles, step
response and margins change.  :func:`gain_sweep` runs the full verifier
(:func:`synth.verify.verdict.verify`, every requirement judged by the
catalogue) and the curves the outputs draw (:func:`synth.verify.curves.curves`,
exact dead time) at the design's compensator with its gain ``K`` multiplied by
each factor of :data:`GAIN_FACTORS` (0.2 to 5, logarithmically spaced, 1
exactly among them).  The interactive report page embeds the result as data,
so the page needs no numerics of its own.

The compensator's zeros and poles stay where they are; only ``K`` moves, so
every point lies on the design loop's root locus (``synth trace --design``).
Reference shaping and anti-windup go with the compensator unchanged.

When the problem has more than one plant model
(:func:`synth.verify.verdict.plant_models`), each point also carries every
model's own result and curves; the verdict is the aggregate over the models.

References
----------
.. [1] W. R. Evans, "Control system synthesis by root locus method",
   Trans. AIEE 69(1), 1950 (the locus as the gain varies).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

import numpy as np

from synth.numerics.poly import trim
from synth.verify.controller import Controller
from synth.verify.curves import LoopCurves, curves
from synth.verify.verdict import ModelResult, Verdict, evaluate_model, plant_models, verify

__all__ = ["GAIN_FACTORS", "GainPoint", "GainSweep", "ModelPoint", "gain_factors", "gain_sweep"]


def gain_factors(low: float = 0.2, high: float = 5.0, count: int = 25) -> tuple[float, ...]:
    """Logarithmically spaced multipliers of the design gain, with 1 exactly among them.

    Parameters
    ----------
    low, high : float
        Smallest and largest factor (``0 < low < 1 < high``).
    count : int
        How many; odd counts with ``low * high == 1`` put 1 in the middle.

    Returns
    -------
    tuple of float
        Ascending.
    """
    if not (0 < low < 1 < high) or count < 3:
        raise ValueError("need 0 < low < 1 < high and at least three factors")
    f = np.geomspace(low, high, count)
    f[int(np.argmin(np.abs(np.log(f))))] = 1.0
    return tuple(float(x) for x in f)


#: The multipliers of the design gain the interactive page offers (0.2x to 5x).
GAIN_FACTORS = gain_factors()


@dataclass(frozen=True)
class ModelPoint:
    """One plant model's result at one gain.

    Attributes
    ----------
    label : str
        The model (``"nominal"``, a variant's label, parameter values).
    result : synth.verify.verdict.ModelResult
    curves : synth.verify.curves.LoopCurves
    """

    label: str
    result: ModelResult
    curves: LoopCurves


@dataclass(frozen=True)
class GainPoint:
    """The verifier at one gain of the sweep.

    Attributes
    ----------
    factor : float
        Multiplier of the design's gain.
    gain : float
        The compensator gain ``K`` there.
    controller : synth.verify.controller.Controller
        The compensator with that gain (shaping and anti-windup as designed).
    verdict : synth.verify.verdict.Verdict
        Every requirement judged, over every plant model.
    curves : synth.verify.curves.LoopCurves
        The nominal loop's curves over the sweep's common time span.
    models : tuple of ModelPoint
        Each plant model's result and curves, when there is more than one.
    """

    factor: float
    gain: float
    controller: Controller
    verdict: Verdict
    curves: LoopCurves
    models: tuple[ModelPoint, ...] = ()


@dataclass(frozen=True)
class GainSweep:
    """The verifier along the design's locus.

    Attributes
    ----------
    points : tuple of GainPoint
        By ascending factor.
    t_end : float or None
        Common length of the time responses (``None``: each gain's own horizon).
    """

    points: tuple[GainPoint, ...]
    t_end: float | None

    @property
    def design_index(self) -> int:
        """Index of the verified design itself (factor 1)."""
        return int(np.argmin([abs(np.log(p.factor)) for p in self.points]))

    @property
    def design(self) -> GainPoint:
        """The point of the verified design (factor 1)."""
        return self.points[self.design_index]


def _scaled(controller: Controller, factor: float) -> Controller:
    return dataclasses.replace(controller, num=tuple(factor * c for c in controller.num))


def gain_sweep(problem, controller: Any, factors=GAIN_FACTORS,
               t_end: float | None = None) -> GainSweep:
    """Verify ``controller`` with its gain multiplied by each factor.

    Parameters
    ----------
    problem : synth.problem.requirements.Problem
    controller : Controller or (num, den)
        The design (compensator ``K * monic num / monic den``).
    factors : iterable of float
        Multipliers of ``K`` (positive; default :data:`GAIN_FACTORS`).
    t_end : float, optional
        Common simulated length of every step response (default: each gain's
        own verifier horizon).

    Returns
    -------
    GainSweep
    """
    if not isinstance(controller, Controller):
        controller = Controller.of(*controller)
    fs = sorted(float(f) for f in factors)
    if not fs or fs[0] <= 0:
        raise ValueError("gain factors must be positive")
    models = plant_models(problem)
    k0 = float(trim(controller.num)[0] / trim(controller.den)[0])
    points = []
    for f in fs:
        c = _scaled(controller, f)
        verdict = verify(problem, c)
        # at an unstable gain the response grows without bound over the common span; its
        # overflow is expected (the outputs clip what they draw)
        with np.errstate(over="ignore", invalid="ignore"):
            nominal = curves(problem, c.num, c.den, t_end=t_end)
            per_model: tuple[ModelPoint, ...] = ()
            if len(models) > 1:
                per_model = tuple(
                    ModelPoint(label, evaluate_model(problem, plant, c, label=label),
                               curves(problem, c.num, c.den, t_end=t_end, plant=plant))
                    for label, plant in models)
        points.append(GainPoint(factor=f, gain=float(f * k0), controller=c, verdict=verdict,
                                curves=nominal, models=per_model))
    return GainSweep(points=tuple(points), t_end=t_end)
