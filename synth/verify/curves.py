"""What outputs draw for one design: the verifier's own time and frequency responses.

The report, the compare overlay and the implementation forms show curves and
read crossovers and a bandwidth; they take them from here rather than
simulating on their own, so every picture shows exactly what the verdict
judged (the exact dead time included).

References
----------
K. J. Astrom and R. M. Murray, *Feedback Systems*, Princeton University Press,
2008, ch. 9-11.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from synth.numerics.poly import trim
from synth.verify.frequency import LoopFrequency, loop_frequency
from synth.verify.loop import loop_polynomials
from synth.verify.simulation import StepResponse, simulate_step

if TYPE_CHECKING:
    from synth.verify.saturated import SaturatedLoop

__all__ = ["LoopCurves", "ModelCurves", "curves", "model_curves"]


@dataclass(frozen=True)
class LoopCurves:
    """Time and frequency responses of one loop, as the verifier computes them.

    Attributes
    ----------
    step : StepResponse or None
        Unit-step reference response (output and compensator output) over
        the verifier's horizon; ``None`` for an improper compensator (an
        ideal derivative answers a step with an impulse).
    frequency : LoopFrequency
        ``L(jw)`` on the verifier's grid, margins, crossovers, sensitivity
        peak, closed-loop bandwidth.
    closed_loop_poles : ndarray of complex
        Roots of the unreduced characteristic polynomial (engine form).
    stable : bool
        Every closed-loop pole in the open left half-plane.
    load : StepResponse or None
        Response to a unit load step at the plant input (``r = 0``), when the
        verifier computes one; outputs draw it when present.
    saturated : synth.verify.saturated.SaturatedLoop or None
        With ``problem.actuator``: the reference and load steps through the
        actuator's limits, with the controller's anti-windup (``None``
        without an actuator, for an unstable loop or an improper compensator).
    """

    step: StepResponse | None
    frequency: LoopFrequency
    closed_loop_poles: np.ndarray
    stable: bool
    load: StepResponse | None = None
    saturated: SaturatedLoop | None = None


def curves(problem, num_c, den_c=None, t_end: float | None = None, plant=None,
           shaping=None) -> LoopCurves:
    """The curves of the loop around ``problem.plant`` with compensator ``num_c/den_c``.

    Parameters
    ----------
    problem : synth.problem.requirements.Problem
        Its plant (exact dead time), requirements (the simulation horizon)
        and actuator.
    num_c, den_c : array_like, or a Controller and None
        Compensator polynomials, or a whole
        :class:`synth.verify.controller.Controller` (its shaping and
        anti-windup matter for the saturated responses).
    t_end : float, optional
        Simulation length of the linear step (default: the verifier's horizon).
    plant : synth.problem.plant.Plant, optional
        Another plant model of the problem (default ``problem.plant``), as
        :func:`synth.verify.verdict.plant_models` lists them.
    shaping : synth.verify.controller.ReferenceShaping, optional
        The design's reference shaping (the step response goes through it;
        the frequency response does not depend on it).

    Returns
    -------
    LoopCurves
    """
    from synth.verify.controller import Controller

    plant = problem.plant if plant is None else plant
    controller = Controller.of(num_c, den_c)
    if shaping is not None:
        from dataclasses import replace

        controller = replace(controller, shaping=shaping)
    nc, dc = trim(controller.num), trim(controller.den)
    _, _, char = loop_polynomials(plant, nc, dc)
    poles = np.roots(char) if char.size > 1 else np.zeros(0, complex)
    stable = bool(np.all(poles.real < 0))
    step = None
    if nc.size <= dc.size:
        step = simulate_step(plant, Controller(tuple(nc), tuple(dc), controller.shaping),
                             t_end=t_end, requirements=problem.requirements)
    saturated = None
    if problem.actuator is not None and stable and nc.size <= dc.size:
        from synth.verify.saturated import simulate_saturated

        (saturated,), _ = simulate_saturated(plant, [controller], problem.actuator,
                                             problem.requirements)
    return LoopCurves(step=step, frequency=loop_frequency(plant, nc, dc),
                      closed_loop_poles=poles, stable=stable, saturated=saturated)


@dataclass(frozen=True)
class ModelCurves:
    """The curves of one design's loop around one plant model.

    Attributes
    ----------
    name : str
        The model in words (``"nominal"``, a variant's label, ``{k=2.6, T=6}``).
    model : str or dict
        As the design JSON names it (``worst_case[...]["model"]``).
    curves : LoopCurves
        Computed exactly as for the nominal plant (exact dead time).
    worst_for : tuple of str
        Metric keys whose worst value over the models occurs here.
    """

    name: str
    model: str | dict
    curves: LoopCurves
    worst_for: tuple[str, ...] = ()


def model_curves(problem, num_c, den_c, models, t_end: float | None = None
                 ) -> tuple[ModelCurves, ...]:
    """The curves of one design around several plant models (for the report's overlay).

    Parameters
    ----------
    problem : synth.problem.requirements.Problem
        Its requirements (the simulation horizon).
    num_c, den_c : array_like
        Compensator polynomials.
    models : iterable of (name, model, plant, worst_for)
        The models to draw: the nominal plant, the variants and the models where
        some metric is worst (the design JSON's ``worst_case``); see
        :func:`synth.design.prepare_report`.
    t_end : float, optional
        Common simulation length (default: the longest of the verifier's
        horizons over the models, so every curve covers the same span).

    Returns
    -------
    tuple of ModelCurves
    """
    models = list(models)
    first = [(name, model, plant, worst, curves(_with_plant(problem, plant), num_c, den_c,
                                                t_end))
             for name, model, plant, worst in models]
    if t_end is None:
        ends = [c.step.t[-1] for *_, c in first if c.step is not None and c.step.t.size]
        span = max(ends) if ends else None
        first = [(name, model, plant, worst,
                  c if c.step is None or span is None or c.step.t[-1] >= span
                  else curves(_with_plant(problem, plant), num_c, den_c, span))
                 for name, model, plant, worst, c in first]
    return tuple(ModelCurves(name=name, model=model, curves=c, worst_for=tuple(worst))
                 for name, model, _, worst, c in first)


def _with_plant(problem, plant):
    """The problem with another plant model (requirements and search unchanged)."""
    from dataclasses import replace

    return replace(problem, plant=plant, models=None)
