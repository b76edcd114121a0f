"""The judge: full verification of a compensator against the requirements.

Every design that synth reports passes through :func:`verify`.  It works on
the UNREDUCED closed-loop characteristic polynomial ``den_C den_G + num_C num_G``
(engine form, the dead time by its Pade form), so a pole-zero cancellation can
never hide a mode, and decides:

* closed-loop poles and internal stability (an unstable cancellation between
  compensator and plant is named and rejected);
* the minimum damping ratio over every closed-loop pole and membership of the
  requirement region (reported as ``in_region``; the region is the search's
  guide, not a requirement of its own: overshoot and settling time are judged
  by the simulation, damping by every pole);
* the exact interval of plant-gain factors around 1 that keeps the loop stable
  (:func:`synth.locus.core.stable_gain_intervals`), against the required range;
* the compensator gain against the allowed range;
* a unit-step simulation (overshoot against the final value, settling time as
  the last time outside the band, 10-90 % rise time, steady-state error, peak
  compensator output) -- with the EXACT dead time, see :func:`step_response`;
* frequency-domain margins with the exact dead time in ``L(jw)``: gain margin,
  phase margin, delay margin and peak sensitivity, from a dense logarithmic
  grid refined at every crossing.

:func:`screen_batch` is the cheap batched counterpart for searches: stability,
region membership and stability at test points of the plant-gain range, by the
eigenvalue-free kernel of :mod:`synth.numerics.screening`.

Definitions
-----------
Phase margin is the angular distance of ``L(j w_c)`` from -1 at each gain
crossover (0 to 180 degrees), the smallest over all crossovers; the delay
margin is the smallest extra dead time that rotates some crossover onto -1,
``((arg L(j w_c) + 180 deg) mod 360 deg) / w_c``.  Gain margin is the smallest
factor ``> 1`` by which the loop gain can grow before the Nyquist plot passes
through -1, i.e. ``1 / |L|`` at the phase crossovers where ``|L| < 1``
(``null`` when there is none).  All metrics of an unstable loop except the
poles are ``null``.

References
----------
.. [1] K. J. Astrom and R. M. Murray, *Feedback Systems*, Princeton
   University Press, 2008, ch. 9-10 (Nyquist criterion, stability margins,
   sensitivity peak).
.. [2] G. F. Franklin, J. D. Powell and M. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 6 (zero- and
   triangle-hold equivalents, exact step-invariant discretisation).
.. [3] C. F. Van Loan, "Computing integrals involving the matrix
   exponential", IEEE Trans. Automatic Control 23(3), 1978 (block matrix
   exponentials for the hold integrals).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from synth.numerics.poly import common_roots, format_complex, scaled_roots, trim
from synth.numerics.scaling import EPS
from synth.problem.catalogue import METRICS, REQUIREMENTS
from synth.verify.loop import loop_polynomials
from synth.verify.simulation import step_metrics

#: The contract's metric names, in order.
METRIC_KEYS = tuple(k for k, m in METRICS.items() if m.contract)

#: Relative distance under which a compensator root and a plant root count as cancelling.
_CANCEL_RTOL = 1e-5


#: Shortfall assigned to an unstable loop (ranks below any stable one).
_UNSTABLE_SHORTFALL = 100.0


@dataclass(frozen=True)
class Verdict:
    """Everything the verifier found about one compensator.

    Attributes
    ----------
    metrics : dict
        The contract's metric keys (``METRIC_KEYS``) plus ``delay_margin``,
        ``crossover_frequency``, ``final_value``, ``in_region`` and ``gain``;
        ``None`` for unbounded or undefined values.
    violations : tuple of str
        What is not met, each with the numbers.
    feasible : bool
        No violations.
    closed_loop_poles : tuple of complex
        Roots of the unreduced characteristic polynomial.
    stable, internally_stable : bool
    shortfall : float
        Sum of the normalised excesses over the violated requirements (0 when
        feasible; at least 100 for an unstable loop), used to order the
        nearest designs when none is feasible.
    shortfalls : dict
        The excess per violated requirement, keyed by its file key (see
        :mod:`synth.problem.catalogue`), plus ``"stability"`` and
        ``"internal_stability"``.
    witnesses : dict
        Where a metric's value occurs, by metric key, in words (the least
        damped pole for ``min_damping_ratio``).
    notes : tuple of str
        Facts worth showing that are not violations (stable cancellations, ...).
    exact_delay : bool
        Time-domain metrics from the exact-delay simulation (always true
        without dead time).
    linear_metrics, saturated_metrics : dict
        With ``[actuator]``: the time-domain metrics of the linear loop (small
        steps, the actuator within its limits) and of the loop with the
        limited actuator (steps of the actuator table's sizes); ``metrics``
        holds the worse of the two.
    worst_case : dict
        With several plant models: metric key -> :class:`WorstCase` (the
        metrics above are these worst values); empty for a single plant.
    robustness : dict or None
        With several plant models: how they were checked (JSON values; see
        :func:`verify`).
    model_results : tuple of (ModelPoint, ModelResult)
        The models evaluated exactly, nominal first.
    """

    metrics: dict[str, Any]
    violations: tuple[str, ...]
    feasible: bool
    closed_loop_poles: tuple[complex, ...]
    stable: bool
    internally_stable: bool
    shortfall: float
    notes: tuple[str, ...] = ()
    exact_delay: bool = True
    shortfalls: dict[str, float] = field(default_factory=dict)
    witnesses: dict[str, str] = field(default_factory=dict)
    linear_metrics: dict[str, Any] = field(default_factory=dict)
    saturated_metrics: dict[str, Any] = field(default_factory=dict)
    worst_case: dict[str, WorstCase] = field(default_factory=dict)
    robustness: dict[str, Any] | None = None
    model_results: tuple = ()


@dataclass(frozen=True)
class WorstCase:
    """The worst value of one metric over the plant models, and the model where it occurs.

    Attributes
    ----------
    value : float, list or None
        As in :attr:`Verdict.metrics`.
    model : synth.verify.robust.ModelPoint
        Where it occurs.
    exact : bool
        From the exact evaluation of that model (``False``: a screening
        estimate, only in a quick verdict).
    """

    value: Any
    model: Any
    exact: bool = True

    def to_json(self) -> dict:
        """The contract's ``{"value": v, "model": "label or {name: value}"}``."""
        out = {"value": self.value, "model": self.model.to_json()}
        if not self.exact:
            out["estimated"] = True
        return out


def _cancellations(plant, nc, dc) -> list[tuple[str, complex]]:
    """Compensator roots that coincide with plant roots: ``(kind, root)`` pairs."""
    out = []
    if nc.size > 1:
        for r in common_roots(nc, plant.den, rtol=_CANCEL_RTOL):
            out.append(("zero", r))
    if dc.size > 1 and plant.num.size > 1:
        for r in common_roots(dc, plant.num, rtol=_CANCEL_RTOL):
            out.append(("pole", r))
    return out


def internal_stability(plant, nc, dc, violations: list, short: dict, notes: list) -> bool:
    """Judge cancellations between compensator and plant; append what was found.

    An unstable cancellation (a root with non-negative real part, judged
    relative to its size so one at the origin counts) is a violation with
    shortfall ``internal_stability``; a stable one is a note.  Returns whether
    the loop is internally stable as far as cancellations go.
    """
    ok = True
    for kind, r in _cancellations(plant, nc, dc):
        what = ("compensator zero at {z} cancels the plant pole at {z}" if kind == "zero"
                else "compensator pole at {z} cancels the plant zero at {z}")
        text = what.format(z=format_complex(r))
        if r.real >= -1e-9 * abs(r):  # relative: a cancellation at the origin is unstable
            ok = False
            violations.append(f"internally unstable: {text}; the unstable mode stays in the "
                              "loop and no output shows it")
            short["internal_stability"] = 2 * _UNSTABLE_SHORTFALL
        else:
            notes.append(f"{text} (a stable hidden mode decaying at rate {_fmt(-r.real)} 1/s)")
    return ok


def _fmt(v: float, digits: int = 3) -> str:
    return f"{v:.{digits}g}"


@dataclass(frozen=True)
class ModelResult:
    """What the verifier found for one plant model (see :func:`evaluate_model`).

    Attributes
    ----------
    label : str
        Which model: ``"nominal"`` or a variant's label or parameter values.
    metrics : dict
        Metric key -> value (``None`` unbounded or undefined), as in :class:`Verdict`.
    witnesses : dict
        Where a metric's value occurs, by metric key, in words.
    poles : ndarray of complex
        Roots of the unreduced characteristic polynomial, sorted.
    stable, internally_stable : bool
    violations : tuple of str
        Violations that are not limits of the file: instability, an unstable
        cancellation, an ill-posed loop.
    shortfalls : dict
        Their shortfalls (``"stability"``, ``"internal_stability"``).
    notes : tuple of str
    exact_delay : bool
    linear_metrics, saturated_metrics : dict
        With ``[actuator]``: the time-domain metrics of the linear loop (small
        steps) and of the loop with the limited actuator (the actuator's
        steps); ``metrics`` holds the worse of the two (empty otherwise).
    """

    label: str
    metrics: dict[str, Any]
    witnesses: dict[str, str]
    poles: np.ndarray
    stable: bool
    internally_stable: bool
    violations: tuple[str, ...] = ()
    shortfalls: dict[str, float] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    exact_delay: bool = True
    linear_metrics: dict[str, Any] = field(default_factory=dict)
    saturated_metrics: dict[str, Any] = field(default_factory=dict)


def evaluate_model(problem, plant, controller, exact_delay: bool = True,
                   label: str = "nominal", actuator: bool = True) -> ModelResult:
    """Every metric of the loop around one plant model, and its structural violations.

    Parameters
    ----------
    problem : synth.problem.Problem
        Its requirements (simulation horizon, settling band) and region.
    plant : synth.problem.plant.Plant
        The plant model (the nominal plant, a variant, a point of the ranges).
    controller : synth.verify.controller.Controller
        The design: compensator, reference shaping, anti-windup.
    exact_delay : bool
        Simulate a dead time exactly (default) or by its Pade form.
    label : str
        Name of the model in texts and worst-case records.
    actuator : bool
        With ``problem.actuator`` set, judge the time-domain metrics on the
        loop with the limited actuator (default; :mod:`synth.verify.saturated`).
        ``False`` keeps them linear (a quicker first pass).

    Returns
    -------
    ModelResult
    """
    from synth.locus.core import interval_containing, stable_gain_intervals
    from synth.problem.region import Region
    from synth.verify.frequency import loop_frequency
    from synth.verify.simulation import load_metrics, loop_responses

    if problem.sampling is not None:
        # the controller runs sampled: judge the sampled-data loop it makes
        from synth.verify.sampled_eval import evaluate_sampled

        return evaluate_sampled(problem, plant, controller, label)
    req = problem.requirements
    region = problem.region
    nc, dc = trim(controller.num), trim(controller.den)
    num_l, den_l, char = loop_polynomials(plant, nc, dc)
    poles = scaled_roots(char)
    poles = poles[np.lexsort((poles.imag, poles.real))] if poles.size else poles
    gain = float(nc[0] / dc[0])
    violations: list[str] = []
    short: dict[str, float] = {}
    notes: list[str] = []
    metrics: dict[str, Any] = {k: None for k in METRIC_KEYS}
    metrics.update(delay_margin=None, crossover_frequency=None, final_value=None,
                   in_region=False, gain=gain)

    internally_stable = internal_stability(plant, nc, dc, violations, short, notes)

    stable = bool(Region().contains(poles)) if poles.size else True
    n_full = max(np.polymul(dc, plant.den).size, np.polymul(nc, plant.num).size)
    # the leading coefficient is a sum of two products: zero when below its rounding error
    lead_terms = abs(dc[0] * plant.den[0]) + (abs(nc[0] * plant.num[0])
                                              if nc.size + plant.num.size == n_full + 1 else 0.0)
    if char.size < n_full or abs(char[0]) <= 4.0 * EPS * lead_terms:
        # 1 + C G vanishes at infinite frequency: the loop has no well-defined response
        stable = False
        violations.append("ill-posed loop: 1 + C(s) G(s) vanishes at infinite frequency "
                          f"(compensator gain {_fmt(gain, 4)})")
        short["stability"] = _UNSTABLE_SHORTFALL
    zeta = np.zeros(0)
    if poles.size:
        zeta = np.where(np.abs(poles) > 0, -poles.real / np.maximum(np.abs(poles), 1e-300), 0.0)
        metrics["min_damping_ratio"] = float(np.min(zeta))
        metrics["in_region"] = bool(region.contains(poles))
    else:
        metrics["min_damping_ratio"] = None
        metrics["in_region"] = True
    if not stable and poles.size and "stability" not in short:
        worst = poles[int(np.argmax(poles.real))]
        violations.append(f"closed loop unstable: pole at {format_complex(worst)} has a "
                          "non-negative real part")
        short["stability"] = _UNSTABLE_SHORTFALL + max(0.0, float(worst.real))

    witnesses: dict[str, str] = {}
    if poles.size and metrics["min_damping_ratio"] is not None:
        witnesses["min_damping_ratio"] = format_complex(poles[int(np.argmin(zeta))])
    exact = True
    if stable:
        iv = interval_containing(stable_gain_intervals(num_l, den_l), 1.0)
        if iv is not None:
            metrics["stable_plant_gain_range"] = [iv[0], iv[1]]
        # the reference step (through the reference shaping) and the load step at the
        # plant input, in one simulation
        resp = loop_responses(plant, controller, requirements=req, exact_delay=exact_delay)
        exact = resp.reference.exact_delay
        metrics.update(step_metrics(resp.reference, req.settling_band))
        metrics.update(load_metrics(resp.load))
        metrics.update(loop_frequency(plant, nc, dc).metrics())
        notes.extend(_slow_hidden_poles(poles, num_l, region))
    linear: dict[str, Any] = {}
    saturated: dict[str, Any] = {}
    if stable and actuator and problem.actuator is not None:
        linear, saturated = _saturate(problem, plant, controller, exact_delay, metrics,
                                      violations, short, notes)
    if plant.dead_time > 0 and not exact and exact_delay:
        notes.append("dead time too short to resolve against the horizon: time-domain "
                     "metrics from the Pade form")
    return ModelResult(label=label, metrics=metrics, witnesses=witnesses, poles=poles,
                       stable=stable, internally_stable=internally_stable,
                       violations=tuple(violations), shortfalls=short, notes=tuple(notes),
                       exact_delay=exact or plant.dead_time == 0, linear_metrics=linear,
                       saturated_metrics=saturated)


def _saturate(problem, plant, controller, exact_delay, metrics, violations, short,
              notes) -> tuple[dict[str, Any], dict[str, Any]]:
    """Judge the time-domain metrics on the linear loop and on the loop with the limited actuator.

    Each metric in ``metrics`` becomes the worse of the two
    (:func:`synth.verify.saturated.combine_responses`); returns the linear and
    the saturated values (for the violation texts and the JSON).  An improper
    compensator (an ideal derivative) cannot drive a limited actuator: a
    violation says so.
    """
    from synth.verify.saturated import combine_responses, saturated_metrics

    nc, dc = trim(controller.num), trim(controller.den)
    if nc.size > dc.size:
        violations.append("improper compensator: it cannot be implemented with the actuator "
                          "limits (its answer to a step is an impulse)")
        short["actuator"] = 1.0
        return {}, {}
    sat = saturated_metrics(problem, plant, controller, exact_delay)
    linear = {k: metrics[k] for k in sat.metrics if k in metrics}
    metrics.update(combine_responses(linear, sat.metrics))
    notes.extend(sat.notes)
    return linear, dict(sat.metrics)


def verify(problem, num_c, den_c=None, exact_delay: bool = True,
           actuator: bool = True, *, depth: str = "full", setup=None) -> Verdict:
    """Verify one compensator against every requirement of ``problem``, for every plant model.

    Each plant model is evaluated by :func:`evaluate_model`; every limit is
    then judged by its catalogue entry on the worst value over the models
    (contract, "Definitions").  With a single plant this is the nominal
    evaluation.  With ranges or variants (:class:`synth.problem.models.ModelSet`)
    the models come from :mod:`synth.verify.robust`:

    * ``depth="full"``: the nominal plant and every variant exactly; the box
      corners and seeded samples screened with batched estimates; a local
      worst-case search for each violated or nearest limit; the worst point
      of each metric evaluated exactly; a robust stability test of the box
      (:func:`synth.verify.robust.family_stability`).  The reported metrics
      are worst values over the exact evaluations.
    * ``depth="quick"``: the nominal plant exactly, every other model by the
      screening estimates only (no local search, no family test); for
      ordering many candidates before the reported ones get a full verdict.

    Parameters
    ----------
    problem : synth.problem.Problem
    num_c, den_c : array_like, or a Controller and None
        Compensator numerator (``K`` times the monic numerator) and monic
        denominator, descending powers; or a whole
        :class:`synth.verify.controller.Controller` (with its reference
        shaping and anti-windup) as ``num_c``.
    exact_delay : bool
        Simulate a dead time exactly (default).  ``False`` uses the Pade form
        in the simulation too (a quicker first pass; reported designs are
        always re-verified with the exact delay).
    actuator : bool
        With ``problem.actuator`` set, judge the time-domain requirements on
        the loop with the limited actuator (default).  ``False`` judges the
        linear loop (a quicker first pass; reported designs are always
        re-verified with the actuator).
    depth : {"full", "quick"}
        How thoroughly several plant models are checked (no effect for one).
    setup : synth.verify.robust.RobustSetup, optional
        The problem's models prepared once (:func:`synth.verify.robust.robust_setup`);
        built when omitted.

    Returns
    -------
    Verdict
        With several models, ``worst_case`` and ``robustness`` say which
        model gives each metric and how the models were searched.
    """
    from synth.verify.controller import Controller

    if depth not in ("full", "quick"):
        raise ValueError(f"depth must be 'full' or 'quick', not {depth!r}")
    controller = Controller.of(num_c, den_c)
    if problem.model_set.is_single:
        nominal = evaluate_model(problem, problem.plant, controller, exact_delay, "nominal",
                                 actuator)
        metrics = dict(nominal.metrics)
        witnesses = dict(nominal.witnesses)
        violations = list(nominal.violations)
        short = dict(nominal.shortfalls)
        stable = nominal.stable
        both = (dict(nominal.linear_metrics), dict(nominal.saturated_metrics))
        _check_limits(problem.requirements, metrics, witnesses, stable, violations, short,
                      both if both[1] else None)
        return Verdict(metrics=metrics, violations=tuple(violations), feasible=not violations,
                       closed_loop_poles=tuple(complex(p) for p in nominal.poles),
                       stable=stable, internally_stable=nominal.internally_stable,
                       shortfall=float(sum(short.values())), notes=nominal.notes,
                       exact_delay=nominal.exact_delay, shortfalls=short, witnesses=witnesses,
                       linear_metrics=both[0], saturated_metrics=both[1])
    return _verify_models(problem, controller, exact_delay, depth, setup, actuator)


def _verify_models(problem, controller, exact_delay: bool, depth: str, setup,
                   actuator: bool = True) -> Verdict:
    """:func:`verify` over several plant models (see there)."""
    from synth.verify.robust import Exploration, explore, family_stability, robust_setup

    setup = robust_setup(problem) if setup is None else setup
    full = depth == "full"

    def run(point):
        return (point, evaluate_model(problem, point.plant, controller, exact_delay, point.name,
                                      actuator))

    results = [run(setup.nominal)]
    stability = None
    # an unstable nominal loop fails whatever the other models do: no search of the box
    searched = results[0][1].stable
    if full:
        results += [run(p) for p in setup.variants]
        found = (explore(problem, controller, setup, full=True) if searched
                 else Exploration())
        seen = [dict(setup.nominal.point)]
        extra = [*found.unstable, *found.worst_points]
        if searched:
            stability = family_stability(problem, controller, setup)
            if stability.counterexample is not None:
                extra.append(stability.counterexample)
        for p in extra:
            if dict(p.point) not in seen:  # each point of the ranges once
                seen.append(dict(p.point))
                results.append(run(p))
        estimated: dict = {}
        unstable_estimates: tuple = ()
    else:
        found = (explore(problem, controller, setup, full=False, include_variants=True)
                 if searched else Exploration())
        estimated = found.worst
        unstable_estimates = found.unstable

    nominal = results[0][1]
    metrics, witnesses, worst = _worst_over(results, estimated)
    violations = list(nominal.violations)
    short = dict(nominal.shortfalls)
    notes = list(nominal.notes)
    for point, res in results[1:]:
        violations.extend(f"for {point.name}: {text}" for text in res.violations)
        for key, value in res.shortfalls.items():
            short[key] = max(short.get(key, 0.0), value)
        notes.extend(f"for {point.name}: {text}" for text in res.notes
                     if f"for {point.name}: {text}" not in notes)
    for point in unstable_estimates:
        violations.append(f"closed loop unstable for {point.name} (screening estimate)")
        short["stability"] = max(short.get("stability", 0.0), _UNSTABLE_SHORTFALL)
    stable = all(res.stable for _, res in results) and not unstable_estimates
    if stability is not None and stability.certified is False:
        counter = stability.counterexample
        shown = counter is not None and any(
            dict(p.point) == dict(counter.point) and not p.label and not r.stable
            for p, r in results)
        if not shown:
            violations.append(f"robust stability over the ranges not certified by the "
                              f"{stability.test}: {stability.detail}")
            # an unstable member at plant-gain factor 1 is an unstable loop; one only at
            # another factor, or no member found, weighs like a missed limit
            at_one = counter is not None and stability.factor in (None, 1.0)
            short["robust_stability"] = _UNSTABLE_SHORTFALL if at_one else 1.0
            if at_one:
                stable = False
    # which response breaks a time-domain limit: judged on the nominal model's two responses
    both = (dict(nominal.linear_metrics), dict(nominal.saturated_metrics))
    _check_limits(problem.requirements, metrics, witnesses, stable, violations, short,
                  both if both[1] else None, worst=worst)
    robustness = _robustness(setup, found, stability, results, depth)
    return Verdict(metrics=metrics, violations=tuple(violations), feasible=not violations,
                   closed_loop_poles=tuple(complex(p) for p in nominal.poles), stable=stable,
                   internally_stable=all(r.internally_stable for _, r in results),
                   shortfall=float(sum(short.values())), notes=tuple(notes),
                   exact_delay=all(r.exact_delay for _, r in results), shortfalls=short,
                   witnesses=witnesses, worst_case=worst, robustness=robustness,
                   model_results=tuple(results), linear_metrics=both[0],
                   saturated_metrics=both[1])


def _robustness(setup, found, stability, results, depth: str) -> dict[str, Any]:
    """The design JSON's ``robustness`` object: how the worst case was searched."""
    out = {
        "depth": depth,
        "models": 1 + len(setup.variants) + len(setup.corners) + len(setup.samples)
        + found.local_evaluations,
        "variants": len(setup.variants),
        "vertices": len(setup.corners),
        "vertices_of_box": setup.corners_total,
        "vertex_design": setup.corner_design,
        "samples": len(setup.samples),
        "screened": found.screened,
        "local_searches": found.local_searches,
        "local_evaluations": found.local_evaluations,
        "exact_evaluations": len(results),
        "exactly_evaluated": [p.to_json() for p, _ in results],
    }
    if setup.gain_factors is not None:
        out["plant_gain_factors"] = list(setup.gain_factors)
    if stability is not None:
        out["stability_test"] = stability.test
        out["stability_certified"] = stability.certified
        out["stability_test_approximate"] = stability.approximate
        if stability.detail:
            out["stability_detail"] = stability.detail
    return out


def _worst_over(results, estimated) -> tuple[dict, dict, dict]:
    """Metrics as their worst values over the models, the witnesses, and the worst cases.

    Unstable models take no part (their instability is a violation of its
    own); an interval metric is the intersection of the models' intervals;
    metrics without an order (frequencies, the gain) are the nominal plant's.
    """
    nominal = results[0][1]
    metrics = dict(nominal.metrics)
    witnesses = dict(nominal.witnesses)
    worst: dict[str, WorstCase] = {}
    stable = [(p, r) for p, r in results if r.stable]
    for key, metric in METRICS.items():
        if key not in metrics or not stable:
            continue
        if metric.better in ("lower", "higher"):
            point, res = stable[0]
            value = res.metrics.get(key)
            for p, r in stable[1:]:
                v = r.metrics.get(key)
                if metric.worse(v, value):
                    point, res, value = p, r, v
            exact = True
            if key in estimated and metric.worse(estimated[key][0], value):
                value, point = estimated[key]
                exact = False
            metrics[key] = value
            if key in res.witnesses and exact:
                witnesses[key] = f"{res.witnesses[key]} for {point.name}"
            worst[key] = WorstCase(value, point, exact)
        elif metric.better == "wider":
            picked = _narrowest(stable, key, estimated.get(key))
            if picked is not None:
                value, point, exact = picked
                metrics[key] = value
                worst[key] = WorstCase(value, point, exact)
    if "in_region" in metrics:
        metrics["in_region"] = all(bool(r.metrics.get("in_region")) for _, r in stable)
    return metrics, witnesses, worst


def _narrowest(stable, key, estimate):
    """Intersection of the models' intervals and the model that limits it most."""
    lo, hi = -math.inf, math.inf
    limiting, tight = None, math.inf
    exact = True
    entries = [(r.metrics.get(key), p, True) for p, r in stable]
    if estimate is not None:
        entries.append((estimate[0], estimate[1], False))
    for value, point, is_exact in entries:
        if value is None:
            continue
        a = -math.inf if value[0] is None else float(value[0])
        b = math.inf if value[1] is None else float(value[1])
        lo, hi = max(lo, a), min(hi, b)
        # how far the interval reaches around 1, in the log sense
        reach = min(math.log(1.0 / a) if a > 0 else math.inf, math.log(b) if b > 0 else -math.inf)
        if limiting is None or reach < tight:
            limiting, tight, exact = point, reach, is_exact
    if limiting is None:
        return None
    value = [None if lo == -math.inf else lo, None if hi == math.inf else hi]
    return value, limiting, exact


def _slow_hidden_poles(poles, num_l, region) -> list[str]:
    """Notes on slow closed-loop poles that a nearby loop zero hides from the step response.

    Such a pole barely shows in the reference step (its residue is small) but
    it is still a mode of the loop: a disturbance entering at the plant input
    decays at its rate. Slow means slower than the required decay rate, or
    slower than a tenth of the fastest pole when no rate is required.
    """
    zeros = np.roots(trim(num_l)) if trim(num_l).size > 1 else np.zeros(0, complex)
    if not poles.size or not zeros.size:
        return []
    rates = -poles.real
    slow_limit = region.sigma if region.sigma > 0 else 0.1 * float(np.max(np.abs(poles)))
    out = []
    for p, rate in zip(poles, rates, strict=True):
        if rate >= slow_limit or p.imag < 0:
            continue
        d = np.abs(zeros - p)
        j = int(np.argmin(d))
        if d[j] <= 0.2 * abs(p):
            out.append(f"slow closed-loop pole at {format_complex(p)} is nearly cancelled by the "
                       f"loop zero at {format_complex(zeros[j])}: the reference step hides it, "
                       f"but a disturbance at the plant input decays only at {_fmt(rate)} 1/s")
    return out


#: At most this many corners of the parameter box are listed by :func:`plant_models`.
_LISTED_CORNERS = 8


def plant_models(problem) -> list[tuple[str, Any]]:
    """The plant models worth showing, as ``(label, plant)``, nominal first.

    The nominal plant, every variant, and the corners of the parameter box
    (at most :data:`_LISTED_CORNERS`, in the box's own order).  The verdict
    itself searches the ranges more thoroughly (:mod:`synth.verify.robust`);
    this list is for outputs that draw the models side by side.
    """
    from synth.problem.models import point_text

    models = problem.model_set
    out: list[tuple[str, Any]] = [("nominal", problem.plant)]
    out += [(v.label, v.plant) for v in models.variants]
    if models.ranges:
        out += [(point_text(point), plant)
                for point, plant in models.corner_plants[:_LISTED_CORNERS]]
    return out



def _check_limits(req, metrics, witnesses, stable, violations, short, responses=None,
                 worst=None) -> None:
    """Judge every limit of the file by its catalogue entry.

    A ``structure`` requirement (the compensator gain) is judged for every
    loop; the others only for a stable one, whose metrics exist.  With
    ``responses`` (the linear and the saturated values of the time-domain
    metrics, :attr:`Verdict.linear_metrics` and ``saturated_metrics``), a
    violated time-domain limit says which response breaks it, and so whether
    the design meets it without saturation.  With
    several models (``worst``: metric -> :class:`WorstCase`) a violation
    names the model where the worst value occurs.
    """
    context = {k: req.value(k) for k in REQUIREMENTS}
    for entry, limit in req.limits():
        if not stable and entry.concerns != "structure":
            continue
        found = entry.assess(metrics.get(entry.metric), limit,
                             {**context, "where": witnesses.get(entry.metric, "")})
        if found is not None:
            short[entry.key], text = found
            if responses is not None and entry.metric in responses[1]:
                from synth.verify.saturated import saturation_remark

                text += saturation_remark(entry, responses[0].get(entry.metric),
                                          responses[1][entry.metric], limit, context)
            case = (worst or {}).get(entry.metric)
            if case is not None and case.model.name not in text:
                text += (f" (worst case: {case.model.name}"
                         + ("" if case.exact else ", screening estimate") + ")")
            violations.append(text)
