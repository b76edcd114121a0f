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
* the problem's objective (:mod:`synth.problem.objectives`: least load IAE,
  settling time, Ms, effort, or the balanced compromise), squashed into
  [0, 1) (lower is better), once every estimate meets its requirement with a
  small safety margin: the search optimises the objective directly.

With ``search.reference_shaping``, the reference-step estimates are those of
the shaped response the finishing stage (:mod:`synth.shaping`) would give:
set-point weights for the structures that take them (the response is affine
in the weight ``b``, so each weight tried costs a combination of two
responses) and the static correction ``1/T(0)`` for the others, so limits
that shaping can meet do not push the loop away from the objective's optimum.

Several plant models.  When the problem has parameter ranges or variants,
every estimate is taken on each model of a representative subset
(:func:`synth.verify.robust.search_models`: the nominal plant, the variants,
the box corners of extreme gain and phase, a sample) and the objective sees
each metric's worst value over them (:func:`synth.verify.estimate.worst_over_models`):
the penalties apply over the models and the score is the worst case, so the
proposals come out feasible for all of them.  The verifier then checks the
whole set.

Estimates used inside the objective (:func:`synth.verify.estimate.estimate_loops`),
all vectorised over the population:
closed-loop poles by batched companion eigenvalues; the unit-step response
of output and control from the modal expansion
``y(t) = T(0) + sum_i Res_i exp(p_i t)`` on a 240-point grid (engine form:
a dead time enters by its Pade form); margins and peak sensitivity from
``L(jw)`` on a fixed 160-point grid with the exact dead time; stability over
the plant-gain range by the eigenvalue-free kernel at test factors.  These
are estimates: every proposal is verified afterwards by :func:`synth.verify.verify`.

Work and determinism.  One work unit is one row of the objective on one plant
model (with ``m`` models, a row costs ``m`` units).  The
polish has a fixed number of compass iterations; the evolution gets the
generations that the rest of ``context.work`` pays for (about 40 + 15 per
parameter at ``search.effort = 1``; when a run converges early, the work left
restarts it from a fresh hypercube, so one poor basin is not the last word),
so the same problem and seed give the
same proposals on any machine under any load; nothing here reads the clock.
All randomness comes from ``context.seed``: the initial Latin hypercube
(``scipy.stats.qmc.LatinHypercube``) and the evolution's own generator draw
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


#: Proportional set-point weights the search tries for a structure that takes them
#: (the reference response is affine in b, so each costs one combination of two responses).
SEARCH_WEIGHTS = (1.0, 0.5, 0.0)


class SearchObjective:
    """Vectorised objective of one family for one problem (see the module docstring).

    Call with ``X`` of shape (B, n_params); returns shape (B,).
    :meth:`details` returns the estimated metrics (worst over the plant
    models, metric keys of the design JSON), the chosen set-point weight
    ``setpoint_b`` (NaN where none) and the objective ``f``.
    """

    def __init__(self, problem, family, models=None):
        from synth.problem.objectives import ObjectiveScales, objective
        from synth.verify.estimate import REFERENCE, PlantModel
        from synth.verify.robust import search_models

        self.problem = problem
        self.family = family
        # the plant models the search scores against (nominal first): a representative
        # subset of the problem's models; the verifier checks the whole set afterwards
        self.model_points = tuple(search_models(problem) if models is None else models)
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
            m in REFERENCE for m in self.objective.metrics)
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
        # across +-10 zeta around each lightly damped plant pole or zero (of every model)
        extra = []
        for point in self.model_points:
            for poly in (point.plant.rational_num, point.plant.rational_den):
                if poly.size > 1:
                    for r in np.roots(poly):
                        m = abs(r)
                        if m > 0 and r.imag > 0 and abs(r.real) / m < 0.2:
                            width = 10.0 * max(abs(r.real) / m, 1e-5)
                            extra.append(np.linspace(m * max(1 - width, 0.5),
                                                     m * min(1 + width, 2.0), 24))
        self.w = np.unique(np.concatenate([w, *extra])) if extra else w
        self.models = tuple(PlantModel.prepare(point.plant, self.w)
                            for point in self.model_points)
        self.tau = np.linspace(0.0, 1.0, _T_POINTS) ** 2
        self.ts_floor = req.limit("settling_time")
        ranges = [aim for entry, aim in self.targets if entry.kind == "contain"]
        self.range_factors = np.geomspace(*ranges[0], 3) if ranges else None

    @property
    def n_models(self) -> int:
        """How many plant models each row is scored on (a row costs that many work units)."""
        return len(self.models)

    # -- the pieces ---------------------------------------------------------------------------
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

    def _shaped_reference(self, modal):
        """Reference-step estimates of the shaped response, with the weight chosen per row.

        ``modal`` is one plant model's :class:`synth.verify.estimate.Modal`
        (its stable rows).  Returns the step figures (dict of arrays over those
        rows) and the set-point weight chosen per row (NaN: none).
        """
        from synth.verify.estimate import modal_response, step_figures

        nc, dc = modal.num_c, modal.den_c
        rows = modal.r.shape[0]
        if self.weights is not None:
            from synth.verify.controller import setpoint_numerators

            nums = [setpoint_numerators(nc, dc, 0.0, 0.0), setpoint_numerators(nc, dc, 1.0, 0.0)]
        else:
            nums = [nc]
        ys, us, yss = [], [], []
        for nr in nums:
            y, yf = modal_response(modal, batch_polymul(nr, modal.gnum))
            u, _ = modal_response(modal, batch_polymul(nr, modal.gden))
            ys.append(y)
            us.append(u)
            yss.append(yf)
        t = modal.t
        if self.weights is None:
            y, u, yf = ys[0], us[0], yss[0]
            if self.static_correction:
                # a type-0 loop whose static loop gain is at least 1: the prefilter 1/T(0)
                # brings the final value to 1 (synth.shaping.static_correction)
                with np.errstate(divide="ignore", invalid="ignore"):
                    l0 = np.abs(yf / np.where(yf != 1.0, 1.0 - yf, np.inf))
                fix = (l0 >= 1.0) & np.isfinite(yf) & (yf != 0.0)
                g = np.where(fix, 1.0 / np.where(yf != 0.0, yf, 1.0), 1.0)
                y, u, yf = y * g[:, None], u * g[:, None], yf * g
            return step_figures(t, y, u, yf, self.band), np.full(rows, np.nan)
        # set-point weights: y(b) = y0 + b (y1 - y0), the same for u; keep the b whose
        # reference figures fall shortest of the limits (ties: the larger b)
        best = None
        for b in self.weights:
            y = ys[0] + b * (ys[1] - ys[0])
            u = us[0] + b * (us[1] - us[0])
            fig = step_figures(t, y, u, yss[0] + b * (yss[1] - yss[0]), self.band)
            sh = self._shortfall(self.reference_targets, fig, rows)
            if best is None:
                best = (sh, fig, np.full(rows, b))
                continue
            better = sh < best[0] - 1e-9
            best = (np.where(better, sh, best[0]),
                    {k: np.where(better, fig[k], best[1][k]) for k in fig},
                    np.where(better, b, best[2]))
        return best[1], best[2]

    def model_estimates(self, num_c, den_c) -> list[dict[str, np.ndarray]]:
        """The estimates of every row on each plant model (nominal first), one dict per model.

        Besides the keys of :func:`synth.verify.estimate.estimate_loops`,
        ``region_short`` (how far the closed-loop poles lie outside the
        requirement region, relative to the problem's characteristic
        frequency: the search's shaping term) and ``setpoint_b`` (the
        set-point weight the shaped reference estimate chose; NaN: none).
        """
        from synth.verify.estimate import REFERENCE, estimate_loops

        shaped = self.weights is not None or self.static_correction
        out = []
        for model in self.models:
            est = estimate_loops(num_c, den_c, model, self.w, self.tau, self.band,
                                 self.ts_floor, self.range_factors, keep_modal=shaped)
            n = num_c.shape[0]
            reg = np.zeros(n)
            b_rows = np.full(n, np.nan)
            idx = np.flatnonzero(est["stable"])
            if idx.size:
                reg[idx] = np.sum(np.maximum(-self.region.margin(est["roots"][idx]), 0.0),
                                  axis=1) / self.w_char
                if shaped and self.need_reference:
                    fig, b = self._shaped_reference(est.pop("modal"))
                    for key in REFERENCE:
                        est[key] = est[key].copy()
                        est[key][idx] = fig[key]
                    b_rows[idx] = b
            est.pop("modal", None)
            est["region_short"] = reg
            est["setpoint_b"] = b_rows
            out.append(est)
        return out

    def details(self, X) -> dict[str, np.ndarray]:
        """Estimated metrics (worst over the models) and the objective (arrays of shape (B,))."""
        from synth.verify.estimate import ESTIMATED, worst_over_models

        X = np.atleast_2d(np.asarray(X, dtype=float))
        B = X.shape[0]
        num_c, den_c = self.family.polys(X)
        per_model = self.model_estimates(num_c, den_c)
        est = worst_over_models(per_model)
        est["region_short"] = np.max([e["region_short"] for e in per_model], axis=0)
        stable = est["stable"]
        unstable_part = est["unstable_part"]

        out = {k: est[k] for k in ESTIMATED}
        out["final_value"] = est["final_value"]
        out["stable_plant_gain_range"] = est["stable_plant_gain_range"]
        out["setpoint_b"] = est["setpoint_b"]
        short = np.zeros(B)
        idx = np.flatnonzero(stable)
        if idx.size:
            e = {k: v[idx] for k, v in est.items() if k != "roots"}
            lo, hi = e["stable_plant_gain_range"][:, 0], e["stable_plant_gain_range"][:, 1]
            e["stable_plant_gain_range"] = (lo, hi)
            # penalties: the catalogue's normalised shortfall of each estimate (its worst
            # over the models) against its tightened limit, in catalogue order
            sh = self._shortfall(self.targets, e, idx.size)
            if self.range_factors is not None:
                # the estimated interval comes from crossings on a coarse grid: also count
                # the test factors at which the eigenvalue-free kernel fails
                sh += e["range_fails"]
            sh = np.where(e["ok"], sh, 5.0)
            feas = sh <= 0
            # feasible: the objective at its worst case, squashed into [0, 1) (values first,
            # then the fallback order of loops whose objective is unbounded)
            with np.errstate(invalid="ignore", over="ignore"):
                v = self.objective.values(e, self.scales)
                fb = self.objective.fallbacks(e, self.scales)
                sq = np.where(np.isfinite(v), 0.5 * v / (1.0 + v),
                              np.where(np.isfinite(fb), 0.5 + 0.4999 * fb / (1.0 + fb), 0.9999))
            val = np.where(feas, sq, 1.0 + sh + 0.1 * np.log1p(e["region_short"]))
            short[idx] = val
        f = np.where(stable, short, 10.0 + np.log1p(unstable_part / self.w_char))
        f = np.where(np.isfinite(f), f, 1e6)
        out["f"] = f
        out["stable"] = stable
        return out

    def __call__(self, X) -> np.ndarray:
        return self.details(X)["f"]


def _latin_hypercube(rng, n, lo, hi):
    """Latin hypercube sample of ``n`` points in the box ``[lo, hi]`` (scipy.stats.qmc).

    References
    ----------
    M. D. McKay, R. J. Beckman and W. J. Conover, Technometrics 21(2), 1979.
    """
    from scipy.stats import qmc

    return lo + qmc.LatinHypercube(d=lo.size, rng=rng).random(n) * (hi - lo)


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


def _compass(objective, X, F, lo, hi, iterations: int = _POLISH_ITERATIONS):
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


def _polish_iterations(p: int, budget: int) -> int:
    """Compass iterations the polish gets: all of them, or what half the work pays for.

    ``budget`` counts rows (a row scored on every plant model).  At a small
    ``search.effort``, or with several plant models, the full polish would
    leave the evolution few generations; half the rows then go to each.
    """
    per = (2 * p + 1) * (_N_POLISH + _N_PRIOR_POLISH)
    return max(1, min(_POLISH_ITERATIONS, (int(budget) // 2 - 20) // per))

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
        objective = SearchObjective(problem, family)
        # a work unit is one candidate scored on one plant model
        budget = int(context.work) // objective.n_models
        if budget < npop:
            if budget < 2 * p + 2:
                return []  # not even a small sample fits in the work allowance
            # too little work for the evolution: a smaller initial sample is the answer
            npop = budget
        lo, hi = family.bounds()
        rng = np.random.default_rng(context.seed)
        init = _latin_hypercube(rng, npop, lo, hi)
        starts = _gain_starts(family, context)
        for i, x in enumerate(starts[: npop // 2]):
            init[i] = x
        # the evolution costs npop rows per generation plus the initial population
        # each generation costs npop rows, plus the initial population of each run
        polish_iterations = _polish_iterations(p, budget)
        rows = budget - _polish_reserve(p, polish_iterations)
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
                                        np.array(fs[:k] + prior_f), lo, hi, polish_iterations)
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
                "models": objective.n_models,
                "seed": int(context.seed),
            }
            out.append(candidate_from_params(family, xs[j], self.origin, prov))
        return out


#: The registered strategy object (see :func:`synth.strategies.default_strategies`).
STRATEGY = EvolveStrategy()
