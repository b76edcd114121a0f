"""Global search by differential evolution, polished by compass search (origin ``"search"``).

For one structure family the search minimises, over the family's box of
log-scaled pole and zero magnitudes and the ``asinh`` gain coordinate, a
vectorised objective that is

* ``10 + log(1 + unstable part)`` for an unstable closed loop (the summed
  positive real parts of the closed-loop poles, relative to the problem's
  characteristic frequency), so any stable candidate beats any unstable one;
* ``1 + shortfall`` for a stable loop that misses a requirement, the
  shortfall being the sum of the normalised excesses over every requirement
  (estimated from a coarse simulation and frequency sweep, see below) plus a
  small shaping term for closed-loop poles outside the requirement region;
* the ranking score of :mod:`synth.rank` (in [0, 1), lower is better) once
  every estimate meets its requirement with a small safety margin.

Estimates used inside the objective, all vectorised over the population:
closed-loop poles by batched companion eigenvalues; the unit-step response
of output and control from the modal expansion
``y(t) = T(0) + sum_i Res_i exp(p_i t)`` on a 240-point grid (engine form:
a dead time enters by its Pade form); margins and peak sensitivity from
``L(jw)`` on a fixed 160-point grid with the exact dead time; stability over
the plant-gain range by the eigenvalue-free kernel at test factors.  These
are estimates: every proposal is verified afterwards by :func:`synth.verify.verify`.

Work and determinism.  One work unit is one row of the objective.  The
polish has a fixed number of compass iterations; the evolution gets the
generations that the rest of ``context.work`` pays for (about 40 + 15 per
parameter at ``search.effort = 1``; when a run converges early, the work left
restarts it from a fresh hypercube, so one poor basin is not the last word),
so the same problem and seed give the
same proposals on any machine under any load; nothing here reads the clock.
All randomness comes from ``context.seed``: the initial Latin hypercube
(:func:`_latin_hypercube`) and the evolution's own generator draw
from one ``numpy.random.Generator``.  With too little work for a single
generation (a structure the proportional analysis already rules out), only
the initial population is evaluated.  Candidates of earlier strategies
(``context.prior``) are polished next to the evolution's best but never
enter its population, so the evolution's own proposals do not depend on
which other strategies ran (adding a strategy can only add candidates).

References
----------
.. [1] R. Storn and K. Price, "Differential evolution - a simple and
   efficient heuristic for global optimization over continuous spaces",
   Journal of Global Optimization 11, 1997.
.. [2] T. G. Kolda, R. M. Lewis and V. Torczon, "Optimization by direct
   search: new perspectives on some classical and modern methods", SIAM
   Review 45(3), 2003 (the compass search of the polish, batched here so
   each iteration is one vectorised evaluation).
.. [3] M. D. McKay, R. J. Beckman and W. J. Conover, "A comparison of three
   methods for selecting values of input variables in the analysis of
   output from a computer code", Technometrics 21(2), 1979 (Latin hypercube).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.numerics.poly import batch_polymul
from synth.strategies.base import candidate_from_params

__all__ = ["ORIGIN", "STRATEGY", "EvolveStrategy", "SearchObjective"]

ORIGIN = "search"

#: Safety factors applied to the limits inside the search, so that designs
#: estimated feasible on the coarse grids survive the exact verification
#: (:meth:`synth.problem.catalogue.Requirement.search_limit`).
_TIGHTEN = 0.95
_WIDEN = 1.02
#: Points of the modal step-response grid and of the frequency grid.
_T_POINTS = 240
_W_POINTS = 160
#: Population size (about; rounded to a multiple of the dimension).
_POPULATION = 42
#: Relative spread of the population's objective at which the evolution stops.
_DE_TOL = 1e-3
#: Fewest generations a restart is worth (the work left after an early convergence).
_MIN_RESTART_GENERATIONS = 15
#: Objective values at or above this belong to unstable closed loops.
_UNSTABLE = 10.0
#: How many distinct candidates a family returns, and how many get polished.
_N_OUT = 4
_N_POLISH = 2
_N_PRIOR_POLISH = 3
_POLISH_ITERATIONS = 30
_POLISH_STEP = 0.02


#: The metrics of the reference step.
_REFERENCE = ("overshoot_percent", "settling_time", "rise_time", "steady_state_error",
              "peak_control_effort", "final_value")

#: The scalar metrics the objective estimates (metric keys of the design JSON).
_ESTIMATED = ("overshoot_percent", "settling_time", "rise_time", "steady_state_error",
              "peak_control_effort", "peak_sensitivity", "phase_margin_deg", "gain_margin_db",
              "min_damping_ratio", "load_iae", "load_peak", "peak_complementary_sensitivity",
              "noise_gain", "final_value")


def _pad_to(P, width):
    if P.shape[1] == width:
        return P
    out = np.zeros((P.shape[0], width))
    out[:, width - P.shape[1]:] = P
    return out


def _polyval_rows(P, Z):
    """Evaluate row i of the polynomial batch P at every entry of row i of Z."""
    out = np.zeros(Z.shape, dtype=complex)
    for j in range(P.shape[1]):
        out = out * Z + P[:, j:j + 1]
    return out


def _polyval_grid(P, s):
    """Evaluate every row of P at the common points s: shape (B, len(s))."""
    out = np.zeros((P.shape[0], s.size), dtype=complex)
    for j in range(P.shape[1]):
        out = out * s[None, :] + P[:, j:j + 1]
    return out


def _first_crossing(t, z, level):
    """Per row: first time z reaches level (linear interpolation), inf when never."""
    hit = z >= level
    any_hit = hit.any(axis=1)
    i = np.argmax(hit, axis=1)
    rows = np.arange(z.shape[0])
    im1 = np.maximum(i - 1, 0)
    a, b = z[rows, im1], z[rows, i]
    ta, tb = t[rows, im1], t[rows, i]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(b > a, (level - a) / (b - a), 0.0)
    tt = np.where(i == 0, t[rows, 0], ta + np.clip(frac, 0, 1) * (tb - ta))
    return np.where(any_hit, tt, np.inf)


#: Proportional set-point weights the search tries for a structure that takes them
#: (the reference response is affine in b, so each costs one combination of two responses).
SEARCH_WEIGHTS = (1.0, 0.5, 0.0)


def _step_figures(t, y, u, yss, band):
    """Overshoot, settling time, rise time, steady-state error and peak effort per row."""
    scale = np.maximum(np.abs(yss), 1e-9)
    sgn = np.where(yss >= 0, 1.0, -1.0)
    os_ = np.maximum(0.0, np.max(sgn[:, None] * (y - yss[:, None]), axis=1)) / scale * 100
    outside = np.abs(y - yss[:, None]) > band * scale[:, None]
    last = (t.shape[1] - 1) - np.argmax(outside[:, ::-1], axis=1)
    rows = np.arange(y.shape[0])
    ts = np.where(outside.any(axis=1), t[rows, np.minimum(last + 1, t.shape[1] - 1)], 0.0)
    z = sgn[:, None] * y / scale[:, None]
    with np.errstate(invalid="ignore"):  # inf - inf: never rises
        tr = _first_crossing(t, z, 0.9) - _first_crossing(t, z, 0.1)
    tr = np.where(np.isfinite(tr), tr, np.inf)
    return {"overshoot_percent": os_, "settling_time": ts, "rise_time": tr,
            "steady_state_error": np.abs(1.0 - yss),
            "peak_control_effort": np.max(np.abs(u), axis=1), "final_value": yss}


def _trapezoid_abs(t, y):
    """Per row: integral of |y| over the row's time grid (trapezoid, sign changes split)."""
    y0, y1 = y[:, :-1], y[:, 1:]
    a0, a1 = np.abs(y0), np.abs(y1)
    cross = y0 * y1 < 0
    with np.errstate(invalid="ignore", divide="ignore"):
        seg = np.where(cross, (y0 * y0 + y1 * y1) / np.where(cross, a0 + a1, 1.0), a0 + a1)
    return np.sum(0.5 * np.diff(t, axis=1) * seg, axis=1)


class SearchObjective:
    """Vectorised objective of one family for one problem (see the module docstring).

    Call with ``X`` of shape (B, n_params); returns shape (B,).
    :meth:`details` returns the estimated metrics as arrays (metric keys of
    the design JSON), the chosen set-point weight ``setpoint_b`` (NaN where
    none) and the objective ``f``.
    """

    def __init__(self, problem, family):
        from synth.problem.objectives import ObjectiveScales, objective

        self.problem = problem
        self.family = family
        plant = problem.plant
        self.gnum = plant.num
        self.gden = plant.den
        self.region = problem.region
        req = problem.requirements
        self.band = req.settling_band / 100.0
        # the limits the search aims for: the file's, tightened by the catalogue's rule so
        # that designs estimated feasible on the coarse grids survive the exact verification;
        # a structure's own limits (the gain range) are the family's bounds already
        self.targets = tuple((entry, entry.search_limit(limit, _TIGHTEN, _WIDEN))
                             for entry, limit in req.limits() if entry.concerns != "structure")
        self.reference_targets = tuple(t for t in self.targets if t[0].concerns == "reference")
        self.objective = objective(problem)
        self.scales = ObjectiveScales.for_problem(problem)
        self.need_reference = bool(self.reference_targets) or any(
            m in _REFERENCE for m in self.objective.metrics)
        shaping = problem.search.reference_shaping
        # reference shaping the search estimates: set-point weights for the structures
        # that take them (only worth their cost when a reference-step limit is set), the
        # static gain correction 1/T(0) for the others (synth.shaping)
        self.weights = SEARCH_WEIGHTS if (shaping and family.setpoint_weights
                                          and self.reference_targets) else None
        self.static_correction = shaping and not family.setpoint_weights
        sp = family.space
        self.w_char = sp.w_char
        lo = max(sp.w_min, sp.w_char * 1e-3)
        hi = min(10.0 * sp.w_max, sp.w_char * 1e3)
        w = np.geomspace(lo, max(hi, 10 * lo), _W_POINTS)
        # narrow resonances of the plant would fall between grid points: add 24 points
        # across +-10 zeta around each lightly damped plant pole or zero
        extra = []
        for poly in (plant.rational_num, plant.rational_den):
            if poly.size > 1:
                for r in np.roots(poly):
                    m = abs(r)
                    if m > 0 and r.imag > 0 and abs(r.real) / m < 0.2:
                        width = 10.0 * max(abs(r.real) / m, 1e-5)
                        extra.append(np.linspace(m * max(1 - width, 0.5), m * min(1 + width, 2.0),
                                                 24))
        self.w = np.unique(np.concatenate([w, *extra])) if extra else w
        self.g_jw = plant.evaluate(1j * self.w, exact_delay=True)
        self.tau = np.linspace(0.0, 1.0, _T_POINTS) ** 2
        self.ts_floor = req.limit("settling_time")
        ranges = [aim for entry, aim in self.targets if entry.kind == "contain"]
        self.range_factors = np.geomspace(*ranges[0], 3) if ranges else None

    # -- the pieces ---------------------------------------------------------------
    def _loop(self, X):
        num_c, den_c = self.family.polys(X)
        num_l = batch_polymul(num_c, self.gnum)
        den_l = batch_polymul(den_c, self.gden)
        width = max(num_l.shape[1], den_l.shape[1])
        num_l, den_l = _pad_to(num_l, width), _pad_to(den_l, width)
        return num_c, den_c, num_l, den_l, den_l + num_l

    def _shortfall(self, targets, est, n):
        """Sum of the catalogue's normalised shortfalls of the estimates against ``targets``."""
        sh = np.zeros(n)
        for entry, aim in targets:
            value = est[entry.metric]
            if entry.kind == "contain":
                pen = entry.shortfall(value, aim)
            else:
                with np.errstate(invalid="ignore"):
                    pen = entry.shortfall(value, aim)
                # undefined (NaN): a shortfall of 1 where the verifier would fail it too
                pen = np.where(np.isnan(value), 1.0 if entry.undefined else 0.0, pen)
            if entry.cap is not None:
                pen = np.minimum(pen, entry.cap)
            sh = sh + pen
        return sh

    def _reference(self, r, denom, E, nc, dc, c0, t):
        """Reference-step estimates, with the best estimated shaping per row.

        ``denom`` is ``p char'(p)`` at the closed-loop poles ``r``, ``E`` the
        modes ``exp(p t)`` on the rows' time grids ``t``.  Returns the step
        figures (dict of (b,) arrays) and the set-point weight chosen per row
        (NaN: none).
        """
        b_rows = r.shape[0]
        if self.weights is not None:
            from synth.verify.controller import setpoint_numerators

            n0 = setpoint_numerators(nc, dc, 0.0, 0.0)
            n1 = setpoint_numerators(nc, dc, 1.0, 0.0)
            nums = [n0, n1]
        else:
            nums = [nc]
        width = max(nums[0].shape[1] + max(self.gnum.size, self.gden.size) - 1, r.shape[1] + 1)
        ys, us, yss = [], [], []
        for nr in nums:
            ny = _pad_to(batch_polymul(nr, self.gnum), width)
            nu = _pad_to(batch_polymul(nr, self.gden), width)
            ys.append((ny[:, -1] / c0)[:, None] + np.real(np.einsum(
                "bn,bnt->bt", _polyval_rows(ny, r) / denom, E)))
            us.append((nu[:, -1] / c0)[:, None] + np.real(np.einsum(
                "bn,bnt->bt", _polyval_rows(nu, r) / denom, E)))
            yss.append(ny[:, -1] / c0)
        if self.weights is None:
            y, u, yf = ys[0], us[0], yss[0]
            if self.static_correction:
                # a type-0 loop whose static loop gain is at least 1: the prefilter 1/T(0)
                # brings the final value to 1 (synth.shaping.static_correction)
                l0 = np.abs(yf / np.where(yf != 1.0, 1.0 - yf, np.inf))
                fix = (l0 >= 1.0) & np.isfinite(yf) & (yf != 0.0)
                g = np.where(fix, 1.0 / np.where(yf != 0.0, yf, 1.0), 1.0)
                y, u, yf = y * g[:, None], u * g[:, None], yf * g
            return _step_figures(t, y, u, yf, self.band), np.full(b_rows, np.nan)
        # set-point weights: y(b) = y0 + b (y1 - y0), the same for u; keep the b whose
        # reference figures fall shortest of the limits (ties: the objective, then larger b)
        best = None
        for b in self.weights:
            y = ys[0] + b * (ys[1] - ys[0])
            u = us[0] + b * (us[1] - us[0])
            fig = _step_figures(t, y, u, yss[0] + b * (yss[1] - yss[0]), self.band)
            sh = self._shortfall(self.reference_targets, fig, b_rows)
            if best is None:
                best = (sh, fig, np.full(b_rows, b))
                continue
            better = sh < best[0] - 1e-9
            best = (np.where(better, sh, best[0]),
                    {k: np.where(better, fig[k], best[1][k]) for k in fig},
                    np.where(better, b, best[2]))
        return best[1], best[2]

    def details(self, X) -> dict[str, np.ndarray]:
        """Estimated metrics and the objective for a batch (arrays of shape (B,))."""
        from synth.locus.core import roots_batch
        from synth.numerics.screening import in_region_batch as _in_region
        from synth.problem.region import Region

        X = np.atleast_2d(np.asarray(X, dtype=float))
        B = X.shape[0]
        num_c, den_c, num_l, den_l, char = self._loop(X)
        roots = roots_batch(char)
        finite = np.all(np.isfinite(roots), axis=1)
        re = np.where(np.isfinite(roots), roots.real, np.inf)
        stable = finite & np.all(re < 0, axis=1) & _in_region(char, Region())
        unstable_part = np.sum(np.maximum(np.nan_to_num(re, posinf=1e6), 0.0), axis=1)

        out = {k: np.full(B, np.nan) for k in _ESTIMATED}
        out["stable_plant_gain_range"] = np.full((B, 2), np.nan)
        out["setpoint_b"] = np.full(B, np.nan)
        short = np.zeros(B)
        idx = np.flatnonzero(stable)
        if idx.size:
            r = roots[idx]
            nl, dl, ch = num_l[idx], den_l[idx], char[idx]
            nc, dc = num_c[idx], den_c[idx]
            # closed-loop damping and region shaping
            mag = np.abs(r)
            zeta = np.min(-r.real / np.maximum(mag, 1e-300), axis=1, initial=1.0)
            reg_short = np.sum(np.maximum(-self.region.margin(r), 0.0), axis=1) / self.w_char
            # modal responses: y(t) = N(0)/char(0) + sum Res_i exp(p_i t)
            n = ch.shape[1] - 1
            powers = np.arange(n, 0, -1)
            dch = ch[:, :-1] * powers
            c0 = ch[:, -1]
            with np.errstate(all="ignore"):
                sig = np.min(-r.real, axis=1, initial=np.inf)  # a static loop has no poles
                horizon = np.where(np.isfinite(sig), (math.log(1.0 / self.band) + 6.0) / sig,
                                   1.0)
                if self.ts_floor is not None:
                    horizon = np.maximum(horizon, 1.3 * self.ts_floor)
                t = horizon[:, None] * self.tau[None, :]
                E = np.exp(r[:, :, None] * t[:, None, :])
                denom = r * _polyval_rows(dch, r)
                # the reference step only where something reads it: a reference-step
                # limit, an objective of the reference step, or the fallback order of
                # loops without integral action (whose load IAE is unbounded)
                if self.need_reference or np.any(dc[:, -1] != 0.0):
                    est, b_chosen = self._reference(r, denom, E, nc, dc, c0, t)
                else:
                    est = {k: np.full(idx.size, np.nan) for k in _REFERENCE}
                    est["overshoot_percent"] = np.zeros(idx.size)   # (not estimated)
                    est["peak_control_effort"] = np.zeros(idx.size)
                    b_chosen = np.full(idx.size, np.nan)
                # the load step at the plant input (r = 0): Y/D = num_G den_C / char
                nd = _pad_to(batch_polymul(dc, self.gnum), ch.shape[1])
                yd_ss = nd[:, -1] / c0
                yd = yd_ss[:, None] + np.real(np.einsum(
                    "bn,bnt->bt", _polyval_rows(nd, r) / denom, E))
            ok = np.isfinite(est["overshoot_percent"]) & np.isfinite(est["peak_control_effort"]) \
                & np.all(np.isfinite(yd), axis=1)
            load_iae = np.where(yd_ss == 0.0, _trapezoid_abs(t, yd), np.nan)
            load_peak = np.max(np.abs(yd), axis=1)
            # frequency response with the exact delay
            s = 1j * self.w
            with np.errstate(all="ignore"):
                C = _polyval_grid(nc, s) / _polyval_grid(dc, s)
                L = C * self.g_jw[None, :]
                S = 1.0 / np.abs(1.0 + L)
                ms = np.max(np.where(np.isfinite(S), S, 0.0), axis=1)
                mt = np.max(np.where(np.isfinite(S), np.abs(L) * S, 1.0), axis=1)
                noise = np.max(np.where(np.isfinite(S), np.abs(C) * S, 0.0), axis=1)
                # the high-frequency gain of a biproper compensator is noise too
                c_inf = np.where(dc[:, 0] != 0.0, nc[:, 0] / np.where(dc[:, 0] != 0, dc[:, 0], 1),
                                 0.0)
                noise = np.maximum(noise, np.abs(c_inf))
                lm = np.log(np.abs(L))
                dist = np.degrees(np.abs(np.angle(-L)))  # angular distance from -1
                cross = np.sign(lm[:, :-1]) != np.sign(lm[:, 1:])
                frac = np.clip(lm[:, :-1] / (lm[:, :-1] - lm[:, 1:]), 0, 1)
                pm_seg = dist[:, :-1] + frac * (dist[:, 1:] - dist[:, :-1])
                pm = np.min(np.where(cross, pm_seg, np.inf), axis=1)
                im = L.imag
                pcross = (np.sign(im[:, :-1]) != np.sign(im[:, 1:])) & (L.real[:, :-1] < 0) \
                    & (L.real[:, 1:] < 0)
                fi = np.clip(im[:, :-1] / (im[:, :-1] - im[:, 1:]), 0, 1)
                lmag = np.exp(lm[:, :-1] + fi * (lm[:, 1:] - lm[:, :-1]))
                inv = 1.0 / lmag
                hi = np.min(np.where(pcross & (lmag < 1), inv, np.inf), axis=1)
                lo = np.max(np.where(pcross & (lmag > 1), inv, 0.0), axis=1)
                gm_db = 20 * np.log10(hi)
            est.update({"peak_sensitivity": ms, "phase_margin_deg": pm, "gain_margin_db": gm_db,
                        "min_damping_ratio": zeta, "stable_plant_gain_range": (lo, hi),
                        "load_iae": load_iae, "load_peak": load_peak,
                        "peak_complementary_sensitivity": mt, "noise_gain": noise})
            for key in _ESTIMATED:
                out[key][idx] = est[key]
            out["stable_plant_gain_range"][idx] = np.column_stack([lo, hi])
            out["setpoint_b"][idx] = b_chosen

            # penalties: the catalogue's normalised shortfall of each estimate against
            # its tightened limit, in catalogue order
            sh = self._shortfall(self.targets, est, idx.size)
            if self.range_factors is not None:
                # the estimated interval comes from crossings on a coarse grid: also
                # count the test factors at which the eigenvalue-free kernel fails
                fails = np.zeros(idx.size)
                for k in self.range_factors:
                    fails += ~_in_region(dl + k * nl, Region())
                sh += fails / self.range_factors.size
            sh = np.where(ok, sh, 5.0)
            feas = sh <= 0
            # feasible: the objective, squashed into [0, 1) (values first, then fallbacks)
            with np.errstate(invalid="ignore", over="ignore"):
                v = self.objective.values(est, self.scales)
                fb = self.objective.fallbacks(est, self.scales)
                sq = np.where(np.isfinite(v), 0.5 * v / (1.0 + v),
                              np.where(np.isfinite(fb), 0.5 + 0.4999 * fb / (1.0 + fb), 0.9999))
            val = np.where(feas, sq, 1.0 + sh + 0.1 * np.log1p(reg_short))
            short[idx] = val
        f = np.where(stable, short, 10.0 + np.log1p(unstable_part / self.w_char))
        f = np.where(np.isfinite(f), f, 1e6)
        out["f"] = f
        out["stable"] = stable
        return out

    def __call__(self, X) -> np.ndarray:
        return self.details(X)["f"]


def _latin_hypercube(rng, n, lo, hi):
    """Latin hypercube sample of ``n`` points in the box ``[lo, hi]``.

    Each dimension's ``n`` strata are hit once, in a random order, at a
    uniform point inside the stratum (the sample of
    ``scipy.stats.qmc.LatinHypercube`` without optimisation; a test checks
    the stratification).  Three lines of numpy here, because importing
    :mod:`scipy.stats` costs about a second, as much as a whole PI design.

    References
    ----------
    M. D. McKay, R. J. Beckman and W. J. Conover, Technometrics 21(2), 1979.
    """
    d = lo.size
    strata = np.argsort(rng.random((d, n)), axis=1).T          # a permutation per dimension
    unit = (strata + rng.random((n, d))) / n
    return lo + unit * (hi - lo)


def _gain_starts(family, context) -> list[np.ndarray]:
    """Start points from the proportional analysis (the same whatever else ran)."""
    out = []
    for k in context.gain_seeds:
        x = family.near_gain(k)
        if np.all(np.isfinite(x)):
            out.append(family.clip(x))
    return out


def _prior_starts(family, context) -> list[tuple[np.ndarray, str]]:
    """This family's candidates from earlier strategies, in the family's coordinates."""
    out = []
    for cand in context.prior:
        x = family.from_polys(np.asarray(cand.num), np.asarray(cand.den))
        if x is not None and np.all(np.isfinite(x)):
            out.append((family.clip(x), cand.origin))
    return out


def _compass(objective, X, F, lo, hi, iterations=_POLISH_ITERATIONS):
    """Batched compass search from several starts at once (``iterations`` at most).

    Each iteration evaluates, for every start, the 2p points one step along
    each coordinate and one pattern move (repeating the last successful
    step) in a single batch; a start that does not improve halves its steps.

    References
    ----------
    T. G. Kolda, R. M. Lewis and V. Torczon, "Optimization by direct search:
    new perspectives on some classical and modern methods", SIAM Review
    45(3), 2003 (compass search).
    """
    k, p = X.shape
    X, F = X.copy(), F.copy()
    width = np.where(hi > lo, hi - lo, 1.0)
    steps = np.tile(_POLISH_STEP * width, (k, 1))
    last = np.zeros_like(X)
    dirs = np.concatenate([np.eye(p), -np.eye(p)])
    evaluations = 0
    for _ in range(iterations):
        trial = X[:, None, :] + dirs[None, :, :] * steps[:, None, :]
        trial = np.concatenate([trial, (X + last)[:, None, :]], axis=1)
        trial = np.clip(trial, lo, hi)
        ft = objective(trial.reshape(-1, p)).reshape(k, 2 * p + 1)
        evaluations += k * (2 * p + 1)
        j = np.argmin(ft, axis=1)
        best = ft[np.arange(k), j]
        better = best < F
        move = trial[np.arange(k), j] - X
        last = np.where(better[:, None], move, 0.0)
        X = np.where(better[:, None], trial[np.arange(k), j], X)
        F = np.where(better, best, F)
        steps = np.where(better[:, None], steps, 0.5 * steps)
        if np.all(steps < 1e-7 * width):
            break
    return X, F, evaluations


def _distinct(X, E, lo, hi, n_out):
    """Indices of up to n_out best rows, each at least a little apart in the unit box."""
    order = np.argsort(E, kind="stable")
    width = np.where(hi > lo, hi - lo, 1.0)
    U = (X - lo) / width
    chosen: list[int] = []
    min_dist = 0.02 * math.sqrt(X.shape[1])
    for i in order:
        if not np.isfinite(E[i]):
            continue
        if all(np.linalg.norm(U[i] - U[j]) > min_dist for j in chosen):
            chosen.append(int(i))
        if len(chosen) >= n_out:
            break
    return chosen


def _converged(intermediate_result) -> bool:
    """Stop the evolution when its population agrees (scipy's rule, relative 1e-3)...

    ...but never while every member is unstable: there the objective is
    ``10 + log(1 + unstable part)``, whose spread is tiny next to its mean,
    so scipy's relative test would stop on the plateau before any stable
    compensator is found.  A rule on the population (work), not on time.
    """
    E = np.asarray(intermediate_result.population_energies)
    if not np.all(np.isfinite(E)) or np.min(E) >= _UNSTABLE:
        return False
    return bool(np.std(E) <= _DE_TOL * abs(float(np.mean(E))))


def _polish_iterations(p: int, work: int) -> int:
    """Compass iterations the polish gets: all of them, or what half the work pays for.

    At a small ``search.effort`` the full polish would leave the evolution
    no generation at all; half the work then goes to each.
    """
    per = (2 * p + 1) * (_N_POLISH + _N_PRIOR_POLISH)
    return max(1, min(_POLISH_ITERATIONS, (int(work) // 2 - 20) // per))


def _polish_reserve(p: int, iterations: int = _POLISH_ITERATIONS) -> int:
    """Work units kept for the polish: every compass iteration from every start, plus priors."""
    return iterations * (2 * p + 1) * (_N_POLISH + _N_PRIOR_POLISH) + 20


@dataclass(frozen=True)
class EvolveStrategy:
    """Global search (origin ``"search"``): differential evolution, then compass polish.

    See the module docstring for the objective, the work accounting and the
    determinism rules.
    """

    name: str = "search"
    origin: str = ORIGIN
    share: float = 0.38
    order: int = 30

    def propose(self, problem, family, context) -> list:
        """Differential evolution over the family's box, then compass search from the best.

        Parameters
        ----------
        problem : synth.problem.Problem
        family : synth.families.Family
        context : synth.strategies.SearchContext
            ``gain_seeds`` join the evolution's start population; ``prior``
            candidates (from earlier strategies) are only polished, alongside
            the evolution's best, so the evolution itself does not depend on
            which other strategies ran.

        Returns
        -------
        list of Candidate
            Up to four distinct candidates of the evolution, best estimated
            first, plus each prior candidate that the polish improved.
        """
        p = family.n_params
        popmult = max(5, int(math.ceil(_POPULATION / p)))
        npop = popmult * p
        if int(context.work) < npop:
            if int(context.work) < 2 * p + 2:
                return []  # not even a small sample fits in the work allowance
            # too little work for the evolution: a smaller initial sample is the answer
            npop = int(context.work)
        objective = SearchObjective(problem, family)
        lo, hi = family.bounds()
        rng = np.random.default_rng(context.seed)
        init = _latin_hypercube(rng, npop, lo, hi)
        starts = _gain_starts(family, context)
        for i, x in enumerate(starts[: npop // 2]):
            init[i] = x
        # the evolution costs npop rows per generation plus the initial population
        # each generation costs npop rows, plus the initial population of each run
        iterations = _polish_iterations(p, context.work)
        rows = int(context.work) - _polish_reserve(p, iterations)
        generations = rows // npop - 1
        pops, energies_list, labels = [], [], []
        nit = 0
        if generations >= 1:
            from scipy.optimize import differential_evolution

            start = init
            while True:
                maxiter = rows // npop - 1
                if maxiter < (1 if not pops else _MIN_RESTART_GENERATIONS):
                    break
                res = differential_evolution(
                    lambda Xt: objective(Xt.T), list(zip(lo, hi, strict=True)), maxiter=maxiter,
                    popsize=popmult, init=start, rng=rng, polish=False, vectorized=True,
                    updating="deferred", workers=1, tol=0.0, mutation=(0.5, 1.0),
                    recombination=0.9, callback=_converged)
                pops.append(np.asarray(res.population))
                energies_list.append(np.asarray(res.population_energies))
                labels.append("evolution" if len(pops) == 1 else f"evolution restart {len(pops) - 1}")
                nit += int(res.nit)
                rows -= npop * (int(res.nit) + 1)
                if int(res.nit) >= maxiter:
                    break  # the work is spent
                # converged early: the rest of the work restarts from a fresh hypercube, so
                # a population caught in a poorer basin is not the last word
                start = _latin_hypercube(rng, npop, lo, hi)
        else:
            # too little work for a generation: the initial population is the answer
            pops, energies_list, labels = [init], [objective(init)], ["initial sample"]
        nfev = npop * (nit + len(pops))
        pop = np.concatenate(pops)
        energies = np.concatenate(energies_list)
        origin_of = np.repeat(np.arange(len(pops)), [len(e) for e in energies_list])
        chosen = _distinct(pop, energies, lo, hi, _N_OUT)
        xs = [pop[i] for i in chosen]
        fs = [float(energies[i]) for i in chosen]
        src = [labels[origin_of[i]] for i in chosen]
        polished = [False] * len(xs)
        polish_evaluations = 0
        if generations >= 1:
            k = min(_N_POLISH, len(xs))
            # prior candidates: polished too, best few (they are already in the run as they are)
            priors = _prior_starts(family, context)
            prior_x, prior_f, prior_src = [], [], []
            if priors:
                PX = np.array([x for x, _ in priors])
                PF = objective(PX)
                polish_evaluations += len(priors)
                keep = _distinct(PX, PF, lo, hi, _N_PRIOR_POLISH)
                prior_x = [PX[i] for i in keep]
                prior_f = [float(PF[i]) for i in keep]
                prior_src = [f"polished {priors[i][1]} candidate" for i in keep]
            if k + len(prior_x):
                X1, F1, used = _compass(objective, np.array(xs[:k] + prior_x),
                                        np.array(fs[:k] + prior_f), lo, hi, iterations)
                polish_evaluations += used
                for j in range(k):
                    if F1[j] < fs[j]:
                        xs[j], fs[j], polished[j] = X1[j], float(F1[j]), True
                for j in range(len(prior_x)):
                    if F1[k + j] < prior_f[j]:
                        xs.append(X1[k + j])
                        fs.append(float(F1[k + j]))
                        polished.append(True)
                        src.append(prior_src[j])
        order = np.argsort(fs, kind="stable")
        out = []
        for j in order:
            prov = {
                "method": "differential evolution (Storn and Price 1997), compass-search polish",
                "start": src[j],
                "objective": fs[j],
                "estimated_feasible": bool(fs[j] < 1.0),
                "polished": polished[j],
                "generations": nit,
                "evaluations": nfev + polish_evaluations,
                "gain_starts": len(starts),
                "seed": int(context.seed),
            }
            out.append(candidate_from_params(family, xs[j], self.origin, prov))
        return out


#: The registered strategy object (see :func:`synth.strategies.default_strategies`).
STRATEGY = EvolveStrategy()
