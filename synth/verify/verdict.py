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


def evaluate_model(problem, plant, controller, exact_delay: bool = True,
                   label: str = "nominal") -> ModelResult:
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

    Returns
    -------
    ModelResult
    """
    from synth.locus.core import interval_containing, stable_gain_intervals
    from synth.problem.region import Region
    from synth.verify.frequency import loop_frequency
    from synth.verify.simulation import load_metrics, loop_responses

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

    # internal stability: cancellations between compensator and plant
    internally_stable = True
    for kind, r in _cancellations(plant, nc, dc):
        what = ("compensator zero at {z} cancels the plant pole at {z}" if kind == "zero"
                else "compensator pole at {z} cancels the plant zero at {z}")
        text = what.format(z=format_complex(r))
        if r.real >= -1e-9 * abs(r):  # relative: a cancellation at the origin is unstable
            internally_stable = False
            violations.append(f"internally unstable: {text}; the unstable mode stays in the "
                              "loop and no output shows it")
            short["internal_stability"] = 2 * _UNSTABLE_SHORTFALL
        else:
            notes.append(f"{text} (a stable hidden mode decaying at rate {_fmt(-r.real)} 1/s)")

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
    if plant.dead_time > 0 and not exact and exact_delay:
        notes.append("dead time too short to resolve against the horizon: time-domain "
                     "metrics from the Pade form")
    return ModelResult(label=label, metrics=metrics, witnesses=witnesses, poles=poles,
                       stable=stable, internally_stable=internally_stable,
                       violations=tuple(violations), shortfalls=short, notes=tuple(notes),
                       exact_delay=exact or plant.dead_time == 0)


def verify(problem, num_c, den_c=None, exact_delay: bool = True) -> Verdict:
    """Verify one compensator against every requirement of ``problem``.

    Each plant model of the problem is evaluated by :func:`evaluate_model`
    (today the nominal plant; further models join through
    :func:`plant_models`); every limit is then judged by its catalogue entry.

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

    Returns
    -------
    Verdict
    """
    from synth.verify.controller import Controller

    controller = Controller.of(num_c, den_c)
    results = [evaluate_model(problem, plant, controller, exact_delay, label)
               for label, plant in plant_models(problem)]
    nominal = results[0]
    metrics = dict(nominal.metrics)
    witnesses = dict(nominal.witnesses)
    violations = list(nominal.violations)
    short = dict(nominal.shortfalls)
    stable = nominal.stable
    _check_limits(problem.requirements, metrics, witnesses, stable, violations, short)
    return Verdict(metrics=metrics, violations=tuple(violations), feasible=not violations,
                   closed_loop_poles=tuple(complex(p) for p in nominal.poles), stable=stable,
                   internally_stable=nominal.internally_stable,
                   shortfall=float(sum(short.values())), notes=nominal.notes,
                   exact_delay=nominal.exact_delay, shortfalls=short, witnesses=witnesses)


def plant_models(problem) -> list[tuple[str, Any]]:
    """The plant models a design must satisfy, as ``(label, plant)``, nominal first."""
    return [("nominal", problem.plant)]


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


def _check_limits(req, metrics, witnesses, stable, violations, short) -> None:
    """Judge every limit of the file by its catalogue entry.

    A ``structure`` requirement (the compensator gain) is judged for every
    loop; the others only for a stable one, whose metrics exist.
    """
    context = {k: req.value(k) for k in REQUIREMENTS}
    for entry, limit in req.limits():
        if not stable and entry.concerns != "structure":
            continue
        found = entry.assess(metrics.get(entry.metric), limit,
                             {**context, "where": witnesses.get(entry.metric, "")})
        if found is not None:
            short[entry.key], text = found
            violations.append(text)
