"""The explanation of a problem: what proportional gain can and cannot do, and why.

:func:`explain_problem` gathers the engine's exact facts (gain intervals,
imaginary-axis crossings, real-axis segments, asymptotes, characteristic
coefficients) and the plant's structural facts, and writes every sentence from
them. :class:`Explanation` carries the facts, the sentences, the contract's
``synth.explain/1`` JSON and the terminal note.

With empty or absent ``[requirements]`` the region is the open left
half-plane, so the requirement gain intervals equal the stabilising ones.

References
----------
.. [1] W. R. Evans, Trans. AIEE 69, 1950 (root locus).
.. [2] E. J. Routh, 1877 (coefficient signs; stability ranges).
.. [3] D. C. Youla, J. J. Bongiorno and C. N. Lu, Automatica 10, 1974 (parity interlacing).
.. [4] S. Skogestad and I. Postlethwaite, *Multivariable Feedback Control*,
   2nd ed., 2005, ch. 5 (performance limits; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from synth.explain import _fmt as f
from synth.explain.advice import (
    Caution,
    Suggestion,
    fact_sentences,
    lag_ratio_needed,
    requirement_warnings,
    suggest,
)
from synth.explain.gain import (
    AsymptoteFacts,
    Crossing,
    Interval,
    Optimum,
    Reason,
    asymptote_facts,
    asymptote_reason,
    axis_crossings,
    coefficient_block,
    coefficient_reason,
    count_reason,
    decay_and_damping,
    degree_drop_gain,
    edge_reason,
    intersect,
    intersect_all,
    maximise_over,
    real_axis_traps,
    rhp_count_profile,
    robust_intervals,
    sign_part,
    trap_reason,
    zero_reason,
)
from synth.explain.models import ModelsAccount, explain_models
from synth.explain.structure import StructuralFacts, structural_facts
from synth.locus.core import marginal_intervals, region_gain_intervals, stable_gain_intervals
from synth.numerics.scaling import LoopScaling
from synth.outputs.jsonout import clean, finite_or_none, interval_lists
from synth.problem.catalogue import requirement_for
from synth.problem.plant import Plant
from synth.problem.region import Region, overshoot_from_damping

SCHEMA = "synth.explain/1"
SAFETY_LINE = ("Note: this is an analysis of a linear model; confirm limits, saturation and "
               "timing on the real machine before use.")


@dataclass(frozen=True)
class BestAccount:
    """How close proportional gain gets to the requirement region when it cannot reach it.

    Attributes
    ----------
    over : tuple of intervals
        The gains searched (stabilising, within the allowed gain range when there is one).
    sigma, zeta : float
        The region's decay rate and damping.
    decay, damping : Optimum or None
        Best slowest-pole decay rate and best least damping over ``over``,
        computed when that part of the region is out of reach.
    compromise : Optimum or None
        When each part is reachable alone but not together: the gain that
        maximises ``min(decay/sigma, damping/zeta)``, with the values there.
    """

    over: tuple[Interval, ...]
    sigma: float
    zeta: float
    decay: Optimum | None
    damping: Optimum | None
    compromise: Optimum | None
    compromise_decay: float | None
    compromise_damping: float | None
    decay_reachable: tuple[Interval, ...]
    damping_reachable: tuple[Interval, ...]
    shortfalls: tuple[str, ...]

    def to_json(self) -> dict:
        return {
            "searched_gain_intervals": [list(iv) for iv in self.over],
            "needed_decay_rate": self.sigma or None, "needed_damping": self.zeta or None,
            "best_decay_rate": None if self.decay is None else self.decay.to_json(),
            "best_damping": None if self.damping is None else self.damping.to_json(),
            "compromise": None if self.compromise is None else {
                "gain": self.compromise.gain, "decay_rate": self.compromise_decay,
                "damping": self.compromise_damping},
            "decay_gain_intervals": [list(iv) for iv in self.decay_reachable],
            "damping_gain_intervals": [list(iv) for iv in self.damping_reachable],
        }


def best_account(num, den, region: Region, req, over,
                 stable=None) -> tuple[BestAccount, list[Reason]]:
    """Best decay and damping that gains in ``over`` reach, and the sentences saying by how much they fall short.

    Each score is maximised by a dense grid per interval refined with bounded
    Brent steps (:func:`synth.explain.gain.maximise_over`).
    """
    sigma, zeta = float(region.sigma), float(region.zeta)
    decay_ok = (intersect_all(region_gain_intervals(num, den, Region(sigma, 0.0)), over)
                if sigma > 0 else list(over))
    damp_ok = (intersect_all(region_gain_intervals(num, den, Region(0.0, zeta)), over)
               if zeta > 0 else list(over))
    reasons: list[Reason] = []
    short: list[str] = []
    stable = list(over) if stable is None else list(stable)
    gscale = LoopScaling.for_loop(num, den).g0  # the loop's own gain scale
    limited = list(over) != stable
    scope = "stabilising" + (" and allowed" if limited else "")
    stable_ends = {e for iv in stable for e in iv if e is not None}
    dec = dam = comp = None
    cd = cz = None
    def at(opt: Optimum) -> str:
        # a supremum reached only in the limit at the edge of the stable range
        for lo, hi in over:
            # "at the edge" to the resolution of the search: relative to the interval's
            # own width (or the loop's gain scale when it is unbounded)
            width = hi - lo if lo is not None and hi is not None else gscale
            for e in (lo, hi):
                if e is not None and abs(opt.gain - e) <= 1e-5 * max(abs(e), width):
                    edge = ("stable range" if e in stable_ends
                            else f"allowed {requirement_for('gain').key}")
                    return f"as K approaches {f.num(e)}, the edge of the {edge}"
        return f"at K = {f.num(opt.gain)}"

    if sigma > 0 and not decay_ok:
        dec = maximise_over(lambda g: decay_and_damping(num, den, g)[0], over, gscale)
        if dec is not None:
            band = req.settling_band
            ts = math.log(100.0 / band) / dec.value if dec.value > 0 else math.inf
            reasons.append(Reason(
                "best_decay", 0,
                f"Settling within {f.num(req.limit('settling_time'))} s ({f.num(band)} % band) needs every "
                f"closed-loop pole at Re s <= -{f.num(sigma)}; over the {scope} gains the slowest pole "
                f"decays at best at rate {f.num(dec.value)} ({at(dec)}), short by "
                f"{f.num(sigma - dec.value)}, which means settling in about {f.num(ts)} s.",
                {"needed": sigma, "best": dec.value, "gain": dec.gain,
                 "shortfall": sigma - dec.value, "settling_time": finite_or_none(ts)}))
            short.append(f"best decay rate {f.num(dec.value)} against {f.num(sigma)} needed")
    if zeta > 0 and not damp_ok:
        dam = maximise_over(lambda g: decay_and_damping(num, den, g)[1], over, gscale)
        if dam is not None:
            src = _damping_source(req, zeta)
            os_ = overshoot_from_damping(max(dam.value, 0.0))
            reasons.append(Reason(
                "best_damping", 0,
                f"Damping of at least {f.num(zeta)} ({src}) is needed; the best any {scope} gain gives "
                f"is {f.num(dam.value)} {at(dam)}, short by {f.num(zeta - dam.value)} "
                f"(a dominant pair with that damping overshoots by about {f.num(os_, 3)} %).",
                {"needed": zeta, "best": dam.value, "gain": dam.gain,
                 "shortfall": zeta - dam.value, "overshoot_percent": os_}))
            short.append(f"best damping {f.num(dam.value)} against {f.num(zeta)} needed")
    if sigma > 0 and zeta > 0 and decay_ok and damp_ok:
        def score(g):
            dd, zz = decay_and_damping(num, den, g)
            return np.minimum(dd / sigma, zz / zeta)
        comp = maximise_over(score, over, gscale)
        if comp is not None:
            dv, zv = decay_and_damping(num, den, np.array([comp.gain]))
            cd, cz = float(dv[0]), float(zv[0])
            reasons.append(Reason(
                "compromise", 0,
                f"Each part of the region is reachable alone (decay rate {f.num(sigma)} for "
                f"{f.intervals(decay_ok)}; damping {f.num(zeta)} for {f.intervals(damp_ok)}) but never "
                f"at the same gain; at the best compromise K = {f.num(comp.gain)} the slowest decay is "
                f"{f.num(cd)} (needed {f.num(sigma)}) and the least damping {f.num(cz)} "
                f"(needed {f.num(zeta)}).",
                {"gain": comp.gain, "decay_rate": cd, "damping": cz, "needed_decay_rate": sigma,
                 "needed_damping": zeta, "decay_gain_intervals": [list(iv) for iv in decay_ok],
                 "damping_gain_intervals": [list(iv) for iv in damp_ok]}))
            short.append(f"at the best compromise K = {f.num(comp.gain)}: decay {f.num(cd)} of "
                         f"{f.num(sigma)}, damping {f.num(cz)} of {f.num(zeta)}")
    acc = BestAccount(tuple(over), sigma, zeta, dec, dam, comp, cd, cz, tuple(decay_ok),
                      tuple(damp_ok), tuple(short))
    return acc, reasons


def _damping_source(req, zeta: float) -> str:
    from synth.problem.region import damping_from_overshoot

    limits = {entry.region: (entry, value) for entry, value in req.limits() if entry.region}
    overshoot, damping = limits.get("overshoot"), limits.get("damping")
    if overshoot is not None:
        z_os = damping_from_overshoot(overshoot[1])
        if damping is None or z_os >= damping[1]:
            return f"from the {f.num(overshoot[1])} % overshoot limit"
    return damping[0].key if damping is not None else "the damping limit"


def sse_gain_intervals(g0: float | None, plant_type: int, origin_zeros: int,
                       emax: float) -> list[Interval]:
    """Gains for which proportional control keeps the unit-step error ``<= emax`` (closed loop stable).

    A type-0 plant leaves ``|1/(1 + K G(0))|``; an integrator in the plant
    leaves none; a zero at the origin leaves the whole step (common practice).
    """
    if plant_type > 0:
        return [(None, None)]
    if origin_zeros > 0 or g0 is None or g0 == 0.0:
        return [(None, None)] if emax >= 1.0 else []
    if emax <= 0.0:
        return []
    a = 1.0 / emax
    # |1 + x| >= a with x = K g0: x <= -a - 1 or x >= a - 1
    x_lo, x_hi = -a - 1.0, a - 1.0
    if g0 > 0:
        return [(None, x_lo / g0), (x_hi / g0, None)]
    return [(None, x_hi / g0), (x_lo / g0, None)]


@dataclass(frozen=True)
class Explanation:
    """Everything ``synth explain`` reports about a problem.

    The contract's fields are ``stabilizing_gain_intervals``,
    ``requirement_gain_intervals`` (open intervals over all real gains,
    sorted, ``None`` for an unbounded end), ``strongly_stabilizable`` and
    ``reasons``; the rest are extras (see :meth:`to_json`).  With ``[sampling]``,
    ``z_plane`` (:class:`synth.locus.zplane.ZPlaneView`) answers the same question for
    the sampled loop in the z-plane, and one more reason says what the hold and the
    delays do to the stabilising gains.
    """

    plant: Plant
    region: Region
    requirements_given: dict
    stabilizing_gain_intervals: tuple[Interval, ...]
    requirement_gain_intervals: tuple[Interval, ...]
    gain_range: tuple[float, float] | None
    stabilizing_in_gain_range: tuple[Interval, ...]
    requirement_in_gain_range: tuple[Interval, ...]
    plant_gain_range: tuple[float, float] | None
    robust_stabilizing: tuple[Interval, ...] | None
    robust_requirement: tuple[Interval, ...] | None
    candidate_gain_intervals: tuple[Interval, ...]
    strongly_stabilizable: bool
    facts: StructuralFacts
    crossings: tuple[Crossing, ...]
    asymptotes: tuple[AsymptoteFacts, AsymptoteFacts]
    reason_details: tuple[Reason, ...]
    best: BestAccount | None
    warnings: tuple[Caution, ...]
    suggestions: tuple[Suggestion, ...]
    fact_lines: tuple[str, ...]
    models: ModelsAccount | None = None
    z_plane: Any = None

    @property
    def reasons(self) -> list[str]:
        """The sentences of the account (the contract's ``reasons``)."""
        return [r.text for r in self.reason_details]

    @property
    def suggested_structures(self) -> tuple[str, ...]:
        """Structure names from :data:`synth.requirements.STRUCTURES`, most useful first."""
        return tuple(s.structure for s in self.suggestions)

    @property
    def only_negative_gain_stabilizes(self) -> bool:
        ivs = self.stabilizing_gain_intervals
        return bool(ivs) and all(hi is not None and hi <= 0 for _, hi in ivs)

    # -- output ---------------------------------------------------------------------------
    def to_json(self) -> dict:
        """The contract's ``synth.explain/1`` object plus extra fields; no NaN or infinity."""
        ivs = interval_lists
        out = {
            "schema": SCHEMA,
            "plant": self.plant.to_json(),
            "proportional": {
                "stabilizing_gain_intervals": ivs(self.stabilizing_gain_intervals),
                "requirement_gain_intervals": ivs(self.requirement_gain_intervals),
                requirement_for("gain").key: (None if self.gain_range is None
                                              else list(self.gain_range)),
                "stabilizing_in_gain_range": ivs(self.stabilizing_in_gain_range),
                "requirement_in_gain_range": ivs(self.requirement_in_gain_range),
                requirement_for("stable_plant_gain_range").key: (
                    None if self.plant_gain_range is None else list(self.plant_gain_range)),
                "robust_stabilizing_gain_intervals": (None if self.robust_stabilizing is None
                                                      else ivs(self.robust_stabilizing)),
                "robust_requirement_gain_intervals": (None if self.robust_requirement is None
                                                      else ivs(self.robust_requirement)),
                "candidate_gain_intervals": ivs(self.candidate_gain_intervals),
                "only_negative_gain_stabilizes": self.only_negative_gain_stabilizes,
                "imaginary_axis_crossings": [c.to_json() for c in self.crossings],
                "asymptotes": {"positive_gain": self.asymptotes[0].to_json(),
                               "negative_gain": self.asymptotes[1].to_json()},
                "best": None if self.best is None else self.best.to_json(),
            },
            "strongly_stabilizable": bool(self.strongly_stabilizable),
            "strongly_stabilizable_uncertain": bool(self.facts.strong_stabilizability_uncertain),
            "numerically_marginal_gain_intervals": interval_lists(
                marginal_intervals(self.stabilizing_gain_intervals)
                + marginal_intervals(self.requirement_gain_intervals)),
            "reasons": self.reasons,
            "reason_details": [r.to_json() for r in self.reason_details],
            "region": {"decay_rate": self.region.sigma, "damping": self.region.zeta,
                       "description": self.region.describe(),
                       "requirements": self.requirements_given},
            "facts": self.facts.to_json(),
            "fact_sentences": list(self.fact_lines),
            "warnings": [w.to_json() for w in self.warnings],
            "suggestions": [s.to_json() for s in self.suggestions],
            "suggested_structures": list(self.suggested_structures),
        }
        if self.models is not None:
            out["proportional"]["models"] = self.models.to_json()
        if self.z_plane is not None:
            out["z_plane"] = self.z_plane.to_json()
        return clean(out)

    def text_lines(self) -> list[str]:
        """The terminal note: verdict, reasons, structure, warnings, what to try."""
        p = self.plant
        title = f"Plant {p.describe()}" + (f"  ({p.label})" if p.label else "")
        lines = [title]
        fa = self.facts
        lines.append(f"  order {p.order}, relative degree {fa.relative_degree}; poles "
                     f"{f.points(fa.poles)}; zeros {f.points(fa.zeros)}")
        if not self.region.is_stability_only:
            lines.append(f"  requirement region: {self.region.describe()}")
        lines.append("")
        lines.append("Proportional gain K (C = K)")
        lines.append(f"  stabilises for    {f.intervals(self.stabilizing_gain_intervals)}")
        if not self.region.is_stability_only:
            lines.append(f"  meets the region  {f.intervals(self.requirement_gain_intervals)}")
        if self.gain_range is not None:
            lo, hi = self.gain_range
            lines.append(f"  within {requirement_for('gain').key} [{f.num(lo)}, {f.num(hi)}]: "
                         "stabilising "
                         f"{f.intervals(self.stabilizing_in_gain_range, none='none')}; region "
                         f"{f.intervals(self.requirement_in_gain_range, none='none')}")
        if self.plant_gain_range is not None and self.robust_stabilizing is not None:
            lo, hi = self.plant_gain_range
            lines.append(f"  stable for every plant-gain factor in [{f.num(lo)}, {f.num(hi)}]: "
                         f"{f.intervals(self.robust_stabilizing, none='none')}")
        if self.models is not None:
            m = self.models
            lines.append(f"  for every plant model ({m.checked} checked): stabilises for "
                         f"{f.intervals(m.stabilizing, none='no real gain')}"
                         + ("" if self.region.is_stability_only else
                            f"; region {f.intervals(m.requirement, none='no real gain')}"))
            for lim in m.limits:
                lines.append(f"    {'lower' if lim.end == 'low' else 'upper'} end "
                             f"{f.num(lim.gain)} ({'stabilising' if lim.which == 'stabilizing' else 'region'}) "
                             f"set by {lim.model.name}")
        lines.append(f"  passes every check here: "
                     f"{f.intervals(self.candidate_gain_intervals, none='none')}")
        thin = (marginal_intervals(self.stabilizing_gain_intervals)
                + marginal_intervals(self.requirement_gain_intervals))
        if thin:
            lines.append(f"  numerically marginal (narrower than double precision can resolve): "
                         f"{f.intervals(thin)}")
        if self.z_plane is not None:
            lines.append("")
            lines.extend(self.z_plane.text_lines())
        lines.append("")
        lines.append("Why")
        lines.extend(f"  - {r}" for r in self.reasons)
        lines.append("")
        lines.append("Plant structure")
        lines.extend(f"  - {s}" for s in self.fact_lines)
        if self.warnings:
            lines.append("")
            lines.append("Warnings")
            lines.extend(f"  ! {w.text}" for w in self.warnings)
        lines.append("")
        lines.append("Worth trying")
        if self.suggestions:
            width = max(len(s.structure) for s in self.suggestions)
            lines.extend(f"  {s.structure:<{width}}  {s.reason}" for s in self.suggestions)
        else:
            lines.append("  nothing: no compensator can stabilise this model")
        lines.append("")
        lines.append(SAFETY_LINE)
        return lines


def explain_problem(problem) -> Explanation:
    """Explain what proportional gain can and cannot do for ``problem``, and why.

    Parameters
    ----------
    problem : synth.requirements.Problem

    Returns
    -------
    Explanation
        With empty or absent ``[requirements]`` the region is the open left
        half-plane and ``requirement_gain_intervals`` equal
        ``stabilizing_gain_intervals``.
    """
    plant = problem.plant
    req = problem.requirements
    region = problem.region
    n, d = plant.num, plant.den
    facts = structural_facts(plant)

    kscale = LoopScaling.for_loop(n, d).g0  # the loop's own gain scale
    stab = _snap(stable_gain_intervals(n, d), kscale)
    reg = stab if region.is_stability_only else _snap(region_gain_intervals(n, d, region), kscale)
    crossings = axis_crossings(n, d)
    # the same list plus the plant's own axis poles at K = 0, for the stable-range ends
    edge_crossings = axis_crossings(n, d, open_loop=True)
    kdrop = degree_drop_gain(n, d)
    asym = {s: asymptote_facts(n, d, s) for s in (1, -1)}
    traps = {s: real_axis_traps(n, d, s) for s in (1, -1)}
    blocks = {s: coefficient_block(n, d, s) for s in (1, -1)}

    reasons: list[Reason] = []
    if facts.hidden_unstable:
        reasons.append(Reason(
            "hidden_mode", 0,
            f"The plant's numerator and denominator share the factor(s) at s = "
            f"{f.points(facts.hidden_unstable)} in the closed right half-plane; that mode stays a "
            "closed-loop pole for every gain and every compensator.",
            {"modes": [[z.real, z.imag] for z in facts.hidden_unstable]}))
    if stab:
        reasons.append(Reason("verdict", 0, f"Proportional gain stabilises the loop for "
                              f"{f.intervals(stab)}.", {"intervals": [list(iv) for iv in stab]}))
        if len(stab) > 1:
            reasons.append(Reason("bands", 0, f"The stabilising gains form {len(stab)} separate "
                                  "bands: raising the gain destabilises and then restabilises "
                                  "the loop.", {"count": len(stab)}))
        if all(hi is not None and hi <= 0 for _, hi in stab):
            reasons.append(Reason("negative_only", -1,
                                  f"Only negative (reverse-acting) gains stabilise ({f.intervals(stab)}): "
                                  "the controller must act in reverse, raising its output when "
                                  "the error falls.", {"intervals": [list(iv) for iv in stab]}))
    else:
        reasons.append(Reason("verdict", 0, "No real gain, positive or negative, stabilises the "
                              "loop.", {"intervals": []}))

    # why each sign fails, or what bounds its stable range
    b1, b2 = blocks[1], blocks[-1]
    shared = (b1 is not None and b2 is not None and b1.kind == b2.kind == "fixed"
              and b1.power == b2.power)
    if shared:
        reasons.append(coefficient_reason(b1, both_signs=True))
    for s in (1, -1):
        part = sign_part(stab, s)
        if not part:
            why = [trap_reason(t) for t in traps[s]]
            if blocks[s] is not None and not shared:
                why.append(coefficient_reason(blocks[s]))
            if not why and not shared:
                steps = rhp_count_profile(n, d, s, crossings)
                why.append(count_reason(steps, s, crossings))
                last = _last_crossing(crossings, s)
                r = asymptote_reason(asym[s], last, None)
                if r is not None:
                    why.append(r)
                r = zero_reason(facts.zeros, s, None, facts.pade_zeros)
                if r is not None:
                    why.append(r)
            reasons.extend(why)
        else:
            far = part[-1][1] if s > 0 else part[0][0]
            if far is not None and far != 0.0:
                last = _crossing_at(crossings, far)
                why = [r for r in (asymptote_reason(asym[s], last, far),
                                   zero_reason(facts.zeros, s, far, facts.pade_zeros)) if r is not None]
                if not why:
                    why.append(count_reason(rhp_count_profile(n, d, s, crossings), s, crossings,
                                            stable_somewhere=True))
                reasons.extend(why)
    for lo, hi in stab:
        for k, lower in ((lo, True), (hi, False)):
            if k is None:
                continue
            r = edge_reason(k, edge_crossings, kdrop, lower, (lo, hi))
            if r is not None:
                reasons.append(r)

    # the requirement region
    if not region.is_stability_only:
        if reg:
            reasons.append(Reason("region", 0, f"Every closed-loop pole lies in the requirement "
                                  f"region ({region.describe()}) for {f.intervals(reg)}.",
                                  {"intervals": [list(iv) for iv in reg]}))
        else:
            reasons.append(Reason("region", 0, f"No real gain puts every closed-loop pole in the "
                                  f"requirement region ({region.describe()}).", {"intervals": []}))

    gain_key = requirement_for("gain").key
    gr = req.limit("gain")
    stab_in = intersect(stab, *gr) if gr else list(stab)
    reg_in = intersect(reg, *gr) if gr else list(reg)
    if gr:
        txt = (f"Within the allowed {gain_key} [{f.num(gr[0])}, {f.num(gr[1])}] the stabilising "
               f"gains are {f.intervals(stab_in, none='none')}")
        if not region.is_stability_only:
            txt += f" and those meeting the region {f.intervals(reg_in, none='none')}"
        txt += "."
        if stab and not stab_in:
            txt += f" None of the stabilising gains ({f.intervals(stab)}) is allowed."
        reasons.append(Reason(gain_key, 0, txt, {gain_key: list(gr),
                                                   "stabilizing": [list(iv) for iv in stab_in],
                                                   "requirement": [list(iv) for iv in reg_in]}))

    best = None
    if stab and not reg_in and not region.is_stability_only:
        over = stab_in if stab_in else stab
        best, more = best_account(n, d, region, req, over, stab)
        reasons.extend(more)

    robust_key = requirement_for("stable_plant_gain_range").key
    pgr = req.limit("stable_plant_gain_range")
    rob_stab = rob_reg = None
    if pgr:
        rob_stab = tuple(robust_intervals(stab, *pgr))
        rob_reg = tuple(robust_intervals(reg, *pgr))
        scaled = f"the plant gain scaled by any factor from {f.num(pgr[0])} to {f.num(pgr[1])}"
        if rob_stab:
            txt = f"To stay stable with {scaled}, K must satisfy {f.intervals(rob_stab)}"
        else:
            txt = f"No gain keeps the loop stable with {scaled}"
        if not region.is_stability_only:
            txt += (f"; to stay in the region, {f.intervals(rob_reg)}" if rob_reg else
                    "; no gain keeps it in the region")
        reasons.append(Reason(robust_key, 0, txt + ".",
                              {robust_key: list(pgr),
                               "stabilizing": [list(iv) for iv in rob_stab],
                               "requirement": [list(iv) for iv in rob_reg]}))

    models = explain_models(problem)
    if models is not None:
        more = models.sentences()
        reasons.append(Reason("models", 0, more[0], {
            "stabilizing": [list(iv) for iv in models.stabilizing],
            "requirement": [list(iv) for iv in models.requirement],
            "models_checked": models.checked}))
        reasons.extend(Reason("models", 0, text, {}) for text in more[1:])
    cand = list(reg_in)
    if models is not None:
        # stability for every model (the region, like the search, is aimed at the nominal)
        cand = intersect_all(cand, models.stabilizing)
        if pgr:
            cand = intersect_all(cand, robust_intervals(models.stabilizing, *pgr))
    if rob_stab is not None:
        # the plant-gain tolerance asks for stability at every factor (the region
        # is asked at the nominal plant), as the design verifier judges it
        cand = intersect_all(cand, rob_stab)
    u = req.limit("peak_control_effort")
    if u is not None and facts.relative_degree > 0:
        cand = intersect(cand, -u, u)
        reasons.append(Reason(
            "control_effort", 0,
            f"For a unit step the controller output jumps to K at t = 0 (the plant is strictly "
            f"proper, so the output starts at 0), so a peak effort of at most {f.num(u)} needs "
            f"|K| <= {f.num(u)}.", {requirement_for("peak_control_effort").key: u}))
    sse_needs_integral = False
    lag_ratio = None
    emax = req.limit("steady_state_error")
    if emax is not None:
        sse = sse_gain_intervals(facts.dc_gain, facts.plant_type, facts.origin_zeros, emax)
        before = list(cand)
        cand = intersect_all(cand, sse)
        reasons.append(_sse_reason(facts, emax, sse, cand))
        if facts.plant_type == 0 and facts.origin_zeros == 0 and not cand and (before or emax == 0):
            sse_needs_integral = True
            ends = [e for iv in before for e in iv if e is not None and e != 0.0]
            if emax > 0 and facts.dc_gain and ends:
                lag_ratio = lag_ratio_needed(facts.dc_gain, ends, emax)
    reasons.append(Reason("candidates", 0,
                          f"Gains that pass every check made here: {f.intervals(cand)}.",
                          {"intervals": [list(iv) for iv in cand]}))
    z_plane = None
    if problem.sampling is not None:
        # the controller runs sampled: the same question in the z-plane, with the hold and delays
        from synth.locus.zplane import proportional_view

        z_plane = proportional_view(problem)
        reasons.append(Reason("sampled", 0, z_plane.reason(stab), {
            "period": z_plane.period, "compute_delay": z_plane.compute_delay,
            "intervals": [list(iv) for iv in z_plane.stabilizing_gain_intervals]}))

    warnings = requirement_warnings(facts, req, region, problem.search)
    suggestions = suggest(facts, req=req, region=region, stab=stab, reg=reg_in, candidates=cand,
                          traps=traps, blocks=blocks, asym=asym, best=best,
                          sse_needs_integral=sse_needs_integral, sse_lag_ratio=lag_ratio)
    return Explanation(
        plant=plant, region=region, requirements_given=req.given(),
        stabilizing_gain_intervals=tuple(stab), requirement_gain_intervals=tuple(reg),
        gain_range=gr, stabilizing_in_gain_range=tuple(stab_in),
        requirement_in_gain_range=tuple(reg_in), plant_gain_range=pgr,
        robust_stabilizing=rob_stab, robust_requirement=rob_reg,
        candidate_gain_intervals=tuple(cand),
        strongly_stabilizable=facts.strongly_stabilizable, facts=facts, crossings=crossings,
        asymptotes=(asym[1], asym[-1]), reason_details=tuple(reasons), best=best,
        warnings=tuple(warnings), suggestions=tuple(suggestions),
        fact_lines=tuple(fact_sentences(facts)), models=models, z_plane=z_plane)


def _snap(ivs, scale: float) -> list[Interval]:
    """Interval ends within rounding of K = 0 (a plant pole on the imaginary axis) become 0."""
    def one(x):
        return 0.0 if x is not None and abs(x) <= 1e-12 * scale else x
    return [(one(a), one(b)) for a, b in ivs]


def _sse_reason(facts: StructuralFacts, emax: float, sse, cand) -> Reason:
    data = {requirement_for("steady_state_error").key: emax,
            "gain_intervals": [list(iv) for iv in sse],
            "dc_gain": facts.dc_gain, "plant_type": facts.plant_type}
    if facts.plant_type > 0:
        text = (f"The plant has {f.plural(facts.plant_type, 'integrator')}, so every stabilising "
                "gain leaves zero steady-state error for a step.")
    elif facts.origin_zeros > 0:
        text = ("The plant has a zero at s = 0, so every stable loop leaves the whole step as "
                "steady-state error.")
    elif emax <= 0.0:
        text = (f"With static gain G(0) = {f.num(facts.dc_gain)} proportional control leaves a "
                "steady-state error |1/(1 + K G(0))|, never zero.")
    else:
        text = (f"With static gain G(0) = {f.num(facts.dc_gain)} proportional control leaves a "
                f"steady-state error |1/(1 + K G(0))|; keeping it at most {f.num(emax)} needs "
                f"{f.intervals(sse)}")
        text += f", which leaves {f.intervals(cand)} together with the other checks."
    return Reason("steady_state", 0, text, data)


def _last_crossing(crossings, sign: int) -> Crossing | None:
    cs = [c for c in crossings if c.gain * sign > 0]
    return max(cs, key=lambda c: abs(c.gain)) if cs else None


def _crossing_at(crossings, k: float) -> Crossing | None:
    cs = [c for c in crossings if abs(c.gain - k) <= 1e-6 * abs(k) and c.frequency > 0]
    return max(cs, key=lambda c: c.frequency) if cs else None
