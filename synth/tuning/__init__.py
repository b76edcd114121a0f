"""Published PI/PID tuning rules and the model reductions they need.

Use :func:`published_tunings` for every rule at once on a plant, or the
rules (:mod:`synth.tuning.rules`) and reductions
(:mod:`synth.tuning.reduction`) one by one::

    from synth.tuning import published_tunings, half_rule, simc

    model = half_rule([1.0], [1.0, 3.0, 3.0, 1.0], dead_time=0.5)   # FOPDT
    tuning = simc(model, "PI")                                       # Tuning(kp, ki, ...)
    num, den = tuning.transfer_function()

Every rule comes from a linear model and aims at typical robustness, not at
a requirement: verify each setting against the requirements, saturation,
delay and nonlinearity, commission with reduced gains, and follow local
codes, functional-safety standards and licensed practice.

References
----------
.. [1] S. Skogestad, "Simple analytic rules for model reduction and PID
   controller tuning", J. Process Control 13 (2003) 291-309.
.. [2] K. J. Astrom and T. Hagglund, "Revisiting the Ziegler-Nichols step
   response method for PID control", J. Process Control 14 (2004) 635-650.
"""

from __future__ import annotations

from dataclasses import dataclass

from synth.tuning.reduction import (
    ProcessModel,
    RuleNotApplicable,
    half_rule,
    half_rule_factors,
    step_response_model,
)
from synth.tuning.rules import (
    DEFAULT_FILTER_N,
    RULES,
    Tuning,
    amigo,
    imc,
    simc,
    ziegler_nichols,
)

__all__ = ["DEFAULT_FILTER_N", "ProcessModel", "RULES", "RuleNotApplicable", "RuleSet",
           "Tuning", "amigo", "half_rule", "half_rule_factors", "imc", "published_tunings",
           "simc", "step_response_model", "ziegler_nichols"]


@dataclass(frozen=True)
class RuleSet:
    """The outcome of :func:`published_tunings`.

    Attributes
    ----------
    tunings : tuple of Tuning
        One per rule and structure that applies, in the order of ``RULES``.
    skipped : tuple of (rule, structure, reason)
        The rules that do not apply to this plant, with the reason.
    """

    tunings: tuple[Tuning, ...]
    skipped: tuple[tuple[str, str, str], ...]


def _model_for(rule: str, structure: str, num, den, dead_time: float):
    """The model each rule's paper uses; the half rule falls back to the two-point fit."""
    if rule == "Ziegler-Nichols":
        return step_response_model(num, den, dead_time, "tangent"), ()
    if rule == "AMIGO":
        return step_response_model(num, den, dead_time, "tangent-63"), ()
    order = 2 if (rule == "SIMC" and structure == "PID") else 1
    try:
        return half_rule(num, den, dead_time, order=order), ()
    except RuleNotApplicable as err:
        model = step_response_model(num, den, dead_time, "two-point")
        return model, (f"half rule not applicable ({err}); model from the step response "
                       "(two-point method)",)


def published_tunings(num, den, dead_time: float = 0.0,
                      structures: tuple[str, ...] = ("PI", "PID")) -> RuleSet:
    """Every published rule of :data:`RULES` on the plant ``num/den * exp(-dead_time s)``.

    Each rule gets the model its paper uses: Ziegler-Nichols the steepest
    tangent (``a``, ``L``), AMIGO the tangent and 63 % point (``K, L, T``),
    SIMC the half rule (FOPDT for PI, SOPDT for PID) and IMC the half-rule
    FOPDT.  Where the half rule does not apply (complex poles), the
    two-point step-response fit stands in and the tuning's notes say so.
    Integrating plants get the rules' integrating forms (IMC has none).

    Parameters
    ----------
    num, den : array_like
        Delay-free transfer function, descending powers of s.
    dead_time : float
    structures : tuple of {"PI", "PID"}

    Returns
    -------
    RuleSet

    References
    ----------
    See :mod:`synth.tuning.rules` for each rule's paper.
    """
    tunings: list[Tuning] = []
    skipped: list[tuple[str, str, str]] = []
    for name, rule in RULES.items():
        for structure in structures:
            try:
                model, notes = _model_for(name, structure, num, den, dead_time)
                t = rule(model, structure)
            except RuleNotApplicable as err:
                skipped.append((name, structure, str(err)))
                continue
            if notes:
                from dataclasses import replace

                t = replace(t, notes=(*t.notes, *notes))
            tunings.append(t)
    return RuleSet(tuple(tunings), tuple(skipped))
