"""The anti-windup finishing stage: each design to be reported gets its tracking time.

The search itself stays linear: every strategy proposes compensators for the
linear loop, and every candidate is first verified without the actuator
limits (quick).  A design that :func:`synth.design.run_design` would report
then passes through :func:`finish_anti_windup`: its anti-windup scheme is
chosen (:func:`synth.verify.antiwindup.tracking_range`) and its tracking time
``Tt`` picked from a grid by simulating the loop with the limited actuator,
after which the design is verified in full with the actuator.

Choice of ``Tt``.  A design that fails a requirement already in the linear
loop keeps the default (every time-domain metric is judged as the worse of
the linear and the saturated response, so no tracking time makes it
feasible).  Otherwise the default tracking time is simulated first (on the
nominal plant, :func:`synth.verify.saturated.simulate_saturated`); when the
actuator never reaches a limit in either step, nothing depends on ``Tt`` and
the default stays (and a step that never reaches a limit is not simulated
again for the other points).  Otherwise :data:`synth.verify.antiwindup.GRID_POINTS`
geometric points over the scheme's range are simulated too, on the same
time grid.
Each point is judged on the time-domain requirements of the file, each
metric the worse of the linear and the saturated response (as the
verifier judges it): the least total shortfall wins, then the shortest
saturated settling time (to three digits), then the least saturated
overshoot (to 0.1 %), then the point nearest the default (on a log scale).  Work: one unit per tracking time simulated.

References
----------
.. [1] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   sec. 3.5 (the tracking time constant and its effect).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

from synth.verify.antiwindup import tracking_grid, tracking_range
from synth.verify.controller import AntiWindup

__all__ = ["Finished", "finish_anti_windup"]

#: Metric concerns the tracking time can change (the catalogue's ``concerns``).
_TIME_DOMAIN = ("reference", "load")


@dataclass(frozen=True)
class Finished:
    """A candidate with its anti-windup, and the work spent choosing it.

    Attributes
    ----------
    candidate : synth.strategies.Candidate
        The candidate with ``anti_windup`` set (and the choice in its provenance).
    work : int
        Grid points simulated (0 for a scheme without parameters).
    """

    candidate: object
    work: int


def _judge(problem, linear: dict, saturated: dict) -> tuple[float, float, float]:
    """``(shortfall, settling, overshoot)`` of one tracking time (smaller is better)."""
    from synth.problem.catalogue import REQUIREMENTS
    from synth.verify.saturated import combine_responses

    metrics = combine_responses(linear, saturated)
    req = problem.requirements
    context = {k: req.value(k) for k in REQUIREMENTS}
    short = 0.0
    for entry, limit in req.limits():
        if entry.concerns not in _TIME_DOMAIN:
            continue
        found = entry.assess(metrics.get(entry.metric), limit, context)
        if found is not None:
            short += found[0]
    # settling to three digits and overshoot to 0.1 %: closer values are the same response
    # (the simulation's own error), and the tie goes to the point nearest the default
    ts = saturated.get("settling_time")
    os_ = saturated.get("overshoot_percent")
    return (round(short, 6), math.inf if ts is None else float(f"{ts:.3g}"),
            math.inf if os_ is None else round(os_, 1))


def finish_anti_windup(problem, candidate, linear_verdict) -> Finished:
    """Give ``candidate`` its anti-windup for ``problem.actuator`` (see the module docstring).

    Parameters
    ----------
    problem : synth.problem.Problem
        With ``actuator`` set (else the candidate comes back unchanged).
    candidate : synth.strategies.Candidate
    linear_verdict : synth.verify.Verdict
        The candidate's verdict without the actuator (its linear time-domain
        metrics and its gain crossover).

    Returns
    -------
    Finished
    """
    if problem.actuator is None:
        return Finished(candidate, 0)
    from synth.verify.saturated import (
        EXPERIMENTS,
        SaturatedLoop,
        response_metrics,
        simulate_saturated,
    )

    crossover = linear_verdict.metrics.get("crossover_frequency")
    if crossover is None:
        # an unstable loop has no margins: the problem's own characteristic frequency
        from synth.families.base import SearchSpace

        crossover = SearchSpace.for_problem(problem).w_char
    found = tracking_range(candidate.num, candidate.den, crossover)
    # a design the linear loop already rules out is listed only as a nearest design: the
    # worse-of verdict cannot make it feasible, so it keeps the default
    if found is None or not linear_verdict.feasible:
        scheme = "none" if found is None else found[0]
        params = {} if found is None else {"tracking_time": float(found[1])}
        return Finished(dataclasses.replace(candidate, anti_windup=AntiWindup(scheme, params)), 0)
    scheme, t0, _, _ = found

    def simulate(times, experiments=EXPERIMENTS):
        controllers = [dataclasses.replace(
            candidate, anti_windup=AntiWindup(scheme, {"tracking_time": tt})).controller
            for tt in times]
        return simulate_saturated(problem.plant, controllers, problem.actuator,
                                  problem.requirements, experiments=experiments)[0]

    # the default first: an actuator that never reaches a limit leaves nothing to tune
    (first,) = simulate([t0])
    grid = [t0]
    loops = [first]
    ref_limited = first.reference.limited_time > 0
    load_limited = first.load.limited_time > 0
    if ref_limited or load_limited:
        rest = [tt for tt in tracking_grid(candidate.num, candidate.den, crossover) if tt != t0]
        # a step whose actuator never reaches a limit does not depend on Tt: reuse it
        kinds = tuple(k for k, hit in (("reference", ref_limited), ("load", load_limited))
                      if hit)
        grid += rest
        loops += [SaturatedLoop(reference=lp.reference or first.reference,
                                load=lp.load or first.load) for lp in simulate(rest, kinds)]
    band = problem.requirements.settling_band
    linear = linear_verdict.metrics
    tried = []
    for tt, loop in zip(grid, loops, strict=True):
        judged = _judge(problem, linear, response_metrics(loop, band))
        tried.append((*judged, abs(math.log(tt / t0)), tt))
    best = min(tried)
    tt = best[-1]
    provenance = dict(candidate.provenance)
    provenance["anti_windup_choice"] = {
        "scheme": scheme, "default_tracking_time": t0, "tracking_time": tt,
        "tried": [{"tracking_time": t[-1], "shortfall": t[0],
                   "settling_time": None if math.isinf(t[1]) else t[1],
                   "overshoot_percent": None if math.isinf(t[2]) else t[2]} for t in tried],
        "criterion": "least time-domain shortfall, then saturated settling time, then "
                     "overshoot, then nearest the default"}
    done = dataclasses.replace(candidate, anti_windup=AntiWindup(scheme, {"tracking_time": tt}),
                               provenance=provenance)
    return Finished(done, len(grid))
