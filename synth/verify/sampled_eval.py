"""The verdict on the sampled-data loop: every metric of a design as its discrete controller runs.

With ``[sampling]``, :func:`synth.verify.verdict.evaluate_model` hands each
plant model to :func:`evaluate_sampled`.  The design's continuous compensator
is mapped to z as the run reports and the export rebuilds it
(:func:`synth.verify.sampled.map_design`: Tustin pre-warped at the nominal
loop's crossover), and then judged in the loop of :mod:`synth.verify.hybrid`:

* stability and the closed-loop poles: eigenvalues of the loop from sample to
  sample (plant, held outputs in flight, controller states), stable when every
  one lies inside the unit circle;
* damping and the region: each pole ``z`` as ``s = ln(z) / T`` (principal
  branch; the poles at ``z = 0`` of the delays in the loop decay in finitely
  many samples and count as infinitely damped);
* margins, ``Ms``, ``Mt`` and the noise gain on the unit circle up to the
  Nyquist frequency; the stable plant-gain range from the points where ``L``
  is real, each gap checked by eigenvalues;
* the step metrics from the CONTINUOUS output between the samples
  (:meth:`synth.verify.hybrid.SampledLoop.simulate`), the peak effort from the
  controller's outputs.

References
----------
.. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 4, 6 and 7, from memory.
.. [2] K. J. Astrom and B. Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
   Prentice Hall, 1997, ch. 2 (poles of sampled systems, ``z = exp(s T)``), from memory.
"""

from __future__ import annotations

import math

import numpy as np

from synth.numerics.poly import format_complex, scaled_roots, trim

__all__ = ["evaluate_sampled", "s_equivalent"]


def s_equivalent(z, period: float) -> np.ndarray:
    """``s = ln(z) / T`` for every pole ``z != 0`` (principal branch, ``|Im s| <= pi / T``)."""
    z = np.asarray(z, dtype=complex)
    z = z[z != 0]
    return np.log(z) / period


def _limits(problem):
    """The controller's output limits and rate from the problem, when it has an actuator."""
    act = problem.actuator
    if act is None:
        return None, None, 1.0
    # the loop's control signal is the deviation from the actuator's operating point
    limits = None if act.limits is None else act.deviation_limits
    return limits, act.max_rate, float(act.reference_step)


def evaluate_sampled(problem, plant, controller, label: str = "nominal"):
    """Every metric of the sampled-data loop around one plant model.

    Parameters
    ----------
    problem : synth.problem.Problem
        With ``sampling`` set; its requirements give the horizon and band, its
        nominal plant the pre-warping frequency.
    plant : synth.problem.plant.Plant
        The model judged (nominal, variant, a point of the ranges).
    controller : synth.verify.controller.Controller
    label : str

    Returns
    -------
    synth.verify.verdict.ModelResult
        ``poles`` are the continuous design's closed-loop poles (``C(s)``
        around the plant's engine form: the contract's ``closed_loop_poles``
        keep their meaning); every metric is the sampled loop's, with the extra
        keys ``spectral_radius``, ``peak_complementary_sensitivity`` and
        ``noise_gain``.  The sampled loop's own poles in z are
        :meth:`synth.verify.hybrid.SampledLoop.poles` (the design JSON's
        ``discrete.sampled_loop.poles_z``).
    """
    from synth.problem.region import Region
    from synth.verify.frequency import frequency_grid
    from synth.verify.hybrid import (
        _SEGMENT,
        MAX_NONLINEAR_SAMPLES,
        UNIT_CIRCLE_TOL,
        sampled_loop,
    )
    from synth.verify.loop import loop_polynomials
    from synth.verify.sampled import map_design
    from synth.verify.simulation import StepResponse, step_horizon, step_metrics
    from synth.verify.verdict import (
        _UNSTABLE_SHORTFALL,
        METRIC_KEYS,
        ModelResult,
        internal_stability,
    )

    sampling = problem.sampling
    T, tau = sampling.period, sampling.compute_delay
    req = problem.requirements
    limits, rate, step = _limits(problem)
    model, _, _ = map_design(problem.plant, controller, sampling, limits=limits, max_rate=rate)
    loop = sampled_loop(plant, model)
    nc, dc = trim(controller.num), trim(controller.den)
    gain = float(nc[0] / dc[0])
    metrics: dict = {k: None for k in METRIC_KEYS}
    metrics.update(delay_margin=None, crossover_frequency=None, final_value=None,
                   in_region=False, gain=gain, peak_complementary_sensitivity=None,
                   noise_gain=None)
    violations: list[str] = []
    short: dict[str, float] = {}
    notes: list[str] = []
    witnesses: dict[str, str] = {}

    internally_stable = internal_stability(plant, nc, dc, violations, short, notes)

    z = loop.poles()
    rho = float(np.max(np.abs(z))) if z.size else 0.0
    metrics["spectral_radius"] = rho
    stable = rho < 1.0 - UNIT_CIRCLE_TOL
    zn = z[z != 0]
    s = s_equivalent(zn, T)
    if s.size:
        zeta = np.where(np.abs(s) > 0, -s.real / np.maximum(np.abs(s), 1e-300), 0.0)
        i = int(np.argmin(zeta))
        metrics["min_damping_ratio"] = float(zeta[i])
        witnesses["min_damping_ratio"] = f"z = {format_complex(zn[i])} (s = {format_complex(s[i])})"
        metrics["in_region"] = bool(stable and problem.region.contains(s))
    else:  # every pole at z = 0: a deadbeat loop
        metrics["min_damping_ratio"] = 1.0
        metrics["in_region"] = stable
    if not stable:
        violations.append(f"sampled loop unstable at T = {T:g} s"
                          + (f" with a computation delay of {tau:g} s" if tau else "")
                          + f": largest closed-loop root |z| = {rho:.4g} (must be < 1)")
        short["stability"] = _UNSTABLE_SHORTFALL + max(0.0, rho - 1.0)
    if stable:
        freq = loop.frequency(frequency_grid(plant, nc, dc))
        metrics.update(freq.metrics())
        rng = loop.stable_factor_range(freq)
        if rng is not None:
            metrics["stable_plant_gain_range"] = [rng[0], rng[1]]
        t_end = step_horizon(s, req, plant.dead_time + tau)
        t_end = max(t_end, (loop.closed_loop_matrix().shape[0] + 20) * T)
        resp = loop.simulate(t_end, reference=step)
        sr = StepResponse(t=resp.t, y=resp.y / step, u=resp.u / step,
                          final_value=resp.final_value / step, exact_delay=True)
        metrics.update(step_metrics(sr, req.settling_band))
        metrics["peak_control_effort"] = float(np.max(np.abs(resp.u_samples))) / step
        metrics.update(_load_metrics(loop, t_end))
        if resp.stride > 1:
            notes.append(f"sampled-loop step simulated period by period for the first "
                         f"{_SEGMENT} periods, then with every {resp.stride}th period on the "
                         "long tail")
        if resp.limited and resp.t_samples.size >= MAX_NONLINEAR_SAMPLES:
            notes.append(f"the saturated sampled loop was simulated for its first "
                         f"{resp.t_samples.size} samples only ({resp.t_samples[-1]:.4g} s)")
    # the contract's closed-loop poles: the continuous design's unreduced loop
    _, _, char = loop_polynomials(plant, nc, dc)
    poles = scaled_roots(char)
    poles = poles[np.lexsort((poles.imag, poles.real))] if poles.size else poles
    if stable and poles.size and not Region().contains(poles):
        notes.append("the continuous design C(s) around the plant is not stable by itself; "
                     "only its sampled form, as verified here, is")
    return ModelResult(label=label, metrics=metrics, witnesses=witnesses, poles=poles,
                       stable=stable, internally_stable=internally_stable,
                       violations=tuple(violations), shortfalls=short, notes=tuple(notes),
                       exact_delay=True)


def _load_metrics(loop, t_end: float) -> dict:
    """``load_iae`` and ``load_peak`` of the sampled loop: a unit load step at the plant input.

    ``r = 0``; the output between the samples (``SampledLoop.simulate``), its peak ``|y|``
    and the integral of ``|y|`` by the trapezoid rule over the simulated points.  Without
    integral action the output does not return to 0 and the integral grows without bound:
    ``None`` then (the steady output above a millionth of the peak).  The catalogue's
    ``max_load_iae`` and ``max_load_peak`` judge these keys.
    """
    from scipy.integrate import trapezoid

    resp = loop.simulate(t_end, reference=0.0, load=1.0)
    e = np.abs(resp.y)
    peak = float(np.max(e))
    settled = math.isfinite(resp.final_value) and abs(resp.final_value) <= 1e-6 * peak
    return {"load_peak": peak,
            "load_iae": float(trapezoid(e, resp.t)) if settled else None}

