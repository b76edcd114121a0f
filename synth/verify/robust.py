"""Verification over a set of plant models: which models, where the worst case is, robust stability.

A requirement holds when it holds for every model of the problem
(:class:`synth.problem.models.ModelSet`): the nominal plant, each variant and
every point of the parameter (and dead-time) ranges.  Points of a box cannot
all be checked, so the verifier combines three things.

Models checked
--------------
* the nominal plant and every variant, evaluated exactly
  (:func:`synth.verify.verdict.evaluate_model`);
* the corners of the box: all of them up to :data:`MAX_VERTICES` (five
  ranges); beyond, the two-level fold-over design built from a Sylvester
  Hadamard matrix (``scipy.linalg.hadamard``): 32 corners in which every
  range takes both ends equally often and every pair of ranges meets in all
  four combinations, so no single range or pair is left at one end
  (Plackett and Burman 1946; fold-over: Box and Hunter 1961);
* :data:`N_SAMPLES` interior points from a Latin hypercube drawn from
  ``search.seed`` (McKay, Beckman and Conover 1979).

The corners and samples are screened with the batched estimates of
:mod:`synth.verify.estimate`; for each required metric that is violated or
has the least room, a bounded local search (Nelder-Mead on the unit box,
``scipy.optimize.minimize``, a fixed number of evaluations) starts from the
worst screened point and moves towards a worse one.  The worst point of each
metric is then evaluated exactly, and the reported metric is its worst exact
value over the nominal plant, the variants and these points, with the model
where it occurs (``worst_case``).

Robust stability over the box
-----------------------------
Sampling can miss a thin unstable pocket; where a published test applies it
decides stability for the whole box (with the plant-gain factors of
``plant_gain_range`` as one more coordinate).  The characteristic polynomial
``den_C den_G(q) + f num_C num_G(q)`` (engine form: a dead time by its Pade
form; not normalised, so coefficients keep their dependence on ``q``) is
classified numerically:

* coefficients affine in the parameters, each parameter moving one
  coefficient of its own: an interval polynomial, decided exactly by
  Kharitonov's four polynomials (Kharitonov 1978);
* affine otherwise (a polytope of polynomials): first the four Kharitonov
  polynomials of the coefficients' interval hull (a sufficient test); when
  they do not settle it, the edge theorem (Bartlett, Hollot and Lin 1988):
  the family is stable exactly when every edge of the box maps to a stable
  segment, each segment decided exactly by the root-locus engine's gain
  intervals; with more than :data:`EDGE_LIMIT` edges, zero exclusion on the
  convex hulls of the corner values (exact for a polytope, on the grid);
* otherwise (products of parameters, a parameter squared, a dead-time
  range): the zero-exclusion principle on a frequency grid (Frazer and
  Duncan 1929; Barmish 1994, ch. 7): the family is stable when one member
  is, the degree does not drop and ``0`` stays outside the value set
  ``p(jw, Q)`` at every grid frequency.  The value set is bounded by the
  convex hull of the corner values (the mapping theorem for multilinear
  dependence, Zadeh and Desoer 1963); coordinates with curvature (a squared
  parameter, the Pade form of a dead time) are first cut into
  :data:`SUBDIVISIONS` slices (half as many with more than six coordinates
  or more than two curved ones), where the hull of each slice's corners is
  close to its value set.  For curved coordinates the test is therefore an
  approximation that tightens with the subdivision, and it says so.

A failed test gives a counterexample where it can (a corner, a point on an
edge), which is then evaluated exactly like any other model; a test that
cannot certify the box and finds no unstable member is a violation of its own
("robust stability not certified"), on the safe side.

References
----------
.. [1] V. L. Kharitonov, "Asymptotic stability of an equilibrium position of
   a family of systems of linear differential equations", Differentsial'nye
   Uravneniya 14(11), 1978.
.. [2] A. C. Bartlett, C. V. Hollot and H. Lin, "Root locations of an entire
   polytope of polynomials: it suffices to check the edges", Mathematics of
   Control, Signals and Systems 1, 1988.
.. [3] B. R. Barmish, *New Tools for Robustness of Linear Systems*,
   Macmillan, 1994 (zero exclusion, value sets, the mapping theorem).
.. [4] L. A. Zadeh and C. A. Desoer, *Linear System Theory*, McGraw-Hill,
   1963 (the mapping theorem for multilinear functions).
.. [5] R. L. Plackett and J. P. Burman, "The design of optimum
   multifactorial experiments", Biometrika 33(4), 1946; G. E. P. Box and
   J. S. Hunter, "The 2^(k-p) fractional factorial designs", Technometrics
   3, 1961 (fold-over).
.. [6] M. D. McKay, R. J. Beckman and W. J. Conover, Technometrics 21(2),
   1979 (Latin hypercube).
.. [7] J. A. Nelder and R. Mead, "A simplex method for function
   minimization", Computer Journal 7, 1965.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from synth.problem.models import DEAD_TIME, ModelSet, point_text

__all__ = [
    "EDGE_LIMIT", "MAX_VERTICES", "N_SAMPLES", "SUBDIVISIONS",
    "FamilyStability", "ModelPoint", "RobustSetup", "box_corners", "box_samples",
    "explore", "family_stability", "interval_hurwitz", "kharitonov_polynomials",
    "robust_setup", "search_models",
]

#: Most box corners the verifier checks (all of them up to five ranges).
MAX_VERTICES = 32
#: Seeded interior points of the box the verifier checks.
N_SAMPLES = 8
#: Box corners in the search's representative subset, interior samples, and
#: the size of the subset (the nominal plant and every variant always join).
SEARCH_CORNERS = 3
SEARCH_SAMPLES = 1
SEARCH_MODELS = 4
#: A required metric whose least room over the screened models is below this
#: fraction of its limit gets a local worst-case search (so do violated ones).
NEAR_ROOM = 0.25
#: Local searches per design, and the model evaluations each may spend
#: (``LOCAL_BASE + LOCAL_PER_RANGE`` per range, at most ``LOCAL_MAX``).
MAX_LOCAL_SEARCHES = 2
LOCAL_BASE = 8
LOCAL_PER_RANGE = 4
LOCAL_MAX = 32
#: Most points of the ranges evaluated exactly per design besides unstable ones: the
#: local searches' results and the worst screened point of each required metric.
MAX_EXACT_POINTS = 3
#: Most box edges the edge theorem checks one by one.
EDGE_LIMIT = 32
#: Slices per curved coordinate for the zero-exclusion test.
SUBDIVISIONS = 8
#: Points of the normalised time grid of the screening estimates, and most
#: points of their frequency grid (a subsample of the verifier's one grid).
_T_POINTS = 320
_W_POINTS = 400
#: Frequency grid of the zero-exclusion test, relative to the characteristic
#: polynomial's own frequency scale (decades either side, points).
_ZE_DECADES = 4.0
_ZE_POINTS = 800
#: Lattice points times frequencies above which the grid thins (to at most half).
_ZE_BUDGET = 1_000_000
#: Relative tolerance of the affinity test of the coefficient map.
_AFFINE_RTOL = 1e-9


# ----------------------------------------------------------------------------------------------
# the models
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class ModelPoint:
    """One plant model the verifier or the search uses.

    Attributes
    ----------
    kind : str
        ``"nominal"``, ``"variant"``, ``"vertex"`` (a box corner), ``"sample"``,
        ``"search"`` (found by the local worst-case search) or
        ``"counterexample"`` (found by the robust stability test).
    plant : synth.problem.plant.Plant
    label : str
        ``"nominal"`` or the variant's label; empty for a point of the ranges.
    point : tuple of (str, float)
        Coordinates in the ranges (the nominal values for the nominal plant).
    """

    kind: str
    plant: Any
    label: str = ""
    point: tuple[tuple[str, float], ...] = ()

    @property
    def name(self) -> str:
        """The model in words: its label, or its point ``{k=2.6, T=6}``."""
        return self.label or point_text(dict(self.point))

    def to_json(self) -> str | dict:
        """The contract's ``model``: the label, or ``{name: value}`` for a point of the ranges."""
        return self.label if self.label else {k: float(v) for k, v in self.point}


def box_corners(d: int, limit: int = MAX_VERTICES) -> tuple[np.ndarray, str]:
    """Unit-box corners to check, and how they were chosen (see the module docstring).

    Returns
    -------
    corners : ndarray, shape (m, d)
        Rows of 0 (low end) and 1 (high end); every corner when ``2**d <= limit``.
    design : str
        ``"all 2^d corners"`` or the fold-over design's description.
    """
    if d == 0:
        return np.zeros((0, 0)), "no ranges"
    if 2 ** d <= limit:
        return (np.array(list(itertools.product((0.0, 1.0), repeat=d))),
                f"all {2 ** d} corners")
    from scipy.linalg import hadamard

    n = 1 << math.ceil(math.log2(d + 1))
    if 2 * n > limit:
        raise ValueError(f"{d} ranges need a design of {2 * n} runs, above the limit {limit}")
    H = hadamard(n)[:, 1:d + 1].astype(float)
    design = np.vstack([H, -H])  # fold-over: every row and its mirror
    corners = np.unique((design + 1.0) / 2.0, axis=0)
    return corners, (f"{corners.shape[0]} of {2 ** d} corners (two-level fold-over design from "
                     f"a {n}x{n} Hadamard matrix)")


def box_samples(d: int, n: int, seed: int) -> np.ndarray:
    """``n`` interior points of the unit box from a Latin hypercube seeded by ``seed``."""
    if d == 0 or n == 0:
        return np.zeros((0, d))
    from scipy.stats import qmc

    # a fixed tag keeps these draws apart from every other use of the seed
    rng = np.random.default_rng([int(seed), 0x726F62])
    return qmc.LatinHypercube(d=d, rng=rng).random(n)


@dataclass(frozen=True, eq=False)
class RobustSetup:
    """The models of a problem prepared once for many verifications (see :func:`robust_setup`).

    Attributes
    ----------
    models : ModelSet
    nominal : ModelPoint
    variants, corners, samples : tuple of ModelPoint
    corner_design : str
        How the corners were chosen.
    corners_total : int
        How many corners the box has.
    gain_factors : (float, float) or None
        The required plant-gain factor range (one more uncertainty, for stability).
    """

    models: ModelSet
    nominal: ModelPoint
    variants: tuple[ModelPoint, ...] = ()
    corners: tuple[ModelPoint, ...] = ()
    samples: tuple[ModelPoint, ...] = ()
    corner_design: str = "no ranges"
    corners_total: int = 0
    gain_factors: tuple[float, float] | None = None
    #: memo of what does not depend on the compensator, so every verification of the
    #: problem shares it: the unnormalised plant polynomials by unit coordinates, the
    #: screening grids and the models' responses on them
    _polys: dict = field(default_factory=dict, repr=False, compare=False)

    def plant_polys(self, u) -> tuple[np.ndarray, np.ndarray]:
        """Engine-form numerator and denominator, NOT normalised, at unit coordinates ``u``.

        The rational part is memoised by the parameters' coordinates alone, so
        slicing the dead time costs a Pade form per slice, not a parse.
        """
        key = tuple(round(float(x), 15) for x in u)
        if key not in self._polys:
            models = self.models
            if not models.ranges:
                self._polys[key] = _unnormalised(models.nominal)
                return self._polys[key]
            point = models.point_from_unit(key)
            dead = point.pop(DEAD_TIME, models.nominal.dead_time)
            rkey = ("rational", tuple(sorted(point.items())))
            if rkey not in self._polys:
                plant = models.plant_at(point)
                self._polys[rkey] = (plant.rational_num, plant.rational_den)
            num, den = self._polys[rkey]
            if dead > 0:
                from synth.problem.delay import pade

                pn, pd = pade(dead, models.nominal.pade_order)
                num, den = np.convolve(num, pn), np.convolve(den, pd)
            self._polys[key] = (num, den)
        return self._polys[key]

    @property
    def is_single(self) -> bool:
        return self.models.is_single

    @property
    def range_points(self) -> tuple[ModelPoint, ...]:
        return self.corners + self.samples

    def all_points(self) -> tuple[ModelPoint, ...]:
        """Nominal, variants, corners and samples: the fixed set, nominal first."""
        return (self.nominal, *self.variants, *self.corners, *self.samples)

    def point_model(self, point: dict, kind: str) -> ModelPoint:
        """The model at a point of the ranges."""
        return ModelPoint(kind, self.models.plant_at(point),
                          point=tuple((r.name, float(point[r.name])) for r in self.models.ranges))


def robust_setup(problem) -> RobustSetup:
    """The fixed model set of ``problem``: nominal, variants, box corners and seeded samples."""
    models = problem.model_set
    nominal = ModelPoint("nominal", problem.plant, "nominal",
                         tuple((r.name, r.nominal) for r in models.ranges))
    variants = tuple(ModelPoint("variant", v.plant, v.label) for v in models.variants)
    setup = RobustSetup(models=models, nominal=nominal, variants=variants,
                        gain_factors=problem.requirements.limit("stable_plant_gain_range"))
    d = len(models.ranges)
    if d == 0:
        return setup
    corners, design = box_corners(d)
    samples = box_samples(d, N_SAMPLES, problem.search.seed)
    return RobustSetup(
        models=models, nominal=nominal, variants=variants,
        corners=tuple(setup.point_model(models.point_from_unit(u), "vertex") for u in corners),
        samples=tuple(setup.point_model(models.point_from_unit(u), "sample") for u in samples),
        corner_design=design, corners_total=2 ** d, gain_factors=setup.gain_factors)


def search_models(problem, setup: RobustSetup | None = None) -> tuple[ModelPoint, ...]:
    """The representative subset the search scores candidates on, nominal first.

    The nominal plant, every variant, then box corners of extreme open-loop
    behaviour near the plant's own frequency scale (the largest gain with the
    most lag, the smallest gain, the most lag, the largest gain; at most
    :data:`SEARCH_CORNERS`, at least one) and :data:`SEARCH_SAMPLES` seeded
    interior point while the subset has fewer than :data:`SEARCH_MODELS`
    models.  The choice depends on the problem only, never on a candidate.
    """
    from synth.numerics.scaling import frequency_scale

    setup = robust_setup(problem) if setup is None else setup
    out = [setup.nominal, *setup.variants]
    if not setup.corners:
        return tuple(out)
    nom = problem.plant
    w0 = frequency_scale(nom.rational_num, nom.rational_den,
                         [nom.dead_time, 1.0] if nom.dead_time else [1.0])
    s = 1j * w0 * np.array([0.3, 1.0, 3.0])
    ref = nom.evaluate(s)
    gains, phases = [], []
    for c in setup.corners:
        with np.errstate(all="ignore"):
            ratio = c.plant.evaluate(s) / ref
        gains.append(float(np.mean(np.log(np.abs(ratio)))))
        phases.append(float(np.mean(np.angle(ratio))))
    g, ph = np.array(gains), np.array(phases)

    def z(v):
        spread = np.std(v)
        return (v - np.mean(v)) / spread if spread > 0 else np.zeros_like(v)

    # most demanding first: largest gain with most lag, least gain, most lag, largest gain
    picks = [int(np.argmax(z(g) - z(ph))), int(np.argmin(g)), int(np.argmin(ph)),
             int(np.argmax(g))]
    room = max(1, SEARCH_MODELS - len(out))
    chosen: list[int] = []
    for i in picks:
        if i not in chosen and len(chosen) < min(SEARCH_CORNERS, room):
            chosen.append(i)
    out += [setup.corners[i] for i in chosen]
    out += list(setup.samples[:max(0, min(SEARCH_SAMPLES, SEARCH_MODELS - len(out)))])
    return tuple(out)


# ----------------------------------------------------------------------------------------------
# screening and the local worst-case search
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Exploration:
    """What screening the models (and the local searches) found for one design.

    Attributes
    ----------
    worst : dict
        Metric key -> ``(value, ModelPoint)``: the worst estimate over the
        screened models (the stable plant-gain range as ``[lo, hi]``).
    unstable : tuple of ModelPoint
        Models the estimates find unstable.
    worst_points : tuple of ModelPoint
        Points of the ranges to evaluate exactly (the worst of each metric,
        local-search results and unstable points first), at most
        :data:`MAX_EXACT_POINTS` besides the unstable ones.
    screened, local_searches, local_evaluations : int
    """

    worst: dict[str, tuple[Any, ModelPoint]] = field(default_factory=dict)
    unstable: tuple[ModelPoint, ...] = ()
    worst_points: tuple[ModelPoint, ...] = ()
    screened: int = 0
    local_searches: int = 0
    local_evaluations: int = 0


def _grids(setup: RobustSetup, coarse: bool = False):
    """The screening grids of a problem (memoised): frequencies and a normalised time grid.

    The frequencies subsample the union of the verifier's grids
    (:func:`synth.verify.frequency.frequency_grid`) of the nominal plant and
    the variants, so their resonances keep dense points; they do not depend
    on the compensator, so the models' responses on them are computed once
    per problem.
    """
    key = ("grid", coarse)
    if key not in setup._polys:
        from synth.verify.frequency import frequency_grid

        one = np.ones(1)
        w = np.unique(np.concatenate([frequency_grid(p.plant, one, one)
                                      for p in (setup.nominal, *setup.variants)]))
        n_w, n_t = (_W_POINTS // 2, _T_POINTS // 2) if coarse else (_W_POINTS, _T_POINTS)
        if w.size > n_w:
            w = w[np.unique(np.linspace(0, w.size - 1, n_w).round().astype(int))]
        setup._polys[key] = (w, np.linspace(0.0, 1.0, n_t) ** 2)
    return setup._polys[key]


def _prepared(points, w) -> list[tuple[list[int], Any]]:
    """The points grouped by polynomial shape, each group stacked as one PlantModel."""
    from synth.verify.estimate import PlantModel

    groups: dict[tuple[int, int], list[int]] = {}
    for i, p in enumerate(points):
        groups.setdefault((p.plant.num.size, p.plant.den.size), []).append(i)
    return [(rows, PlantModel.prepare([points[i].plant for i in rows], w))
            for rows in groups.values()]


def _screen(problem, nc, dc, points, w, tau, prepared=None) -> dict[str, np.ndarray]:
    """Batched estimates for one compensator on each model (models of one shape stacked)."""
    from synth.verify.estimate import estimate_loops

    req = problem.requirements
    band = req.settling_band / 100.0
    ts_floor = req.limit("settling_time")
    parts: dict[str, np.ndarray] = {}
    n = len(points)
    for rows, model in (prepared if prepared is not None else _prepared(points, w)):
        k = len(rows)
        est = estimate_loops(np.tile(nc, (k, 1)), np.tile(dc, (k, 1)), model, w, tau, band,
                             ts_floor)
        for key, v in est.items():
            if key == "roots":
                continue
            if key not in parts:
                parts[key] = np.full((n, *v.shape[1:]), np.nan if v.dtype.kind == "f" else 0,
                                     dtype=v.dtype)
            parts[key][rows] = v
    return parts


def _value(est: dict[str, np.ndarray], key: str, i: int):
    """An estimate in the verdict's form (``None`` unbounded or undefined)."""
    if key == "stable_plant_gain_range":
        lo, hi = est[key][i]
        if not (np.isfinite(lo) and np.isfinite(hi)) and not est["stable"][i]:
            return None
        return [None if not lo > 0 else float(lo), None if not np.isfinite(hi) else float(hi)]
    v = float(est[key][i])
    return v if math.isfinite(v) else None


def _room(entry, limit, value, stable: bool) -> float:
    """The room a model leaves a requirement (very negative for an unstable loop)."""
    if not stable:
        return -1e6
    if value is None and entry.kind in ("upper", "lower") and entry.undefined is None:
        return 1e6
    r = entry.room(value, limit)
    return float(np.clip(r, -1e6, 1e6)) if not math.isnan(r) else -1e6


def explore(problem, controller, setup: RobustSetup, *, full: bool = True,
            include_variants: bool = False) -> Exploration:
    """Screen the models with batched estimates and search the worst case of the nearest limits.

    Parameters
    ----------
    problem : synth.problem.Problem
    controller : synth.verify.controller.Controller
    setup : RobustSetup
    full : bool
        Run the local worst-case searches and pick the points to evaluate
        exactly (``False``: screening only, for a quick verdict).
    include_variants : bool
        Screen the variants and the corners only (a quick verdict, which
        evaluates only the nominal plant exactly); else the corners and the
        samples.

    Returns
    -------
    Exploration
    """
    from synth.numerics.poly import trim
    from synth.verify.estimate import ESTIMATED

    nc, dc = trim(np.asarray(controller.num, float)), trim(np.asarray(controller.den, float))
    if nc.size > dc.size:
        return Exploration()  # an improper compensator: the exact evaluation says so
    width = max(nc.size, dc.size)
    nc, dc = np.pad(nc, (width - nc.size, 0)), np.pad(dc, (width - dc.size, 0))
    # a quick verdict screens the variants and the corners; a full one the corners and samples
    points = (list(setup.variants) + list(setup.corners) if include_variants
              else list(setup.range_points))
    if not points:
        return Exploration()
    w, tau = _grids(setup, coarse=not full)
    key = ("screen", include_variants, full)
    if key not in setup._polys:  # the models' responses on the grid, once per problem
        setup._polys[key] = _prepared(points, w)
    est = _screen(problem, nc, dc, points, w, tau, setup._polys[key])
    stable = est["stable"]
    keys = [*ESTIMATED, "stable_plant_gain_range"]
    worst: dict[str, tuple[Any, ModelPoint]] = {}
    for key in keys:
        best_i, best_v = None, None
        for i in np.flatnonzero(stable):
            v = _value(est, key, int(i))
            if best_i is None or _worse(key, v, best_v):
                best_i, best_v = int(i), v
        if best_i is not None:
            worst[key] = (best_v, points[best_i])
    unstable = tuple(points[i] for i in np.flatnonzero(~stable))
    if not full:
        return Exploration(worst=worst, unstable=unstable, screened=len(points))

    # local worst-case searches, over the ranges only, for the violated or nearest limits
    req = problem.requirements
    ranges = setup.models.ranges
    chosen: list[tuple[float, Any, Any, int]] = []
    if ranges:
        offset = len(points) - len(setup.range_points)
        for entry, limit in req.limits():
            if entry.concerns == "structure" or entry.metric not in keys:
                continue
            rooms = [_room(entry, limit, _value(est, entry.metric, offset + j),
                           bool(stable[offset + j]))
                     for j in range(len(setup.range_points))]
            j = int(np.argmin(rooms))
            chosen.append((rooms[j], entry, limit, j))
        chosen.sort(key=lambda c: c[0])
        chosen = [c for i, c in enumerate(chosen)
                  if (c[0] < NEAR_ROOM or i == 0) and c[0] > -1e6][:MAX_LOCAL_SEARCHES]
    found: list[ModelPoint] = []
    evaluations = 0
    for _room0, entry, limit, j in chosen:
        start = setup.range_points[j]
        point, used = _local_search(problem, setup, nc, dc, w, tau, entry, limit, start)
        evaluations += used
        if point is not None:
            found.append(point)
    # the points to evaluate exactly: local-search results, then the worst of each
    # required metric (the other metrics are worst cases over the exact evaluations)
    # (with no limit on any of them, the worst screened point of every metric instead)
    required = [e.metric for e, _ in req.limits() if e.metric in keys] or keys
    exact: list[ModelPoint] = list(found)
    for key in required:
        if key in worst and worst[key][1].kind in ("vertex", "sample"):
            p = worst[key][1]
            if all(p is not q for q in exact):
                exact.append(p)
    exact = _distinct_points(exact)[:MAX_EXACT_POINTS]
    return Exploration(worst=worst, unstable=unstable, worst_points=tuple(exact),
                       screened=len(points), local_searches=len(chosen),
                       local_evaluations=evaluations)


def _worse(key: str, a, b) -> bool:
    """Whether estimate ``a`` is worse than ``b`` (the plant-gain range: the narrower)."""
    from synth.problem.catalogue import METRICS

    if key == "stable_plant_gain_range":
        def width(v):
            if v is None:
                return -math.inf
            lo = v[0] if v[0] is not None else 0.0
            hi = v[1] if v[1] is not None else math.inf
            return min(math.log(1.0 / lo) if lo > 0 else math.inf,
                       math.log(hi) if hi > 0 else -math.inf)
        return width(a) < width(b)
    return METRICS[key].worse(a, b)


def _distinct_points(points: list[ModelPoint]) -> list[ModelPoint]:
    out: list[ModelPoint] = []
    for p in points:
        if all(dict(p.point) != dict(q.point) for q in out):
            out.append(p)
    return out


def _local_search(problem, setup, nc, dc, w, tau, entry, limit, start: ModelPoint):
    """Nelder-Mead on the unit box from ``start`` towards the least room of one requirement.

    Returns the worst point found (``None`` when none beats the start) and the
    number of model evaluations spent.
    """
    from scipy.optimize import minimize

    models = setup.models
    d = len(models.ranges)
    budget = min(LOCAL_MAX, LOCAL_BASE + LOCAL_PER_RANGE * d)
    x0 = models.unit_of(dict(start.point))
    count = 0

    def room_at(u):
        nonlocal count
        count += 1
        u = np.clip(u, 0.0, 1.0)
        pt = setup.point_model(models.point_from_unit(u), "search")
        est = _screen(problem, nc, dc, [pt], w, tau)
        return _room(entry, limit, _value(est, entry.metric, 0), bool(est["stable"][0]))

    f0 = room_at(x0)
    # initial simplex: a quarter of the box from the start towards the interior on each axis
    simplex = [x0]
    for i in range(d):
        x = x0.copy()
        x[i] = x[i] + (0.25 if x[i] <= 0.5 else -0.25)
        simplex.append(x)
    res = minimize(room_at, x0, method="Nelder-Mead", bounds=[(0.0, 1.0)] * d,
                   options={"maxfev": budget, "initial_simplex": np.array(simplex),
                            "xatol": 1e-3, "fatol": 1e-4})
    if not (res.fun < f0):
        return None, count
    u = np.clip(res.x, 0.0, 1.0)
    return setup.point_model(models.point_from_unit(u), "search"), count


# ----------------------------------------------------------------------------------------------
# robust stability of the box
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class FamilyStability:
    """The verdict of a robust stability test over the box of ranges.

    Attributes
    ----------
    test : str
        Which test decided (see the module docstring).
    certified : bool or None
        The whole family is stable; ``None`` when no test applies (no ranges).
    counterexample : ModelPoint or None
        An unstable member found, when there is one.
    factor : float or None
        The plant-gain factor at the counterexample (with ``plant_gain_range``).
    detail : str
        What failed, in words (empty when certified).
    approximate : bool
        The test approximates the value set (curved coordinates cut into
        slices), so a certificate is not rigorous; otherwise a certificate
        holds for the whole box (on the frequency grid, for zero exclusion).
    """

    test: str
    certified: bool | None
    counterexample: ModelPoint | None = None
    factor: float | None = None
    detail: str = ""
    approximate: bool = False


def kharitonov_polynomials(lo, hi) -> np.ndarray:
    """Kharitonov's four polynomials of the interval polynomial with coefficient bounds ``lo, hi``.

    Parameters
    ----------
    lo, hi : array_like
        Lower and upper bounds of the coefficients, descending powers of s
        (``lo <= hi``; the leading interval must not contain 0).

    Returns
    -------
    ndarray, shape (4, n + 1)
        Descending powers.  In ascending powers ``a_0 + a_1 s + ...`` they take
        the bounds in the repeating patterns (lo, lo, hi, hi), (hi, hi, lo, lo),
        (lo, hi, hi, lo) and (hi, lo, lo, hi).

    References
    ----------
    V. L. Kharitonov, Differentsial'nye Uravneniya 14(11), 1978; B. R.
    Barmish, *New Tools for Robustness of Linear Systems*, 1994, ch. 5.
    """
    lo = np.asarray(lo, dtype=float)[::-1]
    hi = np.asarray(hi, dtype=float)[::-1]
    patterns = ("llhh", "hhll", "lhhl", "hllh")
    out = np.empty((4, lo.size))
    for r, pat in enumerate(patterns):
        for i in range(lo.size):
            out[r, i] = lo[i] if pat[i % 4] == "l" else hi[i]
    return out[:, ::-1].copy()


def interval_hurwitz(lo, hi) -> tuple[bool, int | None]:
    """Whether every polynomial with coefficients in ``[lo, hi]`` is Hurwitz (Kharitonov 1978).

    Returns ``(stable, index)``: ``index`` names the first of the four
    Kharitonov polynomials that is not Hurwitz (``None`` when all are).  A
    leading interval containing 0 (the degree can drop) is not stable.
    """
    from synth.numerics.screening import hurwitz_batch

    lo = np.asarray(lo, dtype=float)
    hi = np.asarray(hi, dtype=float)
    if lo[0] <= 0.0 <= hi[0]:
        return False, None
    if hi[0] < 0:  # a negative leading coefficient: the mirrored family has the same roots
        lo, hi = -hi, -lo
    K = kharitonov_polynomials(lo, hi)
    ok = hurwitz_batch(_balanced(K))
    bad = np.flatnonzero(~ok)
    return (True, None) if bad.size == 0 else (False, int(bad[0]))


def _balanced(P: np.ndarray) -> np.ndarray:
    """Rows of ``P`` with the variable scaled to their common frequency scale (exact powers of 2)."""
    from synth.numerics.scaling import coefficient_scale, frequency_scale, scale_variable

    P = np.atleast_2d(P)
    w0 = frequency_scale(*P)
    out = np.array([scale_variable(p, w0) for p in P])
    return out / coefficient_scale(out)


def segment_stable(p0, p1) -> tuple[bool, float | None]:
    """Whether every polynomial ``(1 - t) p0 + t p1``, ``0 <= t <= 1``, is Hurwitz.

    Decided exactly by the root-locus engine's gain intervals of
    ``p0 + t (p1 - p0)`` (:func:`synth.locus.core.stable_gain_intervals`).
    Returns ``(stable, t)`` with ``t`` inside an unstable part of the segment
    when there is one.
    """
    from synth.locus.core import interval_containing, stable_gain_intervals
    from synth.numerics.poly import trim

    p0 = np.asarray(p0, dtype=float)
    diff = np.asarray(p1, dtype=float) - p0
    if not np.any(diff):
        return True, None
    ivs = stable_gain_intervals(trim(diff), p0)
    iv = interval_containing(ivs, 0.0)
    if iv is None:
        return False, 0.0
    hi = iv[1]
    if hi is None or hi > 1.0:
        return True, None
    nxt = [lo for lo, _ in ivs if lo is not None and lo >= hi]
    end = min([1.0, *nxt])
    return False, float(0.5 * (hi + end)) if end > hi else float(hi)


def _unnormalised(plant) -> tuple[np.ndarray, np.ndarray]:
    """Engine-form numerator and denominator WITHOUT the monic normalisation (keeps affinity)."""
    num, den = plant.rational_num, plant.rational_den
    if plant.dead_time > 0:
        from synth.problem.delay import pade

        pn, pd = pade(plant.dead_time, plant.pade_order)
        num, den = np.convolve(num, pn), np.convolve(den, pd)
    return num, den


class _CoefficientMap:
    """The characteristic coefficients as a function of unit coordinates of box x factors."""

    def __init__(self, setup: RobustSetup, nc, dc):
        self.setup = setup
        self.nc, self.dc = nc, dc
        self.d = len(setup.models.ranges)
        self.factors = setup.gain_factors
        self.dims = self.d + (1 if self.factors is not None else 0)
        nom = self.parts(tuple(setup.models.unit_of(setup.models.nominal_point)))
        self.width = max(nom[0].size, nom[1].size)

    def parts(self, u: tuple[float, ...]) -> tuple[np.ndarray, np.ndarray]:
        """``(den_C den_G, num_C num_G)`` at box coordinates ``u``."""
        num, den = self.setup.plant_polys(u)
        return np.convolve(self.dc, den), np.convolve(self.nc, num)

    def factor(self, v: float) -> float:
        if self.factors is None:
            return 1.0
        lo, hi = self.factors
        return lo + v * (hi - lo) if 0.0 < v < 1.0 else (lo if v <= 0.0 else hi)

    def coeffs(self, U: np.ndarray) -> np.ndarray:
        """Rows of coefficients (descending, padded) at the rows of unit coordinates ``U``."""
        out = np.zeros((U.shape[0], self.width))
        seen: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}
        for i, u in enumerate(U):
            key = tuple(u[:self.d])
            if key not in seen:  # the plant-gain factor needs no new polynomials
                seen[key] = self.parts(key)
            a, b = seen[key]
            f = self.factor(u[self.d]) if self.factors is not None else 1.0
            out[i, self.width - a.size:] += a
            out[i, self.width - b.size:] += f * b
        return out

    def point(self, u) -> tuple[ModelPoint, float | None]:
        models = self.setup.models
        pt = (self.setup.point_model(models.point_from_unit(u[:self.d]), "counterexample")
              if self.d else self.setup.nominal)
        return pt, (float(self.factor(u[self.d])) if self.factors is not None else None)


def family_stability(problem, controller, setup: RobustSetup) -> FamilyStability:
    """Robust stability of the loop over the box of ranges (and plant-gain factors).

    See the module docstring for which test is used when.
    """
    from synth.numerics.poly import trim

    if not setup.models.ranges:
        if setup.gain_factors is not None:
            return FamilyStability("exact plant-gain interval of each model", None)
        return FamilyStability("closed-loop poles of each model", None)
    nc, dc = trim(np.asarray(controller.num, float)), trim(np.asarray(controller.den, float))
    cmap = _CoefficientMap(setup, nc, dc)
    D = cmap.dims
    center = np.full(D, 0.5)
    c0 = cmap.coeffs(center[None, :])[0]
    faces_hi = np.tile(center, (D, 1))
    faces_lo = np.tile(center, (D, 1))
    for i in range(D):
        faces_hi[i, i], faces_lo[i, i] = 1.0, 0.0
    chi, clo = cmap.coeffs(faces_hi), cmap.coeffs(faces_lo)
    slopes = chi - clo  # per unit of each coordinate
    curvature = np.abs(chi + clo - 2.0 * c0)
    scale = np.abs(c0) + 0.5 * np.sum(np.abs(slopes), axis=0)
    tol = _AFFINE_RTOL * np.maximum(scale, np.finfo(float).tiny)
    curved = np.any(curvature > tol, axis=1)

    corners_u, _ = box_corners(D, MAX_VERTICES)
    Ccorner = cmap.coeffs(corners_u)
    # the degree must not drop anywhere: the leading coefficient keeps its sign
    lead = Ccorner[:, 0]
    if not (np.all(lead > 0) or np.all(lead < 0)):
        return FamilyStability("degree check", False, detail="the leading coefficient of the "
                               "characteristic polynomial changes sign over the ranges")
    predicted = c0 + (corners_u - 0.5) @ slopes
    affine = (not np.any(curved)
              and np.all(np.abs(Ccorner - predicted) <= tol))
    if affine and setup.samples:
        S = box_samples(D, 2, problem.search.seed + 1)
        affine = bool(np.all(np.abs(cmap.coeffs(S) - (c0 + (S - 0.5) @ slopes)) <= tol))
    # a member must be stable: the nominal, else stop here with it as the counterexample
    from synth.numerics.screening import hurwitz_batch

    if not hurwitz_batch(_balanced(c0[None, :]))[0]:
        pt, f = cmap.point(center)
        return FamilyStability("centre of the box", False, pt, f,
                               "the loop is unstable at the centre of the ranges")
    if affine:
        return _affine_test(cmap, c0, slopes, tol)
    return _zero_exclusion(cmap, curved)


def _affine_test(cmap: _CoefficientMap, c0, slopes, tol) -> FamilyStability:
    """Kharitonov (interval polynomial or interval hull), then the edge theorem."""
    D = cmap.dims
    if c0[0] < 0:  # the mirrored family has the same roots; keep the leading sign positive
        c0, slopes = -c0, -slopes
    moves = np.abs(slopes) > tol[None, :]
    touched = [np.flatnonzero(m) for m in moves]
    interval = (all(t.size <= 1 for t in touched)
                and len({int(t[0]) for t in touched if t.size}) == sum(t.size for t in touched))
    half = 0.5 * np.sum(np.abs(slopes), axis=0)
    lo, hi = c0 - half, c0 + half
    ok, which = interval_hurwitz(lo, hi)
    if ok:
        name = ("Kharitonov (interval polynomial)" if interval
                else "Kharitonov (interval hull of an affine family)")
        return FamilyStability(name, True)
    if interval:
        # the failing Kharitonov polynomial is a corner of the coefficient box, hence of the box
        K = kharitonov_polynomials(lo, hi)[which or 0]
        u = np.full(D, 0.5)
        for i, t in enumerate(touched):
            if t.size:
                j = int(t[0])
                at_hi = np.isclose(K[j], hi[j], rtol=0, atol=tol[j])
                u[i] = 1.0 if (at_hi == (slopes[i, j] > 0)) else 0.0
        pt, f = cmap.point(u)
        return FamilyStability("Kharitonov (interval polynomial)", False, pt, f,
                               f"Kharitonov polynomial {(which or 0) + 1} is not Hurwitz")
    edges = D * 2 ** (D - 1)
    if edges <= EDGE_LIMIT:
        corners = np.array(list(itertools.product((0.0, 1.0), repeat=D)))
        C = cmap.coeffs(corners)
        for a in range(corners.shape[0]):
            for i in range(D):
                if corners[a, i] != 0.0:
                    continue
                b_u = corners[a].copy()
                b_u[i] = 1.0
                b = int(np.flatnonzero(np.all(corners == b_u, axis=1))[0])
                ok, t = segment_stable(C[a], C[b])
                if not ok:
                    u = corners[a] + (t or 0.0) * (b_u - corners[a])
                    pt, f = cmap.point(u)
                    return FamilyStability("edge theorem", False, pt, f,
                                           f"an edge of the box is unstable at {pt.name}"
                                           + (f", plant-gain factor {f:.4g}" if f else ""))
        return FamilyStability("edge theorem", True)
    return _zero_exclusion(cmap, np.zeros(D, bool), polytope=True)


def _hull_excludes_zero(V: np.ndarray) -> np.ndarray:
    """Whether 0 lies outside the convex hull of the complex points along axis -2.

    ``V`` has shape (..., K, W); returns (..., W).  The hull excludes 0
    exactly when the points' angles leave a gap wider than pi (they fit in an
    open half-plane); a point at 0 is never excluded.
    """
    ang = np.sort(np.angle(V), axis=-2)
    gaps = np.diff(ang, axis=-2)
    wrap = 2 * np.pi - (ang[..., -1, :] - ang[..., 0, :])
    widest = np.maximum(np.max(gaps, axis=-2) if gaps.shape[-2] else 0.0, wrap)
    return (widest > np.pi) & np.all(V != 0, axis=-2)


def _zero_exclusion(cmap: _CoefficientMap, curved, polytope: bool = False) -> FamilyStability:
    """Zero exclusion on a frequency grid with hulls of (sliced) box corners."""
    from synth.numerics.scaling import frequency_scale
    from synth.numerics.screening import hurwitz_batch

    D = cmap.dims
    n_curved = int(np.sum(curved))
    # the lattice has 2^(straight coordinates) x (cuts + 1)^(curved ones) points: halve the
    # slices when many coordinates (or several curved ones) would make it large
    cuts = SUBDIVISIONS if n_curved <= 2 and D <= 6 else max(2, SUBDIVISIONS // 2)
    axes = [np.linspace(0.0, 1.0, cuts + 1) if curved[i] else np.array([0.0, 1.0])
            for i in range(D)]
    shape = tuple(a.size for a in axes)
    U = np.array(list(itertools.product(*axes)))
    C = cmap.coeffs(U)
    names = ([r.name for r in cmap.setup.models.ranges]
             + (["plant-gain factor"] if cmap.factors is not None else []))
    sliced = [names[i] for i in range(D) if curved[i]]
    if polytope:
        name = "zero exclusion (convex hull of the corner values of a polytope)"
    elif sliced:
        name = (f"zero exclusion (mapping theorem, {', '.join(sliced)} in {cuts} slices; "
                "approximate for curved coordinates)")
    else:
        name = "zero exclusion (mapping theorem)"
    approximate = bool(sliced) and not polytope
    # every lattice point must be stable (necessary), and the degree must not drop
    stable = hurwitz_batch(_balanced(C))
    if not np.all(stable):
        i = int(np.flatnonzero(~stable)[0])
        pt, f = cmap.point(U[i])
        return FamilyStability(name, False, pt, f, f"the loop is unstable at {pt.name}"
                               + (f", plant-gain factor {f:.4g}" if f else ""), approximate)
    # the value set on a grid around the polynomials' own frequency scale
    w0 = frequency_scale(*C)
    # the grid thins (never below half) when the lattice is large: bounded work per test
    n_z = int(max(_ZE_POINTS // 2, min(_ZE_POINTS, _ZE_BUDGET // max(1, U.shape[0]))))
    z = np.geomspace(10 ** -_ZE_DECADES, 10 ** _ZE_DECADES, n_z)
    from synth.numerics.scaling import scale_variable

    Cz = np.array([scale_variable(c, w0) for c in C])
    Cz /= np.max(np.abs(Cz), axis=1, keepdims=True)
    V = np.zeros((U.shape[0], z.size), complex)
    for j in range(Cz.shape[1]):
        V = V * (1j * z)[None, :] + Cz[:, j:j + 1]
    V = V.reshape(*shape, z.size)
    # each cell: the 2^D corners of one slice of the curved coordinates
    cells = itertools.product(*[range(a.size - 1) for a in axes])
    for cell in cells:
        index = tuple(slice(c, c + 2) for c in cell)
        block = V[index].reshape(-1, z.size)
        ok = _hull_excludes_zero(block)
        if not np.all(ok):
            k = int(np.flatnonzero(~ok)[0])
            w = float(z[k] * w0)
            return FamilyStability(name, False, detail=(
                f"0 is not excluded from the value set at {w:.4g} rad/s: the test cannot "
                "certify the ranges, though every model checked is stable"),
                approximate=approximate)
    return FamilyStability(name, True, approximate=approximate)
