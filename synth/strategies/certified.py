"""Convex synthesis strategy: certified region designs and constrained pole placement.

Once the compensator denominator ``d_C`` is fixed, the closed-loop
characteristic polynomial ``d_C den_G + n_C num_G`` is affine in the
numerator coefficients: ``c(x) = c0 + M x``.  This module

1. fixes the denominator part of a family (``Family.fixed_names``: the
   derivative filter pole of PD and PID, the pole of lead and lag, both
   poles of lead-lag, the whole denominator of the general family) at a few
   values -- multiples of the target speed, and the denominators that
   earlier strategies proposed for the family (``context.prior``);
2. writes the free numerator as a conic combination ``n_C = sum_i x_i b_i``,
   ``x >= 0``, of generators ``b_i`` chosen so that the box ``x >= 0`` is
   exactly (lead, lag, PD, PI) or contains (PID, lead-lag) the family's
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

References
----------
.. [1] D. Henrion, M. Sebek and V. Kucera, "Positive polynomials and robust
   stabilization with fixed-order controllers", IEEE Trans. Automatic
   Control 48(7), 2003, pp. 1178-1186.
.. [2] S. Boyd and L. Vandenberghe, *Convex Optimization*, Cambridge
   University Press, 2004, sec. 4.4 (bounded least squares as a QP).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, replace

import numpy as np

from synth.families.base import PD_RATIO_RANGE
from synth.numerics.poly import trim

__all__ = ["ORIGIN", "AffineLoop", "affine_loop", "fixed_parts", "planned_parts", "propose"]

ORIGIN = "convex"

#: Semidefinite programs per certified design (one for the region, the rest
#: for the depth bisection); each is small (two Gram matrices of size n + 1).
_ITERATIONS = 6
_BISECTION_STEPS = 4
#: Box samples the convex module screens to pick the first central polynomial.
_SAMPLES = 600
#: Fixed parts tried per family (multiples of the target speed) besides the
#: denominators of earlier strategies' candidates.
_PD_FILTER = (5.0, 12.0)
_LEAD_POLE = (3.0, 8.0)
_LAG_POLE = (0.02, 0.1)
#: lead-lag: (lead pole, lag pole, lag zero) / w, a lag ratio of 10 (common practice)
_LEADLAG_POLES = ((5.0, 0.03, 0.3),)
_GENERAL_ROOTS = (5.0, 0.0)  # (s + 5 w)^n, and an integrator s (s + 5 w)^(n - 1)
_PRIORS = 2
#: Above this many unknowns the convex module's dominant-pair sweep switches to
#: a slow bounded least-squares method; the strategy then supplies the first
#: central polynomial itself.
_MAX_PAIR_COLUMNS = 8
#: Rough seconds per certified design plus pole placement, to respect the deadline.
_COST_GUESS = 0.35


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


def _generators(name: str, fixed, form, sign: float, k_ref: float, w: float,
                gmax: float | None):
    """Conic generators (rows, in the form's coefficient basis) and the upper bounds of x.

    Each generator is scaled by ``k_ref w^j`` (``j`` the power of ``s`` it
    drops below the numerator's degree) so that useful values of ``x`` are of
    order one in every problem; only the gain range bounds ``x`` above.
    """
    k = form.den.size
    powers = np.arange(k, dtype=float)            # descending: s^(k-1) ... s^0
    if name in ("lead", "lag", "PD"):
        p = fixed[0]
        if name == "lead":            # u s + v (s + p): zero in [0, p]
            gen = np.array([[1.0, 0.0], [1.0, p]])
        elif name == "lag":           # u (s + p) + v: zero in [p, inf)
            gen = np.array([[1.0, p], [0.0, w]])
        else:                         # u (s + p/51) + v (s + p/3): ratio in the PD range
            gen = np.array([[1.0, p / PD_RATIO_RANGE[1]], [1.0, p / PD_RATIO_RANGE[0]]])
        leads = gen[:, 0]
    elif name == "lead-lag":
        # (s + z_lag) (u s + v (s + p_lead)): the lag section (zero z_lag, pole
        # p_lag) fixed, the lead zero in [0, p_lead], both zeros real
        p1, z2 = fixed[0], fixed[2]
        gen = np.array([np.polymul([1.0, z2], [1.0, 0.0]), np.polymul([1.0, z2], [1.0, p1])])
        leads = gen[:, 0]
    elif name == "general":           # free signs: the caller sets lo = -inf
        gen = np.diag(w ** powers)
        leads = np.concatenate([[1.0], np.zeros(k - 1)])
    else:
        # P, PI, PID, lead-lag: nonnegative coefficients, necessary for zeros in
        # the left half-plane; the family's exact shape is checked after the solve
        gen = np.diag(w ** powers)
        leads = np.concatenate([[1.0], np.zeros(k - 1)])
    gen = sign * k_ref * gen
    hi = np.full(gen.shape[0], np.inf)
    if gmax is not None:
        hi = np.where(leads > 0, gmax / k_ref, np.inf)
    lo = np.zeros(gen.shape[0])
    if name == "general":
        lo = np.where(leads > 0, 0.0, -np.inf)
    return gen @ form.basis, lo, hi


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
    """The loop of ``family`` with its denominator part fixed, as ``c0 + M x``, ``x >= 0``.

    Parameters
    ----------
    problem : synth.requirements.Problem
    family : synth.families.Family
    fixed : sequence of float
        Values of ``family.fixed_names`` (see :meth:`Family.affine_form`).
    sign : {1, -1}
        Sign of the compensator gain.

    Returns
    -------
    AffineLoop
    """
    form = family.affine_form(tuple(fixed)[: len(family.fixed_names)])
    gr = problem.requirements.limit("gain")
    gmax = None
    if gr is not None:
        gmax = float(gr[1]) if sign > 0 else -float(gr[0])
        if gmax <= 0:
            raise ValueError("the gain range excludes this sign")
    w = _reference_speed(problem)
    g = abs(complex(np.polyval(problem.plant.num, 1j * w) / np.polyval(problem.plant.den, 1j * w)))
    k_ref = 1.0 / g if np.isfinite(g) and g > 0 else 1.0
    gen, lo, hi = _generators(family.name, tuple(fixed), form, float(sign), k_ref, w, gmax)
    floor = _static_floor(problem, gen, form.den)
    if floor is not None:
        i, x_min = floor
        lo = lo.copy()
        lo[i] = max(lo[i], x_min)
        if lo[i] > hi[i]:
            raise ValueError("the gain range cannot meet the steady-state error limit")
    num_g, den_g = problem.plant.num, problem.plant.den
    cols = [np.polymul(g, num_g) for g in gen]
    base = np.polymul(form.den, den_g)
    if np.any(form.num0):
        base = np.polyadd(base, np.polymul(form.num0, num_g))
    n = max(base.size, *(c.size for c in cols))
    c0 = _pad_to(base, n)
    M = np.stack([_pad_to(c, n) for c in cols], axis=1)
    return AffineLoop(family.name, tuple(float(v) for v in fixed), form.den.copy(), gen,
                      c0, M, lo, np.asarray(hi, dtype=float))


def _reference_speed(problem) -> float:
    """Natural frequency of the middle placement target (the requirement region moved inward)."""
    from synth.strategies.placement import target_points

    wns = sorted(t.natural_frequency for t in target_points(problem))
    return float(wns[len(wns) // 2]) if wns else 1.0


def fixed_parts(problem, family, prior=()) -> list[tuple[float, ...]]:
    """Fixed denominator parts to try: from earlier candidates first, then a sweep.

    Parameters
    ----------
    problem : synth.requirements.Problem
    family : synth.families.Family
    prior : sequence of Candidate
        Earlier candidates of this family; their denominators come first.

    Returns
    -------
    list of tuple of float
        Values of ``family.fixed_names``, inside the family's frequency band.
    """
    w = _reference_speed(problem)
    space = family.space
    name = family.name
    out: list[tuple[float, ...]] = []
    for c in list(prior)[:_PRIORS]:
        f = _fixed_from_den(family, np.asarray(c.den, dtype=float), np.asarray(c.num, dtype=float))
        if f is not None:
            out.append(f)
    if name in ("PD", "PID"):
        out += [(a * w,) for a in _PD_FILTER]
    elif name == "lead":
        out += [(a * w,) for a in _LEAD_POLE]
    elif name == "lag":
        out += [(a * w,) for a in _LAG_POLE]
    elif name == "lead-lag":
        # the closed loop keeps a slow pole near the lag zero: keep it inside the
        # region's decay rate so that a certificate can exist
        sig = problem.region.sigma
        for a, b, c in _LEADLAG_POLES:
            z = max(c * w, 1.5 * sig)
            out.append((a * w, z * b / c, z))
    elif name == "general":
        n = family.order
        for a in _GENERAL_ROOTS:
            roots = [-5.0 * w] * n if a else [0.0] + [-5.0 * w] * (n - 1)
            out.append(tuple(float(v) for v in np.poly(roots).real[1:]))
    elif name in ("P", "PI"):
        out += [()]
    clipped = []
    for f in out:
        if name != "general":
            f = tuple(min(max(v, space.w_min), space.w_max) for v in f)
        if not any(np.allclose(f, g, rtol=1e-6, atol=0) for g in clipped):
            clipped.append(f)
    return clipped


def _fixed_from_den(family, den, num=None) -> tuple[float, ...] | None:
    """Recover the fixed part from a candidate of the family (lead-lag: its lag zero too)."""
    d = trim(den)
    d = d / d[0]
    name = family.name
    if name in ("PD", "lead", "lag") and d.size == 2:
        return (float(d[1]),)
    if name == "PID" and d.size == 3:
        return (float(d[1]),)
    if name == "lead-lag" and d.size == 3 and num is not None and trim(num).size == 3:
        r, q = np.roots(d), np.roots(trim(num))
        if (np.any(np.abs(r.imag) > 1e-9 * np.abs(r)) or np.any(r.real >= 0)
                or np.any(np.abs(q.imag) > 1e-9 * np.abs(q)) or np.any(q.real >= 0)):
            return None
        poles, zeros = np.sort(-r.real), np.sort(-q.real)
        if not zeros[0] > poles[0]:
            return None
        # (lead pole, lag pole, lag zero): the smaller zero belongs to the lag
        return (float(poles[1]), float(poles[0]), float(zeros[0]))
    if name == "general" and d.size == family.order + 1:
        return tuple(float(v) for v in d[1:])
    return None


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


def _solve_one(problem, family, loop: AffineLoop, seed: int, w: float):
    """Pole placement and certified region design on one parametrisation."""
    from synth.numerics.screening import in_region_batch
    from synth.numerics.sos import certified_region_design, place_poles_ls, target_polynomial

    region = problem.region
    out = []
    labels = (*family.fixed_names, "lag_zero")
    names = dict(zip(labels, loop.fixed, strict=False))
    base = {"fixed": names, "region": {"sigma": float(region.sigma), "zeta": float(region.zeta)}}
    n = loop.c0.size - 1
    target = target_polynomial(region, n, natural_frequency=w)
    x_ls = place_poles_ls(loop.c0, loop.M, target, loop.lo, loop.hi)
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
    for reg, _why in _regions(region):
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
                                         iterations=_ITERATIONS, natural_frequency=w,
                                         samples=_SAMPLES, seed=seed,
                                         bisection_steps=_BISECTION_STEPS)
        relaxed = _why
        if design.certified:
            break
    if design.x is not None and (design.certified or relaxed is None):
        prov = {**base, "method": "certified region design (positive-polynomial certificate)",
                "certified": bool(design.certified) and relaxed is None,
                "status": design.status,
                "certificate_region": {"sigma": float(reg.sigma), "zeta": float(reg.zeta)},
                "depth": float(design.depth), "margin": float(design.margin),
                "iterations": int(design.iterations),
                "central_polynomial": _jsonable(design.certificates[0].central)
                if design.certificates else _jsonable(design.central[-1]),
                "certificates": [_certificate_json(c) for c in design.certificates]}
        if relaxed is not None:
            prov["relaxed"] = relaxed
        out.insert(0, (design.x, loop.numerator(design.x), prov))
    return out


def planned_parts(problem) -> int:
    """How many fixed parts one family gets, from the file's time budget (deterministic).

    About 40 % of the family's share of ``search.time_budget`` at roughly
    ``_COST_GUESS`` seconds per fixed part, between 1 and 3; the rest is left
    to the global search.
    """
    from synth.families import families_for

    share = float(problem.search.time_budget) / max(1, len(families_for(problem)))
    return int(min(3, max(1, math.floor(0.4 * share / _COST_GUESS))))


def propose(problem, family, context) -> list:
    """Convex candidates for one family (certified region designs first).

    Parameters
    ----------
    problem : synth.requirements.Problem
    family : synth.families.Family
    context : synth.strategies.SearchContext
        ``seed`` seeds the convex module's sampling; ``deadline`` caps the
        sweep of fixed parts (a sweep cut short says ``time_capped``).

    Returns
    -------
    list of synth.strategies.Candidate
        ``origin = "convex"``; ``provenance["certified"]`` tells whether the
        certificate for the requirement region holds; ``certificate_region``
        is the region the certificates were written for (weaker, with a
        ``relaxed`` note, when the requirement region admits none).
    """
    from synth.strategies import candidate_from_polys
    from synth.strategies.placement import gain_signs

    signs = gain_signs(problem)
    if not signs:
        return []
    sign = signs[0]
    w = _reference_speed(problem)
    seed = int(getattr(context, "seed", 0) or 0)
    deadline = getattr(context, "deadline", None)
    prior = getattr(context, "prior", ()) or ()
    out = []
    capped = False
    parts = fixed_parts(problem, family, prior)[: planned_parts(problem)]
    for i, fixed in enumerate(parts):
        if deadline is not None and time.monotonic() + _COST_GUESS > deadline:
            capped = True
            break
        try:
            loop = affine_loop(problem, family, fixed, sign)
        except (ValueError, ArithmeticError):
            continue
        if not np.all(np.isfinite(loop.M)) or not np.all(np.isfinite(loop.c0)):
            continue
        try:
            solved = _solve_one(problem, family, loop, seed + i, w)
        except (KeyboardInterrupt, SystemExit):
            raise
        except BaseException:  # noqa: B036 - a solver panic (pyo3) is not an Exception
            # a numerical failure inside a solver costs this fixed part only
            continue
        for x, num, prov in solved:
            if not np.any(np.abs(x) > 1e-6):
                continue  # (numerically) no controller at all
            num = trim(num)
            if num.size == 0 or not np.all(np.isfinite(num)) or num[0] == 0.0:
                continue
            cand = candidate_from_polys(family, num, loop.den, ORIGIN, prov)
            if not cand.params:
                continue  # the solution left the family's shape (e.g. complex lead-lag zeros)
            if any(np.allclose(cand.num, c.num, rtol=1e-8, atol=0) and cand.den == c.den
                   for c in out if len(c.num) == len(cand.num)):
                continue
            out.append(cand)
    if capped and out:
        out[-1] = replace(out[-1], provenance={**out[-1].provenance, "time_capped": True})
    return out
