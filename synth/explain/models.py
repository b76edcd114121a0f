"""What proportional gain can do for every plant model at once, and which model limits it.

With parameter ranges or variants (:class:`synth.problem.models.ModelSet`) a
gain must work for every model.  :func:`explain_models` intersects the exact
gain intervals of the models the verifier checks (nominal, variants, box
corners and seeded samples, :func:`synth.verify.robust.robust_setup`), names
the model that sets each end of the intersection, and, over the ranges,
pushes each finite end of the stabilising intervals further with a bounded
local search (Nelder-Mead on the unit box, ``scipy.optimize.minimize``) from
the model that sets it.  It also names the structural facts that differ
between models and limit all of them: a right-half-plane zero or a dead time
of one model caps the bandwidth for every model, an unstable pole of one
model sets a least bandwidth for all.

References
----------
.. [1] E. J. Routh, 1877, and W. R. Evans, Trans. AIEE 69, 1950 (exact gain
   intervals from axis crossings, as in :mod:`synth.locus.core`).
.. [2] S. Skogestad and I. Postlethwaite, *Multivariable Feedback Control*,
   2nd ed., 2005, sec. 5.6-5.9 (bandwidth limits from RHP zeros, RHP poles
   and dead time; from memory).
.. [3] J. A. Nelder and R. Mead, Computer Journal 7, 1965.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.explain import _fmt as f
from synth.explain.gain import Interval, intersect_all

__all__ = ["EndLimit", "ModelsAccount", "explain_models"]

#: Finite ends of the stabilising intersection refined by a local search, and the
#: evaluations each search may spend (``_BASE + _PER_RANGE`` per range, at most
#: ``_MAX_EVALUATIONS``).
_MAX_END_SEARCHES = 4
_BASE = 8
_PER_RANGE = 4
_MAX_EVALUATIONS = 24


@dataclass(frozen=True)
class EndLimit:
    """One end of an intersected gain interval and the model that sets it.

    Attributes
    ----------
    which : {"stabilizing", "requirement"}
    end : {"low", "high"}
    gain : float
    model : synth.verify.robust.ModelPoint
    """

    which: str
    end: str
    gain: float
    model: object

    def to_json(self) -> dict:
        return {"intervals": self.which, "end": self.end, "gain": self.gain,
                "model": self.model.to_json()}


@dataclass(frozen=True)
class ModelsAccount:
    """Proportional gain over every plant model.

    Attributes
    ----------
    stabilizing, requirement : tuple of Interval
        Gains that stabilise (meet the region) for every model checked.
    limits : tuple of EndLimit
        Which model sets each finite end.
    per_model : tuple of (ModelPoint, tuple, tuple)
        Each model's own stabilising and region intervals (nominal,
        variants, corners and samples; the local searches' points too).
    facts : tuple of str
        Structural facts that differ between models and bind all of them.
    checked : int
        Models whose intervals were computed.
    method : str
        How the models were chosen, in words.
    """

    stabilizing: tuple[Interval, ...]
    requirement: tuple[Interval, ...]
    limits: tuple[EndLimit, ...]
    per_model: tuple
    facts: tuple[str, ...]
    checked: int
    method: str

    def to_json(self) -> dict:
        from synth.outputs.jsonout import interval_lists

        return {
            "stabilizing_gain_intervals": interval_lists(self.stabilizing),
            "requirement_gain_intervals": interval_lists(self.requirement),
            "limits": [lim.to_json() for lim in self.limits],
            "models_checked": self.checked,
            "method": self.method,
            "per_model": [{"model": p.to_json(), "stabilizing_gain_intervals": interval_lists(s),
                           "requirement_gain_intervals": interval_lists(r)}
                          for p, s, r in self.per_model],
            "facts": list(self.facts),
        }

    def sentences(self) -> list[str]:
        """The account in plain sentences (for ``reasons`` and the terminal)."""
        out = [f"For every plant model checked ({self.method}), proportional gain stabilises "
               f"the loop for {f.intervals(self.stabilizing)}"
               + ("." if self.stabilizing == self.requirement else
                  f" and meets the region for {f.intervals(self.requirement, none='no real gain')}.")]
        for lim in self.limits:
            word = "lower" if lim.end == "low" else "upper"
            what = "stabilising" if lim.which == "stabilizing" else "region"
            out.append(f"The {word} end K = {f.num(lim.gain)} of the {what} gains is set by the "
                       f"model {lim.model.name}.")
        out.extend(self.facts)
        return out


def _intervals(plant, region):
    from synth.locus.core import region_gain_intervals, stable_gain_intervals

    n, d = plant.num, plant.den
    stab = tuple(stable_gain_intervals(n, d))
    reg = stab if region.is_stability_only else tuple(region_gain_intervals(n, d, region))
    return stab, reg


def _intersection(per_model, index: int) -> list[Interval]:
    out: list[Interval] = [(None, None)]
    for item in per_model:
        out = intersect_all(out, item[index])
    return out


def _ends(ivs, which: str, per_model, index: int) -> list[EndLimit]:
    """The model whose own interval end coincides with each finite end (relative 1e-9)."""
    out = []
    for lo, hi in ivs:
        for end, k in (("low", lo), ("high", hi)):
            if k is None or k == 0.0:
                continue
            for point, *ivals in per_model:
                own = [e for iv in ivals[index - 1] for e in iv if e is not None]
                if any(abs(e - k) <= 1e-9 * abs(k) for e in own):
                    out.append(EndLimit(which, end, float(k), point))
                    break
    return out


def explain_models(problem) -> ModelsAccount | None:
    """Proportional gain over every model of ``problem`` (``None`` for a single plant)."""
    from synth.verify.robust import robust_setup

    if problem.model_set.is_single:
        return None
    setup = robust_setup(problem)
    region = problem.region
    points = list(setup.all_points())
    per_model = [(p, *_intervals(p.plant, region)) for p in points]
    searched = _search_ends(problem, setup, per_model, region)
    per_model.extend(searched)
    stab = _intersection(per_model, 1)
    reg = intersect_all(stab, _intersection(per_model, 2))
    limits = _ends(stab, "stabilizing", per_model, 1) + [
        lim for lim in _ends(reg, "requirement", per_model, 2)
        if all(abs(lim.gain - s.gain) > 1e-9 * abs(s.gain) for s in _ends(stab, "stabilizing",
                                                                           per_model, 1))]
    parts = ["nominal"]
    if setup.variants:
        parts.append(f.plural(len(setup.variants), "variant"))
    if setup.corners:
        parts.append(f"{len(setup.corners)} of {setup.corners_total} box corners")
    if setup.samples:
        parts.append(f"{len(setup.samples)} seeded samples")
    if searched:
        parts.append(f"{len(searched)} points found by searching the interval ends")
    return ModelsAccount(stabilizing=tuple(stab), requirement=tuple(reg), limits=tuple(limits),
                         per_model=tuple(per_model), facts=tuple(_model_facts(points)),
                         checked=len(per_model), method=", ".join(parts))


def _search_ends(problem, setup, per_model, region) -> list:
    """Points of the ranges that narrow the stabilising intersection further (local searches)."""
    from scipy.optimize import minimize

    models = setup.models
    d = len(models.ranges)
    if d == 0:
        return []
    stab = _intersection(per_model, 1)
    found = []
    searches = 0
    for lo, hi in stab:
        # a gain inside the interval, to follow it from model to model
        if lo is not None and hi is not None:
            ref = math.copysign(math.sqrt(lo * hi), hi) if lo * hi > 0 else 0.5 * (lo + hi)
        elif lo is None and hi is None:
            continue
        else:
            ref = (hi / 2.0 if hi > 0 else 2.0 * hi) if lo is None else (
                2.0 * lo if lo > 0 else lo / 2.0)
        for end, k in (("low", lo), ("high", hi)):
            if k is None or k == 0.0 or searches >= _MAX_END_SEARCHES:
                continue
            limiting = next((p for p, s, _ in per_model if p.point and any(
                e is not None and abs(e - k) <= 1e-9 * abs(k) for iv in s for e in iv)), None)
            start = models.unit_of(dict((limiting or setup.nominal).point))
            searches += 1
            sign = -1.0 if end == "low" else 1.0

            def end_at(u, sign=sign, end=end, ref=ref):
                point = setup.point_model(models.point_from_unit(np.clip(u, 0.0, 1.0)),
                                          "search")
                s, _ = _intervals(point.plant, region)
                iv = next(((a, b) for a, b in s if (a is None or a < ref) and
                           (b is None or ref < b)), None)
                if iv is None:
                    return -1e300  # the reference gain itself fails here: the worst there is
                e = iv[0] if end == "low" else iv[1]
                return sign * (e if e is not None else sign * math.inf)

            simplex = [start] + [start + np.eye(d)[i] * (0.25 if start[i] <= 0.5 else -0.25)
                                 for i in range(d)]
            res = minimize(end_at, start, method="Nelder-Mead", bounds=[(0.0, 1.0)] * d,
                           options={"maxfev": min(_MAX_EVALUATIONS, _BASE + _PER_RANGE * d),
                                    "xatol": 1e-3,
                                    "initial_simplex": np.array(simplex)})
            point = setup.point_model(models.point_from_unit(np.clip(res.x, 0.0, 1.0)),
                                      "search")
            found.append((point, *_intervals(point.plant, region)))
    return found


def _model_facts(points) -> list[str]:
    """Structural facts that differ between models and limit every one of them."""
    from synth.explain.structure import structural_facts

    facts = [(p, structural_facts(p.plant)) for p in points]
    out = []
    uppers = [(fa.bandwidth.upper, p, fa) for p, fa in facts if fa.bandwidth.upper is not None]
    nominal_bw = facts[0][1].bandwidth
    if uppers:
        value, point, fa = min(uppers, key=lambda x: x[0])
        if point.kind != "nominal" and (nominal_bw.upper is None or value < nominal_bw.upper):
            why = ("its right-half-plane zero at " + f.num(fa.bandwidth.zero)
                   if fa.bandwidth.upper_from_zero == value
                   else f"its dead time of {f.num(fa.dead_time)} s")
            out.append(f"The model {point.name} limits the closed-loop bandwidth for every model "
                       f"to about {f.num(value)} rad/s ({why}; rule of thumb): one controller "
                       "serves them all.")
    lowers = [(fa.bandwidth.lower_from_pole, p, fa) for p, fa in facts
              if fa.bandwidth.lower_from_pole is not None]
    if lowers:
        value, point, fa = max(lowers, key=lambda x: x[0])
        if point.kind != "nominal" and (nominal_bw.lower_from_pole is None
                                        or value > nominal_bw.lower_from_pole):
            out.append(f"The model {point.name} has an unstable pole at "
                       f"{f.num(fa.bandwidth.pole)}: every model then needs a bandwidth of at "
                       f"least about {f.num(value)} rad/s (rule of thumb).")
    unstable = [p.name for p, fa in facts if fa.unstable_poles]
    if unstable and len(unstable) < len(facts):
        out.append("Unstable open-loop poles in some models only (" + ", ".join(unstable[:4])
                   + (", ..." if len(unstable) > 4 else "") + "): the loop must stabilise them "
                   "without destabilising the others.")
    rhp = [p.name for p, fa in facts if fa.rhp_zeros]
    if rhp and len(rhp) < len(facts):
        out.append("Right-half-plane zeros in some models only (" + ", ".join(rhp[:4])
                   + (", ..." if len(rhp) > 4 else "") + ").")
    return out
