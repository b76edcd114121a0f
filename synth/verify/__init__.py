"""The judge: full verification of a compensator against the requirements.

The package splits the work the way the data flows:

* :mod:`synth.verify.loop` - the unreduced loop and characteristic polynomials;
* :mod:`synth.verify.screening` - cheap batched screens for searches;
* :mod:`synth.verify.simulation` - time responses (exact dead time);
* :mod:`synth.verify.frequency` - margins and sensitivity peaks;
* :mod:`synth.verify.verdict` - :func:`verify` and the :class:`Verdict`.
"""

from synth.numerics.poly import batch_polymul
from synth.verify.frequency import frequency_metrics
from synth.verify.loop import loop_polynomials
from synth.verify.screening import ScreenResult, screen_batch
from synth.verify.simulation import StepResponse, step_metrics, step_response
from synth.verify.verdict import METRIC_KEYS, Verdict, verify

__all__ = [
    "METRIC_KEYS",
    "ScreenResult",
    "StepResponse",
    "Verdict",
    "batch_polymul",
    "frequency_metrics",
    "loop_polynomials",
    "screen_batch",
    "step_metrics",
    "step_response",
    "verify",
]
