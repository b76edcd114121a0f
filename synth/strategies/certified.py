"""Convex synthesis strategy: certified region designs and constrained pole placement.

Once the compensator denominator ``d_C`` is fixed, the closed-loop
characteristic polynomial ``d_C den_G + n_C num_G`` is affine in the
numerator coefficients: ``c(x) = c0 + M x``.  This module

1. fixes the denominator part of a family (``Family.fixed_names``: the
   derivative filter pole of PD and PID, the pole of lead and lag, both
   poles and the lag zero of lead-lag, the whole denominator of the general
   family) at the values the family proposes (``Family.convex_fixed_parts``:
   multiples of the target speed) and at those of the candidates earlier
   strategies proposed for the family (``Family.fixed_part_of`` of
   ``context.prior``);
2. writes the free numerator as the family's conic combination
   ``n_C = sum_i x_i b_i``, ``x >= 0`` (``Family.conic_form``), whose box
   is exactly (lead, lag, PD, PI) or contains (PID, lead-lag) the family's
   shape: e.g. a lead ``K (s + z)/(s + p)``, ``0 < z < p``, is
   ``u s + v (s + p)`` with ``u, v >= 0``;
3. calls :func:`synth.numerics.sos.certified_region_design` (the
   Henrion-Sebek-Kucera positive-polynomial certificate that every
   closed-loop pole lies in the requirement region, maximising its depth
   inside the region) and :func:`synth.numerics.sos.place_poles_ls` (a
   bounded least-squares match to a target polynomial), and
4. maps each solution back to the family with ``Family.from_polys``;
   solutions outside the family's shape are dropped.

Each candidate's provenance says whether the region certificate holds
(``certified``), with the central polynomials, the certificate kinds and
the region each certificate was written for, so anyone can re-check it.
The pipeline verifies every candidate again.

A structure the circle strategy designs exactly (PI, PID: ``Family.circle_form``)
gets no convex design when the requirements set no s-plane region: the
certificate would only prove stability, which those designs have with their
robustness margins.

Work.  Each conic solve (the least-squares QP and every semidefinite
program) counts :data:`synth.strategies.CONIC_SOLVE_UNITS` work units, and
each solve runs under the solver's iteration cap
(:data:`synth.numerics.sos.SOLVER_MAX_ITER`), never a time limit; fixed parts
are tried in order until ``context.work`` is spent.  Only the solver's own
errors are absorbed (inside :func:`synth.numerics.sos`); a fixed part whose
box cannot meet the step-error limit within the gain range is skipped, and
when every part is, the strategy declines (:class:`synth.errors.StrategyDeclined`).

References
----------
.. [1] D. Henrion, M. Sebek and V. Kucera, "Positive polynomials and robust
   stabilization with fixed-order controllers", IEEE Trans. Automatic
   Control 48(7), 2003, pp. 1178-1186.
.. [2] S. Boyd and L. Vandenberghe, *Convex Optimization*, Cambridge
   University Press, 2004, sec. 4.4 (bounded least squares as a QP).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from synth.errors import StrategyDeclined
from synth.numerics.poly import trim

__all__ = ["ORIGIN", "STRATEGY", "AffineLoop", "ConvexStrategy", "affine_loop", "fixed_parts"]

ORIGIN = "convex"

#: Semidefinite programs per certified design (one for the region, the rest
#: for the depth bisection); each is small (two Gram matrices of size n + 1).
_ITERATIONS = 6
_BISECTION_STEPS = 4
#: Box samples the convex module screens to pick the first central polynomial.
_SAMPLES = 600
#: Earlier candidates whose fixed parts are tried first, and most fixed parts in all.
_PRIORS = 2
_MAX_PARTS = 3
#: Above this many unknowns the convex module's dominant-pair sweep switches to
#: a slow bounded least-squares method; the strategy then supplies the first
#: central polynomial itself.
_MAX_PAIR_COLUMNS = 8
#: Solver coordinates below this are no controller at all (x is in units of the
#: reference gain 1 / |G(j w)|, so the test is relative to the problem's scale).
_NEGLIGIBLE_X = 1e-6


@dataclass(frozen=True)
class AffineLoop:
    """One fixed-denominator parametrisation ``c(x) = c0 + M x`` of a family's loop.

    Attributes
    ----------
    structure : str
        Family name.
    fixed : tuple of float
        Values of ``family.fixed_names``.
    den : ndarray
        The fixed monic compensator denominator.
    generators : ndarray, shape (m, k)
        Numerator ``n_C(x) = x @ generators`` (coefficients, descending powers).
    c0 : ndarray, shape (n + 1,)
        Closed-loop polynomial at ``x = 0``.
    M : ndarray, shape (n + 1, m)
        Column ``i`` is ``generators[i] * num_G`` (padded).
    lo, hi : ndarray, shape (m,)
        Box on ``x`` (``x >= 0`` except the general family's lower coefficients).
    """

    structure: str
    fixed: tuple[float, ...]
    den: np.ndarray
    generators: np.ndarray
    c0: np.ndarray
    M: np.ndarray
    lo: np.ndarray
    hi: np.ndarray

    def numerator(self, x) -> np.ndarray:
        return np.asarray(x, dtype=float) @ self.generators


def _pad_to(p: np.ndarray, n: int) -> np.ndarray:
    return np.concatenate([np.zeros(n - p.size), p])


def _static_floor(problem, gen, den_c) -> tuple[int, float] | None:
    """Lower bound on one ``x_i`` that meets the step-error limit, when it is a box bound.

    The static loop gain is ``n_C(0) G(0) / d_C(0)`` with ``n_C(0) = sum_i x_i
    gen[i, -1]``; when exactly one generator has a constant term, the limit
    ``Kp >= Kp_req`` (:func:`synth.strategies.placement.static_gain_need`) is a
    lower bound on that ``x_i``.
    """
    from synth.strategies.placement import static_gain_need

    num_g, den_g = problem.plant.num, problem.plant.den
    kp, _ = static_gain_need(problem, num_g, den_g)
    if kp is None or den_c[-1] == 0.0 or den_g[-1] == 0.0:
        return None
    g0 = num_g[-1] / den_g[-1]
    const = gen[:, -1]
    idx = np.flatnonzero(const != 0.0)
    if idx.size != 1 or g0 == 0.0:
        return None
    i = int(idx[0])
    per_unit = const[i] * g0 / den_c[-1]   # static loop gain per unit of x_i
    if per_unit <= 0.0:
        return None
    return i, kp / per_unit


def affine_loop(problem, family, fixed, sign: int = 1) -> AffineLoop:
    """The loop of ``family`` with its denominator part fixed, as ``c0 + M x`` on a box.

    Parameters
    ----------
    problem : synth.problem.Problem
    family : synth.families.Family
    fixed : sequence of float
        Values of ``family.fixed_names`` (see :meth:`Family.conic_form`).
    sign : {1, -1}
        Sign of the compensator gain.

    Returns
    -------
    AffineLoop

    Raises
    ------
    StrategyDeclined
        When the family has no fixed-denominator form, or the box cannot meet
        the step-error limit within the gain range.
    ValueError
        For a sign the gain range excludes (a programming error: callers pick
        the sign with :func:`synth.strategies.placement.gain_signs`).
    """
    from synth.families import NotSupported

    w = _reference_speed(problem)
    form = family.conic_form(tuple(fixed), w)
    if isinstance(form, NotSupported):
        raise StrategyDeclined(form.reason)
    gr = problem.requirements.limit("gain")
    gmax = None
    if gr is not None:
        gmax = float(gr[1]) if sign > 0 else -float(gr[0])
        if gmax <= 0:
            raise ValueError("the gain range excludes this sign")
    g = abs(complex(np.polyval(problem.plant.num, 1j * w) / np.polyval(problem.plant.den, 1j * w)))
    # generators scaled so that useful x are of order one whatever the plant's gain
    k_ref = 1.0 / g if np.isfinite(g) and g > 0 else 1.0
    gen = float(sign) * k_ref * form.generators
    hi = np.full(gen.shape[0], np.inf)
    if gmax is not None:
        hi = np.where(form.carries_gain, gmax / k_ref, np.inf)
    lo = form.lower.copy()
    floor = _static_floor(problem, gen, form.den)
    if floor is not None:
        i, x_min = floor
        lo[i] = max(lo[i], x_min)
        if lo[i] > hi[i]:
            fixed_text = ", ".join(f"{k} {v:.4g}" for k, v in
                                   zip(form.fixed_names, form.fixed, strict=True))
            raise StrategyDeclined(f"{family.name} ({fixed_text or 'no fixed part'}): the gain "
                                   "range cannot meet the steady-state error limit")
    num_g, den_g = problem.plant.num, problem.plant.den
    cols = [np.polymul(g, num_g) for g in gen]
    base = np.polymul(form.den, den_g)
    n = max(base.size, *(c.size for c in cols))
    c0 = _pad_to(base, n)
    M = np.stack([_pad_to(c, n) for c in cols], axis=1)
    return AffineLoop(family.name, form.fixed, form.den.copy(), gen, c0, M, lo,
                      np.asarray(hi, dtype=float))


def _reference_speed(problem) -> float:
    """Natural frequency of the middle placement target (the requirement region moved inward)."""
    from synth.strategies.placement import target_points

    wns = sorted(t.natural_frequency for t in target_points(problem))
    return float(wns[len(wns) // 2]) if wns else 1.0


def fixed_parts(problem, family, prior=()) -> list[tuple[float, ...]]:
    """Fixed denominator parts to try: from earlier candidates first, then the family's.

    Parameters
    ----------
    problem : synth.problem.Problem
    family : synth.families.Family
    prior : sequence of Candidate
        Earlier candidates of this family; their fixed parts come first.

    Returns
    -------
    list of tuple of float
        Values of ``family.fixed_names``, duplicates (to 1e-6 relative) removed;
        empty when the family has no fixed-denominator form.
    """
    from synth.families import NotSupported

    sweep = family.convex_fixed_parts(_reference_speed(problem), problem.region)
    if isinstance(sweep, NotSupported):
        return []
    out: list[tuple[float, ...]] = []
    for c in list(prior)[:_PRIORS]:
        f = family.fixed_part_of(np.asarray(c.num, dtype=float), np.asarray(c.den, dtype=float))
        if f is not None:
            out.append(tuple(f))
    out.extend(tuple(f) for f in sweep)
    unique: list[tuple[float, ...]] = []
    for f in out:
        if not any(len(f) == len(g) and np.allclose(f, g, rtol=1e-6, atol=0) for g in unique):
            unique.append(f)
    return unique


def _jsonable(a) -> list[float]:
    return [float(v) for v in np.asarray(a, dtype=float).ravel()]


def _certificate_json(cert) -> dict:
    return {"kind": cert.kind, "sigma": float(cert.sigma), "zeta": float(cert.zeta),
            "central_polynomial": _jsonable(cert.central), "eps": float(cert.eps),
            "polynomial": _jsonable(cert.poly)}


def _regions(region):
    """The requirement region, then weaker ones to certify when it admits no certificate.

    A plant mode the structure cannot move (a lightly damped resonance, a
    slow cancelled pole) can keep every compensator outside the region even
    when the simulated response meets the limits; then the decay rate alone,
    and failing that plain stability, is certified and the provenance says
    so (``certified`` stays false: it refers to the requirement region).
    """
    from synth.problem.region import Region

    yield region, None
    if region.zeta > 0.0 and region.sigma > 0.0:
        yield Region(region.sigma, 0.0), "damping dropped: decay rate certified only"
    if not region.is_stability_only:
        yield Region(0.0, 0.0), "region dropped: stability certified only"


def _solve_one(problem, family, loop: AffineLoop, seed: int, w: float, solves: int):
    """Pole placement and certified region design on one parametrisation.

    Returns ``(solutions, solves_used)``; at most ``solves`` conic solves.
    """
    from synth.numerics.screening import in_region_batch
    from synth.numerics.sos import certified_region_design, place_poles_ls, target_polynomial

    region = problem.region
    out = []
    names = dict(zip(family.fixed_names, loop.fixed, strict=False))
    base = {"fixed": names, "region": {"sigma": float(region.sigma), "zeta": float(region.zeta)}}
    n = loop.c0.size - 1
    target = target_polynomial(region, n, natural_frequency=w)
    x_ls = place_poles_ls(loop.c0, loop.M, target, loop.lo, loop.hi)
    used = 1
    c_ls = None
    if x_ls is not None:
        c_ls = loop.c0 + loop.M @ x_ls
        if bool(in_region_batch(c_ls, region)):
            prov = {**base, "method": "constrained pole placement (bounded least squares)",
                    "certified": False, "target_polynomial": _jsonable(target)}
            out.append((x_ls, loop.numerator(x_ls), prov))
        else:
            c_ls = None  # poles outside the region: not worth verifying
    big = loop.M.shape[1] + n - 1 > _MAX_PAIR_COLUMNS
    design = cert_region = relaxed = None
    for reg, why in _regions(region):
        if used >= solves:
            break
        central = None
        if big:
            # large loops: start from the least-squares fit (or the target)
            # rather than the convex module's own sweep of dominant-pair fits
            if c_ls is not None and c_ls[0] > 0 and bool(in_region_batch(c_ls, reg)):
                central = c_ls / c_ls[0]
            else:
                central = target_polynomial(reg, n, natural_frequency=w)
        design = certified_region_design(loop.c0, loop.M, reg, loop.lo, loop.hi,
                                         central=central,
                                         iterations=min(_ITERATIONS, solves - used),
                                         natural_frequency=w, samples=_SAMPLES, seed=seed,
                                         bisection_steps=_BISECTION_STEPS)
        used += design.iterations
        cert_region, relaxed = reg, why
        if design.certified:
            break
    if design is not None and design.x is not None and (design.certified or relaxed is None):
        prov = {**base, "method": "certified region design (positive-polynomial certificate)",
                "certified": bool(design.certified) and relaxed is None,
                "status": design.status,
                "certificate_region": {"sigma": float(cert_region.sigma),
                                       "zeta": float(cert_region.zeta)},
                "depth": float(design.depth), "margin": float(design.margin),
                "iterations": int(design.iterations),
                "central_polynomial": _jsonable(design.certificates[0].central)
                if design.certificates else _jsonable(design.central[-1]),
                "certificates": [_certificate_json(c) for c in design.certificates]}
        if relaxed is not None:
            prov["relaxed"] = relaxed
        out.insert(0, (design.x, loop.numerator(design.x), prov))
    return out, used


@dataclass(frozen=True)
class ConvexStrategy:
    """Convex synthesis (origin ``"convex"``): certified region designs and pole placement.

    See the module docstring.  ``propose`` returns ``[]`` for a family
    without a fixed-denominator form; the seed only seeds the convex
    module's sampling of starting points.
    """

    name: str = "convex"
    origin: str = ORIGIN
    share: float = 0.3
    order: int = 20

    def propose(self, problem, family, context) -> list:
        """Convex candidates for one family (certified region designs first).

        Returns
        -------
        list of synth.strategies.Candidate
            ``origin = "convex"``; ``provenance["certified"]`` tells whether the
            certificate for the requirement region holds; ``certificate_region``
            is the region the certificates were written for (weaker, with a
            ``relaxed`` note, when the requirement region admits none).

        Raises
        ------
        StrategyDeclined
            When no fixed part can meet the step-error limit within the gain range.
        """
        from synth.families import NotSupported
        from synth.strategies.base import CONIC_SOLVE_UNITS, candidate_from_polys
        from synth.strategies.placement import gain_signs

        if problem.region.is_stability_only and \
                not isinstance(family.circle_form(), NotSupported):
            # nothing to certify beyond stability, which the circle strategy's designs of
            # this structure have by construction (and with their margins)
            return []
        signs = gain_signs(problem)
        parts = fixed_parts(problem, family, context.prior)[:_MAX_PARTS]
        if not signs or not parts:
            return []
        sign = signs[0]
        w = _reference_speed(problem)
        solves = int(context.work) // CONIC_SOLVE_UNITS
        out = []
        declined = []
        for i, fixed in enumerate(parts):
            if solves < 2:   # a least-squares fit and one certificate at least
                break
            try:
                loop = affine_loop(problem, family, fixed, sign)
            except StrategyDeclined as err:
                declined.append(str(err))
                continue
            if not np.all(np.isfinite(loop.M)) or not np.all(np.isfinite(loop.c0)):
                continue
            solved, used = _solve_one(problem, family, loop, int(context.seed) + i, w, solves)
            solves -= used
            for x, num, prov in solved:
                if not np.any(np.abs(x) > _NEGLIGIBLE_X):
                    continue  # (numerically) no controller at all
                num = trim(num)
                if num.size == 0 or not np.all(np.isfinite(num)) or num[0] == 0.0:
                    continue
                cand = candidate_from_polys(family, num, loop.den, self.origin, prov)
                if not cand.params:
                    continue  # the solution left the family's shape (e.g. complex lead-lag zeros)
                if any(np.allclose(cand.num, c.num, rtol=1e-8, atol=0) and cand.den == c.den
                       for c in out if len(c.num) == len(cand.num)):
                    continue
                out.append(cand)
        if not out and declined and len(declined) == len(parts):
            raise StrategyDeclined("; ".join(dict.fromkeys(declined)))
        return out


#: The registered strategy object (see :func:`synth.strategies.default_strategies`).
STRATEGY = ConvexStrategy()
