"""Reference shaping: set-point weights or a prefilter chosen after the loop (``reference_shaping``).

The loop ``C`` is chosen for the objective (load rejection, robustness,
noise); how the output follows a reference step is then shaped outside the
loop, so stability, the load response and every frequency-domain metric stay
as they are (see the loop diagram of the contract).  With ``[search]
reference_shaping = true`` (the default) :func:`choose_shaping` picks, for
one design, among

* **set-point weights** ``(b, c)`` for the structures that take them (P, PI,
  PD, PID; ``u = kp (b r - y) + ki/s (r - y) + kd s/(1 + s Tf) (c r - y)``):
  ``b`` from :data:`WEIGHTS` and ``c = 0`` (no derivative kick, common
  practice); for a loop without integral action ``b = 1/T(0)`` instead, which
  brings the output's final value to the reference;
* a **prefilter** ``F(s)`` for the other structures: the static gain
  correction ``F = 1/T(0)`` of a type-0 loop, and first-order lags
  ``F = g / (tau s + 1)`` with ``tau`` a fraction of ``1/w_c`` (``w_c`` the gain
  crossover) that smooth the reference's overshoot and the control effort.

The static correction is offered only when the loop's own static gain
``|L(0)|`` is at least 1 (feedback then carries at least half of the static
response, so a plant-gain error moves the final value by less than half as
much).  Choice: the least shortfall of the reference-step requirements, then
the objective's value (``speed`` and ``effort`` read the reference step),
then the shorter settling time, then no shaping, then the weight closest to
1.  The reference response is affine in ``b`` (``y(b) = y(0) + b (y(1) -
y(0))``), so every weight costs one combination of two simulations.

In the search.  The global search (:mod:`synth.strategies.evolve`) estimates
the shaped response the same way (the weights of
:data:`synth.strategies.evolve.SEARCH_WEIGHTS`, the static correction), so a
loop that is best for the objective is not pushed away by a reference-step
limit that shaping can meet.

References
----------
.. [1] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   sec. 3.4 (set-point weighting) and 4.6 (two-degree-of-freedom structures).
.. [2] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control
   of Dynamic Systems*, Pearson, 2015, sec. 7.9 (reference input gain of a
   type-0 loop).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from synth.numerics.poly import trim

__all__ = ["WEIGHTS", "ShapingChoice", "choose_shaping", "shape_designs", "static_gain"]

#: Proportional set-point weights tried for a loop with integral action.
WEIGHTS = (1.0, 0.9, 0.8, 0.7, 0.6, 0.5, 0.4, 0.3, 0.2, 0.1, 0.0)
#: Prefilter time constants tried, in units of 1 / (gain crossover frequency).
LAG_FRACTIONS = (0.5, 1.0, 2.0)


@dataclass(frozen=True)
class ShapingChoice:
    """The shaping chosen for one design and the reference-step figures it gives."""

    shaping: object
    metrics: dict
    shortfall: float


def static_gain(plant, num, den) -> float | None:
    """``1/T(0)`` of a type-0 loop whose static loop gain is at least 1, else ``None``.

    ``T(0) = L(0) / (1 + L(0))`` from the constant coefficients (exact; the
    Pade form of a dead time has gain 1 at s = 0).
    """
    n0 = float(trim(np.asarray(num, dtype=float))[-1] * plant.num[-1])
    d0 = float(trim(np.asarray(den, dtype=float))[-1] * plant.den[-1])
    if d0 == 0.0 or n0 == 0.0 or abs(n0) < abs(d0):
        return None                    # integral action (T(0) = 1), no gain, or |L(0)| < 1
    t0 = n0 / (n0 + d0)
    return 1.0 / t0 if math.isfinite(t0) and t0 != 0.0 else None


def _options(problem, structure, num, den, crossover):
    """The shapings worth trying for one design (``None`` = no shaping first)."""
    from synth.families import FAMILIES
    from synth.verify.controller import ReferenceShaping

    fam = FAMILIES.get(structure)
    integral = trim(np.asarray(den, dtype=float))[-1] == 0.0
    g = static_gain(problem.plant, num, den)
    out = [None]
    if fam is not None and fam.setpoint_weights:
        if integral:
            out += [ReferenceShaping(setpoint_weights=(b, 0.0),
                                     method=f"set-point weights b = {b:g}, c = 0")
                    for b in WEIGHTS]
        elif g is not None:
            out.append(ReferenceShaping(setpoint_weights=(g, 0.0),
                                        method="set-point weight b = 1/T(0): no steady-state "
                                               "error on a reference step"))
        return out
    gains = [1.0] if g is None else [1.0, g]
    if g is not None:
        out.append(ReferenceShaping(numerator=(g,), denominator=(1.0,),
                                    method="static gain 1/T(0): no steady-state error on a "
                                           "reference step"))
    if crossover is not None and crossover > 0:
        for k in gains:
            for f in LAG_FRACTIONS:
                tau = f / crossover
                out.append(ReferenceShaping(numerator=(k,), denominator=(tau, 1.0),
                                            method=f"first-order prefilter, time constant "
                                                   f"{tau:.3g} s" + (" with static gain 1/T(0)"
                                                                     if k != 1.0 else "")))
    return out


def choose_shaping(problem, structure, num, den, verdict=None) -> ShapingChoice:
    """The reference shaping of one design (see the module docstring).

    Parameters
    ----------
    problem : synth.problem.Problem
    structure : str
    num, den : array_like
        The loop compensator.
    verdict : synth.verify.Verdict, optional
        Its (unshaped) verdict: the loop metrics the objective needs.

    Returns
    -------
    ShapingChoice
        ``shaping`` None when no shaping is better than none.
    """
    from synth.problem.catalogue import REQUIREMENTS
    from synth.problem.objectives import ObjectiveScales, objective
    from synth.verify.controller import Controller
    from synth.verify.simulation import simulate_step, step_metrics

    req = problem.requirements
    metrics = dict(verdict.metrics) if verdict is not None else {}
    opts = _options(problem, structure, num, den, metrics.get("crossover_frequency"))
    if len(opts) == 1:
        return ShapingChoice(None, {}, 0.0)
    obj = objective(problem)
    scales = ObjectiveScales.for_problem(problem)
    refs = [(e, lim) for e, lim in req.limits() if e.concerns == "reference"]
    context = {k: req.value(k) for k in REQUIREMENTS}
    base = Controller.of(num, den)
    # one common horizon: the unshaped response's (a prefilter adds its own lag)
    first = simulate_step(problem.plant, base, requirements=req)
    t_end = float(first.t[-1])
    affine = {}
    best = None
    for i, sh in enumerate(opts):
        if sh is None:
            resp = first
        elif sh.setpoint_weights is not None and sh.setpoint_weights[1] == 0.0 and \
                trim(np.asarray(den, dtype=float))[-1] == 0.0:
            # y(b) = y(0) + b (y(1) - y(0)): two simulations for every weight
            if not affine:
                for b in (0.0, 1.0):
                    c = replace(base, shaping=type(sh)(setpoint_weights=(b, 0.0)))
                    affine[b] = simulate_step(problem.plant, c, t_end=t_end)
            b = sh.setpoint_weights[0]
            r0, r1 = affine[0.0], affine[1.0]
            resp = type(r0)(t=r0.t, y=r0.y + b * (r1.y - r0.y), u=r0.u + b * (r1.u - r0.u),
                            final_value=r0.final_value + b * (r1.final_value - r0.final_value),
                            exact_delay=r0.exact_delay)
        else:
            resp = simulate_step(problem.plant, replace(base, shaping=sh),
                                 t_end=max(t_end, _prefilter_horizon(sh, t_end)))
        m = step_metrics(resp, req.settling_band)
        short = 0.0
        for entry, limit in refs:
            found = entry.assess(m.get(entry.metric), limit, context)
            if found is not None:
                short += found[0]
        value = float(obj.values({**metrics, **m}, scales))
        ts = m.get("settling_time")
        ts = math.inf if ts is None else float(ts)
        wt = abs(1.0 - sh.setpoint_weights[0]) if (sh is not None and sh.setpoint_weights) \
            else (0.0 if sh is None else 1.0)
        key = (round(short, 9), _sig(value), _sig(ts), sh is not None, wt, i)
        if best is None or key < best[0]:
            best = (key, sh, m, short)
    return ShapingChoice(best[1], best[2], best[3])


def _sig(v: float) -> float:
    return float(f"{v:.6g}") if math.isfinite(v) else math.inf


def _prefilter_horizon(sh, t_end: float) -> float:
    """A prefilter's lag stretches the reference response: cover ten of its time constants."""
    den = trim(np.asarray(sh.denominator, dtype=float))
    if den.size < 2:
        return t_end
    poles = np.roots(den)
    rate = float(np.min(-poles.real)) if poles.size else math.inf
    return t_end + (10.0 / rate if rate > 0 else 0.0)


def shape_designs(problem, pairs, limit: int, verify_options=None):
    """The finishing stage: reference shaping for the first ``limit`` designs of a ranking.

    Parameters
    ----------
    problem : synth.problem.Problem
    pairs : list of (Candidate, Verdict)
        In rank order (the verdicts unshaped).
    limit : int
        How many of the first designs to shape.
    verify_options : dict, optional
        Keyword arguments of :func:`synth.verify.verify` for the shaped
        designs' new verdicts (a quick first-pass verdict, say).

    Returns
    -------
    list of (Candidate, Verdict)
        The same list with ``Candidate.shaping`` set and the design verified
        again where a shaping was chosen (only the reference-step metrics
        change).
    """
    from synth.verify.verdict import verify

    if not problem.search.reference_shaping:
        return list(pairs)
    from synth.problem.catalogue import REQUIREMENTS

    out = list(pairs)
    for i, (cand, verdict) in enumerate(out[:limit]):
        # shaping only changes the reference step: not worth simulating for a loop that
        # fails anything else
        if not verdict.stable or any(
                k not in REQUIREMENTS or REQUIREMENTS[k].concerns != "reference"
                for k in verdict.shortfalls):
            continue
        choice = choose_shaping(problem, cand.structure, cand.num, cand.den, verdict)
        if choice.shaping is None:
            continue
        shaped = replace(cand, shaping=choice.shaping)
        out[i] = (shaped, verify(problem, shaped.controller, **(verify_options or {})))
    return out
