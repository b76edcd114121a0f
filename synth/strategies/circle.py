"""Frequency-domain design of PI (and PID) controllers under circle constraints (origin ``"search"``).

For a compensator that is affine in its proportional and integral gains,

    C(s) = kp + ki / s + C0(s)          (C0 = 0 for a PI, a filtered derivative for a PID),

every robustness limit of the loop that is a circle in the Nyquist plane
holds, at one frequency w, exactly when a quadratic in ``ki`` (for a fixed
``kp``) is non-negative:

* peak sensitivity: ``|1 + L| >= 1/Ms``;
* peak complementary sensitivity: ``|L| <= Mt |1 + L|``;
* noise gain: ``|C| <= Kn |1 + L|`` (with ``C = L / G``);
* the phase and gain margins through the circles they imply: ``Ms <= 1 /
  (2 sin(PM/2))`` and ``Ms <= GM / (GM - 1)`` keep both (sufficient, so
  the designs are a little conservative there).

So for each ``kp`` the largest admissible ``ki`` (from 0 upwards, over a
dense grid of frequencies with the exact dead time) comes in closed form
(Astrom, Panagopoulos and Hagglund 1998, "MIGO").  The strategy then
minimises the problem's objective (:mod:`synth.problem.objectives`; for
``disturbance`` the load-step IAE of the exact-delay simulation, not its
proxy ``1/ki``) over ``kp`` and the fraction ``ki / ki_max(kp)``: a batched
grid first, then a batched local grid refined three times around the best
point.  With no Ms limit in the file it designs at the levels
:data:`MS_LEVELS` and lets the objective choose.

PID.  The derivative part ``C0 = kd s / (1 + s Tf)`` is fixed at a few
values around the PI optimum (derivative time ``Td = kd / kp`` as a
fraction of the PI's integral time, filter ``Tf = Td / N``); each is a PI
problem of its own, and the best few are refined the same way.

Work.  One work unit per candidate evaluated on the frequency grid, and
:data:`SIM_UNITS` per exact simulation; the grids and the refinement rounds
are fixed, so the same problem gives the same candidates.  Nothing is random
and nothing reads the clock.  Every candidate is verified afterwards.

References
----------
.. [1] K. J. Astrom, H. Panagopoulos and T. Hagglund, "Design of PI
   controllers based on non-convex optimization", Automatica 34(5), 1998,
   585-601.
.. [2] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   ch. 4 and 7 (robustness circles, MIGO, the noise gain).
.. [3] O. Garpinger, T. Hagglund and K. J. Astrom, "Performance and
   robustness trade-offs in PID control", J. Process Control 24, 2014.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.numerics.poly import trim

__all__ = ["CircleStrategy", "MS_LEVELS", "STRATEGY", "ki_limits"]

#: Ms levels designed for when the file sets no limit on the peak sensitivity.
MS_LEVELS = (1.4, 1.7, 2.0)
#: Work units of one exact simulation (an evaluation on the grid counts one).
SIM_UNITS = 4
#: kp grid points, fractions of ki_max, local grid size and refinement rounds.
_N_KP = 25
_FRACTIONS = (1.0, 0.85, 0.7, 0.5)
_LOCAL = 3
_ROUNDS = 4
#: Candidates of the first grid simulated (the ones with the least IE = 1/ki).
_SCREEN = 10
#: Derivative settings designed in full (the ones with the largest ki_max).
_PID_FULL = 3
#: Compass search over (log10 kd, log10 Tf) for PID: first step (decades) and rounds.
_COMPASS_STEP = 0.25
_COMPASS_ROUNDS = 4
#: Derivative times (fractions of the PI's integral time) and filter constants for PID.
_TD_FRACTIONS = (0.1, 0.17, 0.25, 0.35, 0.5, 0.7, 1.0)
_FILTER_N = (2.5, 4.0, 6.0, 9.0, 14.0, 20.0)
#: Candidates returned per structure.
_N_OUT = 3
#: Relative margin kept inside the circle limits (the verifier refines the peaks).
_INSIDE = 1.0 - 1e-6


@dataclass(frozen=True)
class Circle:
    """``alpha |L|^2 + 2 Re(conj(beta) L) + gamma >= 0`` at every frequency (arrays or scalars)."""

    alpha: np.ndarray
    beta: np.ndarray
    gamma: np.ndarray


def circles(problem, G, scales, ms: float | None) -> list[Circle]:
    """The circle constraints of the problem on the grid where the plant is ``G``.

    ``ms`` is the peak-sensitivity limit to design for (the file's, or a
    level); the margins tighten it (module docstring).  The noise bound is
    the file's ``max_noise_gain`` or the objective's default
    (:class:`synth.problem.objectives.ObjectiveScales`).
    """
    req = problem.requirements
    out = []
    limits = [ms] if ms is not None else []
    margin = _margin_ms(problem)
    if margin is not None:
        limits.append(margin)
    if limits:
        m = min(limits) * _INSIDE
        out.append(Circle(np.array(1.0), np.array(1.0), np.array(1.0 - 1.0 / (m * m))))
    mt = req.limit("peak_complementary_sensitivity")
    if mt is not None:
        m = mt * _INSIDE
        out.append(Circle(np.array(m * m - 1.0), np.array(m * m), np.array(m * m)))
    noise = req.limit("noise_gain")
    if noise is None:
        noise = scales.noise_bound
    if noise is not None:
        a = (noise * _INSIDE) ** 2 * np.abs(G) ** 2
        out.append(Circle(a - 1.0, a, a))
    return out


def _margin_ms(problem) -> float | None:
    """The Ms bound implied by the file's phase and gain margin limits (module docstring)."""
    req = problem.requirements
    out = []
    pm = req.limit("phase_margin_deg")
    if pm is not None:
        out.append(1.0 / (2.0 * math.sin(math.radians(pm) / 2.0)))
    gm = req.limit("gain_margin_db")
    if gm is not None:
        g = 10.0 ** (gm / 20.0)
        out.append(g / (g - 1.0))
    return min(out) if out else None


def design_levels(problem) -> tuple[float, ...]:
    """The Ms levels to design at: the file's limit, else :data:`MS_LEVELS` (those the margins allow)."""
    ms_file = problem.requirements.limit("peak_sensitivity")
    if ms_file is not None:
        return (ms_file,)
    margin = _margin_ms(problem)
    if margin is None:
        return MS_LEVELS
    return tuple(dict.fromkeys(min(level, margin) for level in MS_LEVELS))


def _quadratic(cst: Circle, A, Q):
    """``(a, b, c)`` with ``q(x) = a x^2 + 2 b x + c`` the circle's value at ``L = A + x Q``."""
    al, be, ga = cst.alpha, cst.beta, cst.gamma
    c = al * np.abs(A) ** 2 + 2.0 * np.real(np.conj(be) * A) + ga
    a = al * np.abs(Q) ** 2 * np.ones_like(c)
    b = al * np.real(A * np.conj(Q)) + np.real(np.conj(be) * Q)
    return a, b, c


def _first_bound(a, b, c):
    """Per frequency: the least ``x > 0`` where ``a x^2 + 2 b x + c`` turns negative (inf: never).

    ``c >= 0`` is assumed (``x = 0`` admissible); NaN where ``c < 0``.
    """
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        disc = b * b - a * c
        sq = np.sqrt(np.maximum(disc, 0.0))
        # roots without cancellation: q = -(b + sign(b) sq), roots q/a and c/q
        q = -(b + np.where(b >= 0, 1.0, -1.0) * sq)
        r1 = np.where(a != 0, q / np.where(a != 0, a, 1.0), np.inf)
        r2 = np.where(q != 0, c / np.where(q != 0, q, 1.0), np.inf)
        lo, hi = np.minimum(r1, r2), np.maximum(r1, r2)
        pos_a = np.where((disc > 0) & (lo > 0), lo, np.inf)          # negative between the roots
        neg_a = np.where(hi > 0, hi, 0.0)                            # negative outside them
        lin = np.where(b < 0, -c / (2.0 * np.where(b < 0, b, -1.0)), np.inf)
        bound = np.where(a > 0, pos_a, np.where(a < 0, neg_a, lin))
    return np.where(c < 0, np.nan, bound)


def ki_limits(kp, L0, P, Q, constraints) -> np.ndarray:
    """Largest ``ki >= 0`` for each ``kp`` with every circle met on the grid (MIGO's ``ki_max``).

    ``L = L0 + kp P + ki Q`` on the grid (``P = G``, ``Q = G / (j w)``).

    Parameters
    ----------
    kp : array_like (K,)
    L0, P, Q : ndarray (W,)
        The fixed part of the loop, and the loop per unit of kp and of ki.
    constraints : list of Circle

    Returns
    -------
    ndarray (K,)
        NaN where ``ki = 0`` already breaks a circle.

    References
    ----------
    .. [1] Astrom, Panagopoulos and Hagglund (1998), section 3.
    """
    kp = np.atleast_1d(np.asarray(kp, dtype=float))[:, None]
    A = L0[None, :] + kp * P[None, :]
    best = np.full(kp.shape[0], np.inf)
    for cst in constraints:
        bound = _first_bound(*_quadratic(cst, A, Q))
        best = np.minimum(best, np.min(bound, axis=1))
        best = np.where(np.any(np.isnan(bound), axis=1), np.nan, best)
    return best


def _fine_limit(kp, L0, P, Q, w, constraints, setting, sign, gfun) -> float:
    """``ki_max`` at ``kp`` again on a grid 100 times finer around each binding frequency.

    The coarse grid can miss a sharp peak between its points by a relative
    ``(dw/w)^2``; the verifier refines peaks, so the candidate must meet the
    limit at the refined peak too.  ``gfun(w)`` is the plant's response.
    """
    A = L0 + kp * P
    best = math.inf
    for cst in constraints:
        bound = _first_bound(*_quadratic(cst, A, Q))
        if not np.any(np.isfinite(bound)) or np.ndim(cst.alpha) != 0:
            continue   # unbounded, or a frequency-dependent circle (the noise bound): smooth
        i = int(np.nanargmin(bound))
        wf = np.geomspace(w[max(i - 2, 0)], w[min(i + 2, w.size - 1)], 401)
        Gf = sign * gfun(wf)
        Pf, Qf = Gf, Gf / (1j * wf)
        L0f = sign * setting.response(wf) * Pf
        k = ki_limits(np.array([kp]), L0f, Pf, Qf, [cst])[0]
        if np.isfinite(k):
            best = min(best, float(k))
    return best


def _kp_range(L0, P, constraints) -> tuple[float, float]:
    """The interval around 0 of ``kp`` for which ``L0 + kp P`` meets every circle."""
    lo, hi = -math.inf, math.inf
    for cst in constraints:
        a, b, c = _quadratic(cst, L0, P)
        up = _first_bound(a, b, c)
        down = _first_bound(a, -b, c)
        if np.any(np.isnan(up)):
            return math.nan, math.nan
        hi = min(hi, float(np.min(up)))
        lo = max(lo, -float(np.min(down)))
    return lo, hi


@dataclass(frozen=True)
class _Setting:
    """One fixed part ``C0 = kd s / (1 + s Tf)`` (``kd = 0``: a PI)."""

    kd: float = 0.0
    tf: float = 0.0

    def polys(self, kp, ki):
        """``(num (K, k), den (k,))`` of ``kp + ki/s + C0`` for arrays kp, ki."""
        kp = np.asarray(kp, dtype=float)
        ki = np.asarray(ki, dtype=float)
        if self.kd == 0.0:
            return np.stack([kp, ki], axis=-1), np.array([1.0, 0.0])
        p = 1.0 / self.tf
        # kp s (s + p) + ki (s + p) + kd p s^2 over s (s + p)
        num = np.stack([kp + self.kd * p, kp * p + ki, ki * p], axis=-1)
        return num, np.array([1.0, p, 0.0])

    def response(self, w):
        if self.kd == 0.0:
            return np.zeros_like(w, dtype=complex)
        s = 1j * w
        return self.kd * s / (1.0 + s * self.tf)


class _Evaluator:
    """Objective values of candidate (kp, ki) for one problem, setting and Ms level."""

    def __init__(self, problem, scales, w, G):
        from synth.problem.objectives import objective

        self.problem = problem
        self.scales = scales
        self.objective = objective(problem)
        self.w = w
        self.G = G
        self.targets = tuple((e, lim) for e, lim in problem.requirements.limits()
                             if e.concerns == "load")
        self.units = 0

    def __call__(self, setting: _Setting, kp, ki, sign: float) -> np.ndarray:
        """Objective values (inf where unstable; penalised where a load limit fails)."""
        from synth.locus.core import roots_batch
        from synth.verify.simulation import batch_load_responses, integral_abs, step_horizon

        kp, ki = np.atleast_1d(kp), np.atleast_1d(ki)
        num, den = setting.polys(sign * kp, sign * ki)
        out = np.full(kp.size, np.inf)
        plant = self.problem.plant
        # closed-loop stability from the engine form (Pade) of the characteristic polynomial
        chars = np.array([np.polyadd(np.polymul(den, plant.den), np.polymul(row, plant.num))
                          for row in num])
        roots = roots_batch(chars)
        stable = np.all(np.isfinite(roots), axis=1) & np.all(roots.real < 0, axis=1)
        self.units += kp.size
        idx = np.flatnonzero(stable)
        if not idx.size:
            return out
        slow = np.min(-roots[idx].real, axis=1)
        t_end = step_horizon(roots[idx][int(np.argmin(slow))], self.problem.requirements,
                             plant.dead_time)
        t, y = batch_load_responses(plant, num[idx], den, t_end)
        self.units += SIM_UNITS * idx.size
        s = 1j * self.w
        metrics = {"load_iae": np.empty(idx.size), "load_peak": np.empty(idx.size)}
        for j in range(idx.size):
            metrics["load_iae"][j] = integral_abs(t, y[:, j])
            metrics["load_peak"][j] = float(np.max(np.abs(y[:, j])))
        Cw = np.array([np.polyval(row, s) for row in num[idx]]) / np.polyval(den, s)[None, :]
        L = Cw * self.G[None, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            S = 1.0 / np.abs(1.0 + L)
            metrics["peak_sensitivity"] = np.max(S, axis=1)
            metrics["noise_gain"] = np.maximum(np.max(np.abs(Cw) * S, axis=1),
                                               np.abs(num[idx][:, 0] / den[0])
                                               if den.size == num.shape[1] else 0.0)
            metrics["peak_complementary_sensitivity"] = np.max(np.abs(L) * S, axis=1)
        values = self.objective.values(metrics, self.scales)
        pen = np.zeros(idx.size)
        for entry, limit in self.targets:
            pen += entry.shortfall(metrics[entry.metric], limit)
        out[idx] = np.where(pen > 0, 1e6 * (1.0 + pen), values)
        return out


def _refine(evaluate, setting, sign, kim, kp0, f0, span, lo, hi):
    """Batched local grids around the best point, shrinking three times (deterministic).

    ``kim(kp)`` is ``ki_max``; the point is ``(kp, fraction of ki_max)``.
    Returns ``(value, kp, fraction)``.
    """
    best = (math.inf, kp0, f0)
    dk, df = span, 0.2
    for _ in range(_ROUNDS):
        kps = np.clip(best[1] + dk * np.linspace(-1, 1, _LOCAL), lo, hi)
        frs = np.clip(best[2] + df * np.linspace(-1, 1, _LOCAL), 0.05, 1.0)
        KP, FR = np.meshgrid(kps, frs, indexing="ij")
        KP, FR = KP.ravel(), FR.ravel()
        km = kim(KP)
        ok = np.isfinite(km) & (km > 0)
        if np.any(ok):
            vals = evaluate(setting, KP[ok], FR[ok] * km[ok] * _INSIDE, sign)
            j = int(np.argmin(vals))
            if vals[j] < best[0]:
                best = (float(vals[j]), float(KP[ok][j]), float(FR[ok][j]))
        dk, df = dk / 2.0, df / 2.0
    return best


@dataclass(frozen=True)
class CircleStrategy:
    """Circle-constrained PI/PID design (origin ``"search"``); see the module docstring."""

    name: str = "circle"
    origin: str = "search"
    share: float = 0.2
    order: int = 25

    def propose(self, problem, family, context) -> list:
        """Candidates of the PI or PID family; ``[]`` for other families.

        Returns
        -------
        list of Candidate
            Up to three, best objective first, with the Ms level, the
            derivative setting and the estimated objective in the provenance.
        """
        from synth.families import NotSupported
        from synth.problem.objectives import ObjectiveScales
        from synth.strategies.base import candidate_from_polys
        from synth.verify.frequency import frequency_grid

        form = family.circle_form()
        if isinstance(form, NotSupported):
            return []
        plant = problem.plant

        def gfun(x):
            return plant.evaluate(1j * x)

        if plant.rational_num.size >= plant.rational_den.size:
            return []     # a biproper plant: the loop's high-frequency end is not a circle
        scales = ObjectiveScales.for_problem(problem)
        w = frequency_grid(plant, [1.0], [1.0])
        G = plant.evaluate(1j * w)
        num, den = plant.rational_num, plant.rational_den
        low = np.trim_zeros(num, "b")[-1] / np.trim_zeros(den, "b")[-1]
        sign = 1.0 if low > 0 else -1.0
        Gs = sign * G
        integrating = den[-1] == 0.0
        levels = design_levels(problem)
        evaluate = _Evaluator(problem, scales, w, G)
        budget = int(context.work)
        if budget < _N_KP + SIM_UNITS * _SCREEN:
            return []     # not even one level's first grid fits in the work allowance
        found = []        # (value, kp, ki, setting, level)
        P, Q = Gs, Gs / (1j * w)
        for level in levels:
            if evaluate.units > budget:
                break
            cons = circles(problem, Gs, scales, level)
            if not cons:
                continue
            pi_best = self._design(evaluate, _Setting(), cons, P, Q, w, sign, integrating,
                                   budget, gfun=gfun)
            if pi_best is None:
                continue
            found.append((*pi_best, _Setting(), level))
        pid_levels = []
        if form == "PID" and found:
            # the derivative part is searched at the level where the PI did best
            pid_levels = [min(found, key=lambda f: f[0])[4]]
        for level in pid_levels:
            cons = circles(problem, Gs, scales, level)
            pi_best = next(f[:3] for f in found if f[4] == level)
            kp, ki = pi_best[1], pi_best[2]
            ti = kp / ki if ki > 0 and kp > 0 else 1.0 / max(ki, 1e-300)
            trials = []
            for frac in _TD_FRACTIONS:
                for n in _FILTER_N:
                    td = frac * ti
                    kd = max(kp, 0.0) * td
                    if kd <= 0:
                        continue
                    trials.append(_Setting(kd=kd, tf=td / n))
            # rank the derivative settings by their largest admissible ki (MIGO), then
            # design the best few in full on the exact simulation
            ranked = []
            for st in trials:
                L0 = sign * st.response(w) * P
                lo, hi = _kp_range(L0, P, cons)
                if not (math.isfinite(hi) and hi > 0):
                    continue
                lo = 0.0 if (integrating or not math.isfinite(lo)) else lo
                kps = np.linspace(lo, hi, _N_KP + 2)[1:-1]
                km = ki_limits(kps, L0, P, Q, cons)
                evaluate.units += kps.size
                if np.any(np.isfinite(km) & (km > 0)):
                    ranked.append((-float(np.nanmax(np.where(km > 0, km, np.nan))), st))
            ranked.sort(key=lambda x: x[0])
            # the objective (screened simulations, no refinement) of the best few by
            # ki_max, then a compass search over (log kd, log Tf) from the best of them
            tried = {}

            def quick(st, tried=tried, cons=cons):
                key = (round(math.log10(st.kd), 6), round(math.log10(st.tf), 6))
                if key not in tried:
                    tried[key] = self._design(evaluate, st, cons, P, Q, w, sign,
                                              integrating, budget, refine=False)
                return tried[key]

            starts = []
            for _, st in ranked[:_PID_FULL]:
                if evaluate.units > budget and starts:
                    break     # (one setting at least: the structure asked for is a PID)
                res = quick(st)
                if res is not None:
                    starts.append((res, st))
            if not starts:
                continue
            starts.sort(key=lambda x: x[0][0])
            (best_res, best_st) = starts[0]
            step = _COMPASS_STEP
            for _ in range(_COMPASS_ROUNDS):
                moved = False
                for dk, dt in ((1, 0), (-1, 0), (0, 1), (0, -1)):
                    if evaluate.units > budget:
                        break
                    st = _Setting(kd=best_st.kd * 10 ** (dk * step),
                                  tf=best_st.tf * 10 ** (dt * step))
                    res = quick(st)
                    if res is not None and res[0] < best_res[0]:
                        best_res, best_st, moved = res, st, True
                if not moved:
                    step /= 2.0
            for res, st in [(best_res, best_st)] + starts[1:2]:
                # the fine limit always; the refinement while the work lasts
                fine = self._design(evaluate, st, cons, P, Q, w, sign, integrating, budget,
                                    start=res, gfun=gfun,
                                    refine=evaluate.units <= budget)
                if fine is not None:
                    found.append((*fine, st, level))
        if form == "PID":
            found = [f for f in found if f[3].kd > 0] or found
        found.sort(key=lambda x: x[0])
        out = []
        for value, kp, ki, st, level in found:
            if not math.isfinite(value) or len(out) >= _N_OUT:
                continue
            nrow, d = st.polys(np.array([sign * kp]), np.array([sign * ki]))
            if form == "PID" and st.kd == 0.0:
                continue
            cand = candidate_from_polys(family, trim(nrow[0]), d, self.origin, {
                "method": "circle-constrained design (MIGO-type, Astrom, Panagopoulos and "
                          "Hagglund 1998), objective on the exact-delay simulation",
                "ms_level": level, "estimated_objective": value,
                "derivative": {"kd": st.kd, "filter_time": st.tf} if st.kd else None,
                "work": evaluate.units})
            if cand.params:
                out.append(cand)
        return out

    def _design(self, evaluate, setting, cons, P, Q, w, sign, integrating, budget,
                refine=True, start=None, gfun=None):
        """Best ``(value, kp, ki)`` for one fixed part, or None."""
        L0 = sign * setting.response(w) * P
        lo, hi = _kp_range(L0, P, cons)
        if not (math.isfinite(hi) and hi > 0):
            return None
        if integrating or not math.isfinite(lo):
            lo = 0.0 if integrating else -hi
        span = hi - lo

        def kim(kps):
            return ki_limits(kps, L0, P, Q, cons)

        if start is None:
            kps = np.linspace(lo, hi, _N_KP + 2)[1:-1]
            km = kim(kps)
            evaluate.units += kps.size
            ok = np.isfinite(km) & (km > 0)
            if not np.any(ok):
                return None
            KP = np.repeat(kps[ok], len(_FRACTIONS))
            FR = np.tile(_FRACTIONS, int(np.sum(ok)))
            KI = FR * np.repeat(km[ok], len(_FRACTIONS)) * _INSIDE
            # screen by the integrated error IE = 1/ki, a lower bound of the load IAE
            # (common practice; Astrom and Hagglund 2006): simulate the most promising
            order = np.argsort(1.0 / KI, kind="stable")[:_SCREEN]
            vals = evaluate(setting, KP[order], KI[order], sign)
            j = int(np.argmin(vals))
            if not math.isfinite(vals[j]):
                return None
            best = (float(vals[j]), float(KP[order][j]), float(FR[order][j]))
        else:
            kp0, ki0 = start[1], start[2]
            km0 = float(kim(np.array([kp0]))[0])
            best = (start[0], kp0, min(1.0, ki0 / km0) if km0 > 0 else 1.0)
        if refine and evaluate.units < budget:
            ref = _refine(evaluate, setting, sign, kim, best[1], best[2], span / _N_KP, lo, hi)
            if ref[0] < best[0]:
                best = ref
        km = float(kim(np.array([best[1]]))[0])
        if gfun is not None:
            km = min(km, _fine_limit(best[1], L0, P, Q, w, cons, setting, sign, gfun))
        return best[0], best[1], best[2] * km * _INSIDE


#: The registered strategy object (see :func:`synth.strategies.default_strategies`).
STRATEGY = CircleStrategy()
