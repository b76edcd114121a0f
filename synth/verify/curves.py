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

import numpy as np

from synth.numerics.poly import trim
from synth.verify.frequency import LoopFrequency, loop_frequency
from synth.verify.loop import loop_polynomials
from synth.verify.simulation import StepResponse, simulate_step

__all__ = ["LoopCurves", "curves"]


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
    """

    step: StepResponse | None
    frequency: LoopFrequency
    closed_loop_poles: np.ndarray
    stable: bool


def curves(problem, num_c, den_c, t_end: float | None = None, shaping=None) -> LoopCurves:
    """The curves of the loop around ``problem.plant`` with compensator ``num_c/den_c``.

    Parameters
    ----------
    problem : synth.problem.requirements.Problem
        Its plant (exact dead time) and requirements (the simulation horizon).
    num_c, den_c : array_like
        Compensator polynomials.
    t_end : float, optional
        Simulation length (default: the verifier's horizon).
    shaping : synth.verify.controller.ReferenceShaping, optional
        The design's reference shaping (the step response goes through it;
        the frequency response does not depend on it).

    Returns
    -------
    LoopCurves
    """
    nc, dc = trim(num_c), trim(den_c)
    _, _, char = loop_polynomials(problem.plant, nc, dc)
    poles = np.roots(char) if char.size > 1 else np.zeros(0, complex)
    stable = bool(np.all(poles.real < 0))
    step = None
    if nc.size <= dc.size:
        from synth.verify.controller import Controller

        step = simulate_step(problem.plant, Controller(tuple(nc), tuple(dc), shaping), t_end=t_end,
                             requirements=problem.requirements)
    return LoopCurves(step=step, frequency=loop_frequency(problem.plant, nc, dc),
                      closed_loop_poles=poles, stable=stable)
