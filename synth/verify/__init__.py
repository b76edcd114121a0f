"""The judge: full verification of a compensator against the requirements.

The package splits the work the way the data flows:

* :mod:`synth.verify.loop` - the unreduced loop and characteristic polynomials;
* :mod:`synth.verify.screening` - cheap batched screens for searches;
* :mod:`synth.verify.simulation` - the one step simulation (exact dead time) and realisation;
* :mod:`synth.verify.frequency` - the one frequency grid, margins, sensitivity peak, bandwidth;
* :mod:`synth.verify.verdict` - :func:`verify` and the :class:`Verdict` (limits by the catalogue);
* :mod:`synth.verify.curves` - what outputs draw (:func:`~synth.verify.curves.curves`);
* :mod:`synth.verify.sampled` - the sampled loop behind a zero-order hold;
* :mod:`synth.verify.same` - the one "same design" rule;
* :mod:`synth.verify.estimate` - batched estimates of a loop's metrics (search and screening);
* :mod:`synth.verify.robust` - several plant models: which are checked, the worst-case
  search, robust stability of a box of parameters.
"""

from synth.numerics.poly import batch_polymul
from synth.verify.frequency import LoopFrequency, frequency_metrics, loop_frequency
from synth.verify.loop import loop_polynomials
from synth.verify.screening import ScreenResult, screen_batch
from synth.verify.simulation import StepResponse, simulate_step, step_metrics, step_response
from synth.verify.verdict import METRIC_KEYS, Verdict, WorstCase, verify

__all__ = [
    "METRIC_KEYS",
    "LoopFrequency",
    "ScreenResult",
    "StepResponse",
    "Verdict",
    "WorstCase",
    "batch_polymul",
    "frequency_metrics",
    "loop_frequency",
    "loop_polynomials",
    "screen_batch",
    "simulate_step",
    "step_metrics",
    "step_response",
    "verify",
]
