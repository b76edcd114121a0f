"""Structural sentences, warnings about unattainable requirements, and which structures can help.

The suggestions name structures exactly as in :data:`synth.requirements.STRUCTURES`
and give the reason in numbers, so ``design`` can start from them.

References
----------
.. [1] S. Skogestad and I. Postlethwaite, *Multivariable Feedback Control*,
   2nd ed., Wiley, 2005, ch. 5 (limits from RHP zeros, poles and delay; from memory).
.. [2] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control of
   Dynamic Systems*, Pearson (rise time ``tr ~ 1.8/wn``; lead, lag and PID
   design; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import NamedTuple

from synth.explain import _fmt as f
from synth.explain.gain import AsymptoteFacts, Trap
from synth.explain.structure import StructuralFacts, is_real
from synth.problem.catalogue import requirement_for

#: order in which suggestions are listed when several apply
_ORDER = ("general", "P", "PD", "lead", "PID", "PI", "lag", "lead-lag")


class Suggestion(NamedTuple):
    """A compensator structure worth searching, and why; unpacks as ``(structure, reason)``."""

    structure: str
    reason: str

    def to_json(self) -> dict:
        return {"structure": self.structure, "reason": self.reason}


@dataclass(frozen=True)
class Caution:
    """A requirement that looks unattainable (``hard``: provably; otherwise by a rule of thumb)."""

    key: str
    hard: bool
    text: str

    def to_json(self) -> dict:
        return {"key": self.key, "hard": self.hard, "text": self.text}


def fact_sentences(facts: StructuralFacts) -> list[str]:
    """Plain sentences for the structural facts, each citing its numbers."""
    out = []
    up = facts.unstable_poles
    out.append(f"Unstable plant poles at s = {f.points(up)}." if up else
               "The plant has no unstable poles.")
    if facts.axis_poles:
        out.append(f"Plant poles on the imaginary axis at s = {f.points(facts.axis_poles)}.")
    rz = facts.rhp_zeros
    out.append(f"Zeros in the closed right half-plane at s = {f.points(rz)}." if rz else
               "The plant has no right-half-plane zeros (delay-free part).")
    if facts.dead_time:
        pz = f.points(facts.pade_zeros)
        out.append(f"Dead time {f.num(facts.dead_time)} s; its order-{facts.pade_order} Pade form "
                   f"adds right-half-plane zeros at {pz}.")
    if facts.hidden_unstable:
        out.append(f"Numerator and denominator share the factor(s) at s = {f.points(facts.hidden_unstable)} "
                   "in the closed right half-plane: that mode is a closed-loop pole for every "
                   "compensator, so no controller stabilises this model.")
    elif facts.common_factors:
        out.append(f"Numerator and denominator share the stable factor(s) at s = "
                   f"{f.points(facts.common_factors)}; synth keeps them (they stay closed-loop poles).")
    par = facts.parity
    zs = ", ".join("infinity" if z is None else f.num(z) for z in par.zeros)
    if facts.hidden_unstable:
        pass  # not stabilisable at all: strong stabilisability is moot
    elif par.holds:
        if len(par.zeros) < 2:
            out.append("Strongly stabilisable: there are fewer than two real zeros in the extended "
                       "closed right half-plane, so parity interlacing holds trivially.")
        else:
            out.append(f"Strongly stabilisable: between consecutive real closed-RHP zeros ({zs}) the "
                       f"plant has {', '.join(str(c) for c in par.pole_counts)} real poles, all even "
                       "(parity interlacing holds).")
    else:
        odd = "; ".join(_span(a, b) for a, b in par.odd_intervals)
        out.append(f"Not strongly stabilisable: the plant has an odd number of real poles between "
                   f"the real closed-RHP zeros {odd} (parity interlacing fails), so every "
                   f"stabilising compensator must itself be unstable, with at least "
                   f"{f.plural(par.min_unstable_compensator_poles, 'real pole')} in that range.")
    if facts.strong_stabilizability_uncertain:
        pairs = "; ".join(f"zero {f.num(z)} and pole {f.point(p)}" for z, p in par.near_pairs)
        out.append(f"Numerically uncertain: a right-half-plane zero and a pole are closer than "
                   f"double precision can order them ({pairs}), so the strong-stabilisability "
                   "verdict above could go either way; treat the pair as (nearly) cancelling and "
                   "check the model.")
    for b in facts.peak_pairs:
        if not math.isfinite(b.bound):
            continue
        out.append(f"RHP zero {f.num(b.zero.real)} with RHP pole {f.num(b.poles[0].real)}: every "
                   f"stabilising loop has peak sensitivity at least |z+p|/|z-p| = {f.num(b.bound)}.")
    for b in facts.peak_combined:
        if math.isfinite(b.bound) and (len(b.poles) > 1 or not is_real(b.zero)
                                       or not is_real(b.poles[0])):
            out.append(f"RHP zero {f.point(b.zero)} with all RHP poles ({f.points(b.poles)}): "
                       f"peak sensitivity at least {f.num(b.bound)}.")
    if facts.delay_peak_t is not None:
        out.append(f"Dead time {f.num(facts.dead_time)} s with the RHP pole at "
                   f"{f.num(_delay_pole(facts))}: peak complementary "
                   f"sensitivity at least exp(p theta) = {f.num(facts.delay_peak_t)}.")
    bw = facts.bandwidth
    if bw.upper_from_zero is not None:
        out.append(f"The RHP zero at {f.num(bw.zero)} limits the closed-loop bandwidth to about "
                   f"z/2 = {f.num(bw.upper_from_zero)} rad/s (rule of thumb).")
    if bw.upper_from_delay is not None:
        out.append(f"The dead time limits the bandwidth to about 1/theta = "
                   f"{f.num(bw.upper_from_delay)} rad/s (rule of thumb).")
    if bw.lower_from_pole is not None:
        out.append(f"The RHP pole at {f.num(bw.pole)} needs a bandwidth of at least about "
                   f"2p = {f.num(bw.lower_from_pole)} rad/s (rule of thumb).")
    return out


def _span(a, b) -> str:
    return f"{f.num(a)} and {'infinity' if b is None else f.num(b)}"


def requirement_warnings(facts: StructuralFacts, req, region, search) -> list[Caution]:
    """Requirements that the plant's structure rules out (hard) or makes doubtful (rule of thumb)."""
    out: list[Caution] = []
    if facts.hidden_unstable:
        out.append(Caution("plant", True,
                            f"No controller can stabilise this model: the unstable factor at s = "
                            f"{f.points(facts.hidden_unstable)} is common to numerator and denominator."))
    lb = facts.peak_sensitivity_lower_bound
    ms, ms_key = req.limit("peak_sensitivity"), requirement_for("peak_sensitivity").key
    if ms is not None and lb is not None and lb > ms:
        out.append(Caution(ms_key, True,
                            f"{ms_key} = {f.num(ms)} is unattainable: "
                            f"the plant's RHP zeros, poles and dead time force a peak sensitivity of "
                            f"at least {f.num(lb)} on every stabilising loop."))
    emax, emax_key = req.limit("steady_state_error"), requirement_for("steady_state_error").key
    if emax is not None and emax < 1.0 and facts.origin_zeros > 0:
        out.append(Caution(emax_key, True,
                            f"{emax_key} = {f.num(emax)} is "
                            "unattainable: the plant has a zero at s = 0, so its static gain is 0 and "
                            "every stable loop leaves the full step as steady-state error."))
    bw = facts.bandwidth
    upper = bw.upper
    src = ("the RHP zero at " + f.num(bw.zero) if upper == bw.upper_from_zero
           else f"the dead time of {f.num(facts.dead_time)} s") if upper is not None else ""
    ts = req.limit("settling_time")
    if upper is not None and ts is not None and region.sigma > upper:
        out.append(Caution(requirement_for("settling_time").key, False,
                            f"Settling within {f.num(ts)} s needs every closed-loop "
                            f"pole at Re s <= -{f.num(region.sigma)}, a bandwidth of at least about "
                            f"{f.num(region.sigma)} rad/s, but {src} limits it to about "
                            f"{f.num(upper)} rad/s: this requirement looks unattainable."))
    tr = req.limit("rise_time")
    if upper is not None and tr is not None and 1.8 / tr > upper:
        out.append(Caution(requirement_for("rise_time").key, False,
                            f"A rise time of {f.num(tr)} s needs a bandwidth of about "
                            f"1.8/tr = {f.num(1.8 / tr)} rad/s, but {src} limits it to "
                            f"about {f.num(upper)} rad/s: this requirement looks unattainable."))
    if upper is not None and bw.lower_from_pole is not None and bw.lower_from_pole > upper:
        out.append(Caution("plant", False,
                            f"The RHP pole at {f.num(bw.pole)} needs a bandwidth of at least about "
                            f"{f.num(bw.lower_from_pole)} rad/s but {src} allows only about "
                            f"{f.num(upper)} rad/s: expect poor robustness whatever the controller."))
    if (not facts.parity.holds and search.structures is not None
            and "general" not in search.structures and facts.stabilizable):
        out.append(Caution("search.structures", True,
                            "search.structures leaves out \"general\", the only structure with poles "
                            "anywhere; since parity interlacing fails, none of the listed structures "
                            "can stabilise the plant."))
    if (not facts.parity.holds and search.general_order < facts.parity.min_unstable_compensator_poles):
        out.append(Caution("search.general_order", True,
                            f"search.general_order = {search.general_order} is too low: a stabilising "
                            f"compensator needs at least {facts.parity.min_unstable_compensator_poles} "
                            "unstable real poles."))
    return out


def _asymptote_help(a: AsymptoteFacts, sigma: float) -> list[Suggestion]:
    """PD, PID and lead, from where a compensator zero moves the asymptote centroid."""
    out: list[Suggestion] = []
    r, c = a.excess, a.centroid
    if r < 2 or c is None:
        return out
    goal = f"Re s < -{f.num(sigma)}" if sigma > 0 else "the left half-plane"
    if r == 2:
        out.append(Suggestion("PD", "a compensator zero lowers the relative degree from 2 to 1, so "
                              "the one remaining far branch runs out along the negative real axis "
                              "instead of parallel to the imaginary axis"))
    elif r == 3:
        zmax = -3.0 * c - 2.0 * sigma
        if zmax > 0:
            out.append(Suggestion("PD", f"a compensator zero at s = -z with 0 < z < {f.num(zmax)} "
                                  f"leaves two vertical asymptotes at Re s = (3*({f.num(c)}) + z)/2, "
                                  f"inside {goal}, instead of the +-60 deg ones into the right half-plane"))
        out.append(Suggestion("PID", "two compensator zeros lower the relative degree from 3 to 1: "
                              "no far branch is left heading for the right half-plane"))
    else:
        out.append(Suggestion("PID", f"two compensator zeros lower the relative degree from {r} to "
                              f"{r - 2}, taking two far branches off the asymptotes into the right "
                              "half-plane"))
    out.append(Suggestion("lead", f"a lead (zero -z, pole -p, p > z) moves the centroid {f.num(c)} "
                          f"left by (p - z)/{r} and adds phase near crossover"))
    return out


def suggest(facts: StructuralFacts, *, req, region, stab, reg, candidates, traps: dict,
            blocks: dict, asym: dict, best, sse_needs_integral: bool,
            sse_lag_ratio: float | None) -> list[Suggestion]:
    """Which structures address each obstacle found, and why.

    Parameters
    ----------
    traps, blocks, asym : dict
        By gain sign (+1, -1): the real-axis traps, the coefficient block (or
        None) and the asymptote facts.
    best : BestAccount or None
        The best-gain account when no gain reaches the region.
    """
    if facts.hidden_unstable:
        return []
    out: list[Suggestion] = []
    par = facts.parity
    if not par.holds:
        odd = "; ".join(_span(a, b) for a, b in par.odd_intervals)
        out.append(Suggestion("general", f"parity interlacing fails, so a stabilising compensator "
                              f"needs an odd number of real poles between {odd} (at least "
                              f"{f.plural(par.min_unstable_compensator_poles, 'unstable pole')}); only "
                              "the general structure places poles there"))
        return out
    gr = req.limit("gain")
    allowed = {1: gr is None or gr[1] > 0, -1: gr is None or gr[0] < 0}
    if not any(allowed[s] and not traps[s] for s in (1, -1)):
        segs = "; ".join(_trap_text(t) for s in (1, -1) if allowed[s] for t in traps[s])
        signs = ("both signs of gain" if allowed[1] and allowed[-1] else
                 f"the {'positive' if allowed[1] else 'negative'} gains that "
                 f"{requirement_for('gain').key} allows")
        out.append(Suggestion("general", f"real-axis segments trap a closed-loop pole in the right "
                              f"half-plane for {signs} ({segs}); compensator poles and zeros in "
                              "the left half-plane do not change the real-axis count there, so the "
                              "compensator needs a real pole or zero inside such a segment"))
        return out
    if candidates:
        rev = " (reverse-acting)" if all(hi is not None and hi <= 0 for _, hi in candidates) else ""
        out.append(Suggestion("P", f"the gains {f.intervals(candidates)}{rev} pass the region, "
                              "range and steady-state checks made here"))
    sign_ok = [s for s in (1, -1) if not traps[s]]
    pos_blocked = bool(traps[1]) or blocks[1] is not None
    for s in sign_ok:
        b = blocks[s]
        if b is not None and b.kind == "fixed" and b.power >= 1:
            out.append(Suggestion("PD", f"the s^{b.power} coefficient of the characteristic polynomial "
                                  "is fixed by the plant; a compensator zero multiplies the plant "
                                  "numerator by (s + z) and so adds a gain-dependent term there"))
            out.append(Suggestion("lead", "its zero supplies the missing characteristic-polynomial "
                                  "term like PD, with a pole that limits high-frequency gain"))
    need_shape = (not stab) or (not reg and not region.is_stability_only)
    # the compensator zeros' effect on the asymptotes is read for positive gain, so only
    # when positive gain is usable at all
    if allowed[1] and not traps[1] and (
            need_shape or (asym[1].into_rhp and not pos_blocked and not candidates)):
        out.extend(_asymptote_help(asym[1], region.sigma))
    if best is not None and best.shortfalls:
        out.append(Suggestion("lead", "phase lead pulls the dominant branches left: " +
                              "; ".join(best.shortfalls)))
        out.append(Suggestion("PD", "derivative action adds the same phase lead without a pole: " +
                              "; ".join(best.shortfalls)))
    if sse_needs_integral:
        out.append(Suggestion("PI", "integral action makes the step steady-state error zero; the "
                              "plant has no integrator, so P alone leaves 1/(1 + K G(0))"))
        out.append(Suggestion("PID", "integral action for zero steady-state error with a derivative "
                              "zero to keep the transient"))
    if sse_lag_ratio is not None:
        out.append(Suggestion("lag", f"a lag raises the low-frequency gain by its zero/pole ratio "
                              f"(about {f.num(sse_lag_ratio)} here) with little change to the "
                              "transient, cutting the steady-state error"))
        out.append(Suggestion("lead-lag", "the lag part for steady-state accuracy, the lead part "
                              "for the transient"))
    if not out:
        out.append(Suggestion("general", "no single obstacle points at a classical structure; a "
                              "free fixed-order compensator is the broadest search"))
    return _merge(out)


def _trap_text(t: Trap) -> str:
    if t.zero is None:
        return f"right of the pole at {f.num(t.pole)}"
    return f"between the pole at {f.num(t.pole)} and the zero at {f.num(t.zero)}"


def _merge(items: list[Suggestion]) -> list[Suggestion]:
    """One entry per structure, reasons joined, in a fixed order of preference."""
    by: dict[str, list[str]] = {}
    first: dict[str, int] = {}
    for i, s in enumerate(items):
        by.setdefault(s.structure, [])
        first.setdefault(s.structure, i)
        if s.reason not in by[s.structure]:
            by[s.structure].append(s.reason)
    names = sorted(by, key=lambda n: (first[n], _ORDER.index(n)))
    return [Suggestion(n, "; ".join(by[n])) for n in names]


def lag_ratio_needed(g0: float, gains, emax: float) -> float | None:
    """Smallest low-frequency gain boost a lag needs for step error ``<= emax`` (type-0 plant).

    With ``x = K G(0)`` the error is ``1/|1 + x|``; a lag multiplies ``x`` by
    its zero/pole ratio ``b``, so ``b >= (1/emax - 1)/x`` for ``x > 0`` and
    ``b >= (1/emax + 1)/|x|`` for ``x < -1`` (an unstable plant). The best of
    the given candidate gains is used.
    """
    if emax <= 0 or not g0 or not math.isfinite(g0):
        return None
    a = 1.0 / emax
    best = None
    for k in gains:
        x = k * g0
        if x > 0:
            need = (a - 1.0) / x
        elif x < -1:
            need = (a + 1.0) / -x
        else:
            continue
        need = max(1.0, need)
        best = need if best is None else min(best, need)
    return best


def _delay_pole(facts) -> float:
    """The RHP pole behind ``delay_peak_t = exp(p theta)``.

    It comes from the delay-free poles; when the engine form's roots lose it
    (a badly scaled plant), it is recovered from the bound itself.
    """
    engine = [p.real for p in facts.unstable_poles]
    if engine:
        return max(engine)
    return math.log(facts.delay_peak_t) / facts.dead_time
