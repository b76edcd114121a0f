"""Root-locus placement: compensators from the angle and magnitude conditions.

A closed-loop pole sits at a chosen point ``s_d`` exactly when the loop
``L(s) = K C_m(s) G(s)`` (``C_m`` the monic compensator) satisfies the angle
condition ``arg C_m(s_d) G(s_d) = 180 deg`` (``K > 0``) or ``0 deg``
(``K < 0``) and the magnitude condition ``K = -1 / (C_m(s_d) G(s_d))``
(:mod:`synth.locus.conditions`).

The strategy picks a few desired dominant pairs ``s_d`` from the requirement
region (the region's edge moved inward, :func:`target_points`), and asks
each structure family for its constructions at those targets
(``Family.placement_designs(kit)``).  The :class:`PlacementKit` carries what
the constructions share: the targets, the gain signs worth trying, the
static-gain need of a step-error limit, the points where the proportional
locus meets the target rays, and the classical sections (lead by the
bisector method, by a zero below the target or on a plant pole; the PD
section with its derivative filter).  Which construction makes which
structure lives with the family (``synth/families/<name>.py``).

The gain sign is the one that can make the closed loop's constant term
positive (Routh's necessary condition), unless the allowed gain range excludes it.
Lead sections read the deficiency modulo 360 deg (a wrapped -165 deg is
195 deg of lead, beyond one section).

Work.  One work unit is one construction (a compensator whose gain comes
from the magnitude condition); a family gets ``context.work`` of them, far
more than any family needs, so the limit only guards against runaway cases.

Every candidate's provenance records the target point, the deficiency and
the angle the compensator supplies there; the design pipeline verifies each
candidate (the dominant pair may be dominant or not: other closed-loop poles
are not placed).

References
----------
.. [1] W. R. Evans, "Control system synthesis by root locus method",
   Trans. AIEE 69, 1950 (angle and magnitude conditions).
.. [2] K. Ogata, *Modern Control Engineering*, 4th ed., Prentice Hall, 2002,
   sec. 6-6 to 6-8 (lead by the bisector method, lag for the static error
   constant, lag-lead).
.. [3] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control of
   Dynamic Systems*, 4th ed., Prentice Hall, 2002, sec. 5.4 (lead zero below
   the target, pole from the angle condition; lag ratio from the error
   constant).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from synth.locus.conditions import (
    MAX_SECTION_DEG,
    angle_deficiency,
    arg_deg,
    evaluate,
    lead_bisector,
    lead_from_zero,
    line_points,
    magnitude_gain,
    ray_points,
    wrap_deg,
)
from synth.numerics.poly import trim

__all__ = [
    "MAX_CANDIDATES",
    "MAX_SECTION_DEG",
    "ORIGIN",
    "STRATEGY",
    "Placement",
    "PlacementKit",
    "PlacementStrategy",
    "Target",
    "angle_deficiency",
    "gain_signs",
    "static_gain_need",
    "lead_bisector",
    "lead_from_zero",
    "magnitude_gain",
    "placements",
    "shortlist",
    "target_points",
]

ORIGIN = "placement"

#: Most placement candidates handed to the verifier per family.
MAX_CANDIDATES = 10
#: Fractions of the way from the required damping to 1 for the targets.
_DAMPING_STEPS = (0.15, 0.35, 0.55)
#: Target dampings when no damping is required (common practice: 0.6 to 0.8).
_DEFAULT_DAMPINGS = (0.6, 0.7, 0.8)
#: Multiples of the required decay rate for the targets.
_SPEED_STEPS = (1.2, 1.8)
#: Speed-up over the proportional loop for the extra target (common practice:
#: lead compensation buys about a factor 1.5 to 3 in speed).
_SPEEDUP = 1.5
#: How far below |s_d| a lag (or PI) zero goes: a decade, or a quarter.
LAG_FACTORS = (10.0, 4.0)
#: Derivative filter pole / target magnitude (common practice: about ten).
FILTER_FACTOR = 10.0
#: Static-gain headroom of the lag section over the bare requirement.
_SS_HEADROOM = 1.1


# ----------------------------------------------------------------------------
# values
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class Target:
    """A desired dominant closed-loop pole (upper half-plane member of the pair).

    Attributes
    ----------
    point : complex
        ``s_d`` (its conjugate is implied).
    damping, natural_frequency : float
        ``zeta_t`` and ``w_n`` with ``s_d = w_n (-zeta_t + j sqrt(1 - zeta_t^2))``.
    basis : str
        How the point was chosen (which requirement set the speed).
    """

    point: complex
    damping: float
    natural_frequency: float
    basis: str

    def to_json(self) -> list[float]:
        return [float(self.point.real), float(self.point.imag)]


@dataclass(frozen=True)
class Placement:
    """One compensator built by the angle and magnitude conditions.

    Attributes
    ----------
    structure : str
        Family name.
    num, den : ndarray
        ``K`` times the monic numerator, and the monic denominator.
    gain : float
        ``K``.
    target : complex
        The point the magnitude condition put on the locus (a closed-loop pole).
    construction : str
        Which classical construction placed the zero and pole.
    info : dict
        JSON-ready provenance (angles in degrees).
    """

    structure: str
    num: np.ndarray
    den: np.ndarray
    gain: float
    target: complex
    construction: str
    info: dict = field(default_factory=dict)


# ----------------------------------------------------------------------------
# targets
# ----------------------------------------------------------------------------


def _space(problem):
    from synth.families.base import SearchSpace

    return SearchSpace.for_problem(problem)


def target_points(problem) -> list[Target]:
    """Desired dominant poles: the requirement region's edge moved inward.

    Dampings ``zeta + f (1 - zeta)`` for ``f`` in 0.15, 0.35, 0.55 (0.6, 0.7
    and 0.8 when no damping is required); decay rates 1.2 and 1.8 times the
    required one (from the settling time, and from the rise time through
    ``w_n ~ 1.8 / t_r``).  With no speed requirement the natural frequency
    is the plant's characteristic frequency and twice that.  When the
    proportional locus crosses the damping ray, a target 1.5 times as fast
    as that crossing is added (if faster than the others): the point where a
    lead section earns its place.

    References
    ----------
    .. [1] K. Ogata, *Modern Control Engineering*, 4th ed., 2002, sec. 5-3
       (dominant poles, ``w_n t_r ~ 1.8``, settling time ``4 / (zeta w_n)``).
    """
    region = problem.region
    req = problem.requirements
    if region.zeta > 0.0:
        dampings = [min(0.95, region.zeta + f * (1.0 - region.zeta)) for f in _DAMPING_STEPS]
    else:
        dampings = list(_DEFAULT_DAMPINGS)
    out = []
    for zt in dampings:
        sig = region.sigma
        basis = "settling time" if sig > 0 else ""
        if req.limit("rise_time") is not None and zt * 1.8 / req.limit("rise_time") > sig:
            sig = zt * 1.8 / req.limit("rise_time")
            basis = "rise time"
        if sig > 0:
            wns = [k * sig / zt for k in _SPEED_STEPS]
        else:
            w = _space(problem).w_char
            wns = [w, 2.0 * w]
            basis = "plant characteristic frequency"
        bases = [basis] * len(wns)
        # faster than the proportional loop reaches at this damping: where lead pays
        w_p = _proportional_speed(problem, zt)
        if w_p is not None and _SPEEDUP * w_p > 1.05 * max(wns):
            wns.append(_SPEEDUP * w_p)
            bases.append(f"{_SPEEDUP:g} x the proportional loop's speed at this damping")
        for wn, why in zip(wns, bases, strict=True):
            pt = wn * complex(-zt, math.sqrt(1.0 - zt * zt))
            out.append(Target(pt, float(zt), float(wn), why))
    return out


def _proportional_speed(problem, zeta: float) -> float | None:
    """Largest natural frequency at which the proportional locus crosses the damping ray."""
    sign = gain_signs(problem)
    if not sign:
        return None
    pts = ray_points(problem.plant.num, problem.plant.den, zeta, 0.0,
                      lambda k: k * sign[0] > 0)
    return max(abs(s) for s, _ in pts) if pts else None


# ----------------------------------------------------------------------------
# steady state and gain signs
# ----------------------------------------------------------------------------


def _loop_type(den) -> int:
    d = trim(den)
    k = 0
    while k < d.size - 1 and d[d.size - 1 - k] == 0.0:
        k += 1
    return k


def static_gain_need(problem, num, den) -> tuple[float | None, str]:
    """Static loop gain ``Kp = L(0)`` the step-error limit asks for.

    Returns
    -------
    kp : float or None
        ``1.1 (1 / e - 1)`` for a type-0 loop with the limit ``e > 0``
        (``e = 1 / (1 + Kp)``, common practice); None when no gain is needed
        (no limit, or an integrator in the plant) or none can do (``e = 0``).
    why : str
        Why it is None ("" otherwise).
    """
    e = problem.requirements.limit("steady_state_error")
    if e is None:
        return None, "no steady-state error requirement"
    if _loop_type(den) >= 1:
        return None, "the plant has an integrator: zero steady-state step error"
    if e <= 0.0:
        return None, "zero steady-state error needs an integrator, not a lag section"
    # e = 1 / (1 + Kp) for a stable type-0 loop with Kp > 0
    return _SS_HEADROOM * (1.0 / e - 1.0), ""


def _dc(num, den) -> float:
    n, d = trim(num), trim(den)
    return float(n[-1] / d[-1]) if d[-1] != 0.0 else math.inf


def _limits(problem):
    gr = problem.requirements.limit("gain")
    lo, hi = (None, None) if gr is None else (float(gr[0]), float(gr[1]))
    from synth.families.base import SearchSpace

    return lo, hi, float(SearchSpace.for_problem(problem).w_max)


def _static_sign(num, den) -> int:
    """Gain sign that can make the constant term of ``den + K num`` positive.

    Routh's necessary condition asks for a positive constant term: with a
    positive leading coefficient of ``den`` that is ``den(0) + K n_0 > 0``
    (``n_0`` the lowest nonzero coefficient of ``num``), which large gains of
    the sign of ``n_0`` meet whatever the sign of ``den(0)``; for a stable
    type-0 plant it is the sign giving negative feedback at low frequency.
    """
    n, d = trim(num), trim(den)
    lo_n = n[np.flatnonzero(n)[-1]] if np.any(n) else 1.0
    return 1 if lo_n / d[0] > 0 else -1


def gain_signs(problem) -> tuple[int, ...]:
    """Gain signs to try: the one giving negative feedback at low frequency (common
    practice), the other only when the gain range excludes it."""
    want = _static_sign(problem.plant.num, problem.plant.den)
    gr = problem.requirements.limit("gain")
    if gr is None:
        return (want,)
    allowed = [sg for sg in (1, -1) if (gr[1] > 0 if sg > 0 else gr[0] < 0)]
    return (want,) if want in allowed else tuple(allowed)


# ----------------------------------------------------------------------------
# the kit the families' constructions use
# ----------------------------------------------------------------------------


def _poly_from(zeros, poles) -> tuple[np.ndarray, np.ndarray]:
    num = np.poly([-z for z in zeros]).real if zeros else np.ones(1)
    den = np.poly([-p for p in poles]).real if poles else np.ones(1)
    return num, den


@dataclass(frozen=True)
class PlacementKit:
    """What every family's root-locus constructions share, for one problem.

    Built once per family by :func:`placements`; the family's
    ``placement_designs(kit)`` reads the targets and gain signs, builds
    sections with :meth:`lead_sections` and :meth:`pd_section`, and turns
    each into a compensator with :meth:`place` (gain from the magnitude
    condition, checked against the gain range and ``max_frequency``).

    Attributes
    ----------
    problem : synth.problem.Problem
    num, den : ndarray
        Plant polynomials (engine form, the Pade form of a dead time included).
    targets : tuple of Target
    signs : tuple of int
        Gain signs worth trying (:func:`gain_signs`).
    gain_lo, gain_hi : float or None
        The allowed compensator gain range.
    w_max : float
        ``search.max_frequency``: no pole or zero beyond it.
    kp_need : float or None
        Static loop gain a step-error limit needs (:func:`static_gain_need`).
    kp_why : str
        Why ``kp_need`` is None.
    g0 : float
        Static plant gain (inf for a plant with an integrator).
    work : int
        Most constructions (:meth:`place` calls) allowed.
    notes : list of str
        Why targets or constructions were left out (filled as they run).
    lag_factors, filter_factor, max_section_deg
        The common-practice constants of the constructions.
    """

    problem: Any
    num: np.ndarray
    den: np.ndarray
    targets: tuple
    signs: tuple[int, ...]
    gain_lo: float | None
    gain_hi: float | None
    w_max: float
    kp_need: float | None
    kp_why: str
    g0: float
    work: int
    notes: list = field(default_factory=list)
    used: list = field(default_factory=lambda: [0])
    lag_factors: tuple[float, ...] = LAG_FACTORS
    filter_factor: float = FILTER_FACTOR
    max_section_deg: float = MAX_SECTION_DEG

    @classmethod
    def for_problem(cls, problem, work: int = 10**9) -> PlacementKit:
        num, den = problem.plant.num, problem.plant.den
        lo, hi, wmax = _limits(problem)
        kp, why = static_gain_need(problem, num, den)
        return cls(problem=problem, num=num, den=den, targets=tuple(target_points(problem)),
                   signs=gain_signs(problem), gain_lo=lo, gain_hi=hi, w_max=wmax,
                   kp_need=kp, kp_why=why, g0=_dc(num, den), work=int(work))

    # -- reading the problem -----------------------------------------------------------
    def target_signs(self):
        """Every (target, gain sign) pair, targets first."""
        return [(t, sg) for t in self.targets for sg in self.signs]

    def deficiency(self, s: complex, sign: int) -> float | None:
        """Angle deficiency of the plant at ``s`` (:func:`angle_deficiency`)."""
        return angle_deficiency(self.num, self.den, s, sign)

    def sign_ok(self, k: float) -> bool:
        """Whether a nonzero gain ``k`` lies in the gain range."""
        return (k != 0.0 and (self.gain_lo is None or k >= self.gain_lo)
                and (self.gain_hi is None or k <= self.gain_hi))

    def skip(self, message: str) -> None:
        """Record why a target or a construction was left out."""
        self.notes.append(message)

    @property
    def general_order(self) -> int:
        return int(self.problem.search.general_order)

    def stable_real_poles(self, s: complex) -> list[float]:
        """Magnitudes of stable real plant poles worth cancelling: the two slowest below 3 |s|."""
        d = trim(self.den)
        if d.size < 2:
            return []
        r = np.roots(d)
        real = r[(np.abs(r.imag) <= 1e-9 * np.abs(r)) & (r.real < 0)]
        mags = sorted(float(-v.real) for v in real if -v.real < 3.0 * abs(s))
        return mags[:2]

    def slow_stable_pair(self) -> list[complex] | None:
        """The two slowest stable plant poles (a complex pair or two real poles), or None."""
        d = trim(self.den)
        if d.size < 3:
            return None
        r = np.roots(d)
        r = r[(r.real < 0) & (np.abs(r) > 0)]
        if r.size < 2:
            return None
        r = r[np.argsort(np.abs(r), kind="stable")]
        first = r[0]
        if abs(first.imag) > 1e-9 * abs(first):
            return [complex(first), complex(first).conjugate()]
        reals = [v for v in r if abs(v.imag) <= 1e-9 * abs(v)]
        return [complex(reals[0]), complex(reals[1])] if len(reals) >= 2 else None

    # -- sections -------------------------------------------------------------------------
    def lead_sections(self, s: complex, phi: float, plant_poles=()) -> list[tuple[str, float, float]]:
        """Single lead sections ``(construction, z, p)`` supplying ``phi`` at ``s``.

        By the bisector method, with the zero directly below the target, and
        with the zero on each of ``plant_poles`` (magnitudes).  None when
        ``phi`` is not in ``(0, max_section_deg]``.
        """
        out = []
        if not 0.0 < phi <= self.max_section_deg:
            return out
        zp = lead_bisector(s, phi)
        if zp is not None:
            out.append(("bisector", *zp))
        z = -s.real
        p = lead_from_zero(s, z, phi)
        if p is not None and p > z:
            out.append(("zero below target", z, p))
        for a in plant_poles:
            p = lead_from_zero(s, a, phi)
            if p is not None and p > a * (1 + 1e-6):
                out.append(("zero on plant pole", a, p))
        return out

    def pd_section(self, s: complex, phi: float, ratio_range) -> tuple[float, float] | None:
        """Zero ``z`` and filter pole ``N`` supplying ``phi`` at ``s`` with ``N / z`` in ``ratio_range``.

        The filter pole starts about ``filter_factor |s|`` out (within
        ``w_max``); the zero angle is the deficiency plus the filter's lag,
        iterated until ``N`` stays inside the ratio range.
        """
        if phi <= 0.0:
            return None
        lo_r, hi_r = ratio_range
        N = min(self.filter_factor * abs(s), self.w_max)
        for _ in range(30):
            psi = phi + arg_deg(s + N)   # zero angle = deficiency + filter lag
            if not 0.0 < psi < 180.0:
                return None
            z = -s.real + s.imag / math.tan(math.radians(psi))
            if z <= 0.0:
                return None
            N_new = min(max(N, 1.001 * lo_r * z), 0.999 * hi_r * z, self.w_max)
            if abs(N_new - N) <= 1e-12 * N:
                break
            N = N_new
        else:
            return None
        if not (lo_r < N / z < hi_r):
            return None
        return z, N

    def gain_for(self, zeros, poles, s: complex) -> float | None:
        """Magnitude-condition gain of the monic section ``zeros / poles`` at ``s``."""
        cn, cd = _poly_from(zeros, poles)
        return magnitude_gain(cn, cd, self.num, self.den, s)

    # -- compensators ---------------------------------------------------------------------
    def lead_deficiencies(self) -> list:
        """``(target, sign, phi)`` for every target and gain sign where the deficiency exists.

        ``phi`` is read modulo 360 deg in [0, 360): sections that add phase add
        positive angle, so a wrapped deficiency of -165 deg is 195 deg of lead.
        """
        out = []
        for tgt, sign in self.target_signs():
            phi = self.deficiency(tgt.point, sign)
            if phi is not None:
                out.append((tgt, sign, phi % 360.0))
        return out

    def lag_ratio_for_static_gain(self, build, s: complex, rounds: int = 8):
        """Raise a lag section's zero/pole ratio ``beta`` until the static loop gain suffices.

        Parameters
        ----------
        build : callable
            ``build(beta) -> (zeros, poles, info)`` for the whole compensator
            with lag ratio ``beta`` (its lead part re-fitted to keep the
            target on the locus), or None when no section fits.
        s : complex
            The target point (the gain comes from the magnitude condition there).

        Returns
        -------
        (zeros, poles, info, beta, kp) or None
            ``kp = K C_m(0) G(0)`` the static loop gain, at least ``kp_need``;
            None when a construction fails, the gain is off the locus or of the
            wrong sign, or ``rounds`` raises do not reach it.

        Notes
        -----
        Each round multiplies ``beta`` by ``1.02 kp_need / kp``: the static
        gain grows about in proportion to ``beta`` while the lead re-fit keeps
        the pair at the target (Ogata 2002, sec. 6-8, lag-lead compensation).
        """
        beta = 1.0
        for _ in range(rounds):
            built = build(beta)
            if built is None:
                return None
            zeros, poles, info = built
            k = self.gain_for(zeros, poles, s)
            if k is None:
                return None
            kp = k * float(np.prod(zeros)) / float(np.prod(poles)) * self.g0
            if kp <= 0.0:
                return None
            if kp >= self.kp_need * (1.0 - 1e-9):
                return zeros, poles, info, beta, kp
            beta *= self.kp_need / kp * 1.02
        return None

    def place(self, structure: str, zeros, poles, tgt, construction: str, info: dict) -> list:
        """The compensator with the gain from the magnitude condition at ``tgt``, as a list.

        Empty (with a note) when the target is off the compensated locus, the
        gain leaves the gain range, a pole or zero exceeds ``max_frequency``,
        or the work allowance is spent; so ``out += kit.place(...)`` collects.
        """
        if self.used[0] >= self.work:
            self.skip("placement work allowance spent")
            return []
        self.used[0] += 1
        cn, cd = _poly_from(zeros, poles)
        k = magnitude_gain(cn, cd, self.num, self.den, tgt.point)
        if k is None or k == 0.0:
            self.skip("target not on the locus after construction")
            return []
        if (self.gain_lo is not None and k < self.gain_lo) or (self.gain_hi is not None
                                                               and k > self.gain_hi):
            self.skip(f"gain {k:.4g} from the magnitude condition is outside the gain range")
            return []
        if any(abs(v) > self.w_max for v in (*zeros, *poles)):
            self.skip("a pole or zero exceeds search.max_frequency")
            return []
        g = evaluate(self.num, self.den, tgt.point)
        supplied = wrap_deg(arg_deg(complex(np.polyval(cn, tgt.point) / np.polyval(cd, tgt.point))))
        prov = {
            "method": "root-locus angle and magnitude conditions",
            "construction": construction,
            "target": tgt.to_json(),
            "target_damping": tgt.damping,
            "target_natural_frequency": tgt.natural_frequency,
            "target_basis": tgt.basis,
            "plant_angle_deg": arg_deg(g),
            "angle_supplied_deg": supplied,
            "gain_from": "magnitude condition",
            "zeros": [[-float(np.real(z)), -float(np.imag(z))] for z in zeros],
            "poles": [[-float(np.real(p)), -float(np.imag(p))] for p in poles],
        }
        prov.update(info)
        return [Placement(structure, k * cn, cd, k, tgt.point, construction, prov)]

    def relocate(self, zeros, poles, tgt0, limit: float | None = 0.5):
        """Crossing of the compensated locus with ``tgt0``'s damping ray nearest the old point.

        Returns ``(s, K, Target)`` or None (none, or farther than ``limit |s_0|``
        from the old point: the section was not a small correction).
        """
        cn, cd = _poly_from(zeros, poles)
        n2, d2 = np.polymul(self.num, cn), np.polymul(self.den, cd)
        pts = ray_points(n2, d2, tgt0.damping, 0.0, self.sign_ok)
        if not pts:
            return None
        s1, k1 = min(pts, key=lambda sk: abs(sk[0] - tgt0.point))
        if limit is not None and abs(s1 - tgt0.point) > limit * abs(tgt0.point):
            return None
        return s1, k1, Target(s1, tgt0.damping, abs(s1), tgt0.basis + " (after the section)")

    def proportional_points(self, structure: str) -> list:
        """Points ``(s, K, Target)`` of the proportional locus on the target rays and decay lines."""
        region = self.problem.region
        dampings = sorted({t.damping for t in self.targets})
        points = []
        for zt in dampings:
            for s, k in ray_points(self.num, self.den, zt, region.sigma, self.sign_ok):
                points.append((s, k, Target(s, zt, abs(s), "proportional locus on the damping ray")))
        if region.sigma > 0:
            for f in _SPEED_STEPS:
                for s, k in line_points(self.num, self.den, f * region.sigma, self.sign_ok):
                    z = -s.real / abs(s)
                    if z >= region.zeta:
                        points.append((s, k, Target(s, z, abs(s),
                                                    "proportional locus on the decay line")))
        if not points:
            self.skip(f"{structure}: the proportional locus does not cross the target "
                      "damping rays or decay lines")
        return points


# ----------------------------------------------------------------------------
# entry points
# ----------------------------------------------------------------------------


def placements(problem, family, work: int = 10**9) -> tuple[list[Placement], list[str]]:
    """All placement designs of one structure family, and why others were skipped.

    Parameters
    ----------
    problem : synth.problem.Problem
    family : synth.families.Family or str
        The family, or a registered structure name.
    work : int, optional
        Most constructions.

    Returns
    -------
    designs : list of Placement
        Duplicates removed (same compensator to 1e-9 relative).
    skipped : list of str
        Plain-language reasons for targets or constructions left out (the
        family's own reason when it has no construction).
    """
    from synth.families import NotSupported, family_for

    if isinstance(family, str):
        family = family_for(family, problem)
    kit = PlacementKit.for_problem(problem, work)
    designs = family.placement_designs(kit)
    if isinstance(designs, NotSupported):
        return [], [designs.reason]
    unique: list[Placement] = []
    for d in designs:
        key = np.concatenate([d.num, d.den])
        if any(k.size == key.size and np.allclose(k, key, rtol=1e-9, atol=0)
               for k in (np.concatenate([u.num, u.den]) for u in unique)):
            continue
        unique.append(d)
    return unique, list(dict.fromkeys(kit.notes))


@dataclass(frozen=True)
class PlacementStrategy:
    """Root-locus placement (origin ``"placement"``): the families' constructions at the targets.

    ``propose`` returns the :func:`shortlist` of the family's placement
    designs as candidates; ``[]`` for a family without constructions.
    Deterministic: no randomness; work = constructions.
    """

    name: str = "placement"
    origin: str = ORIGIN
    share: float = 0.02
    order: int = 10

    def propose(self, problem, family, context) -> list:
        """Placement candidates for one family (see :class:`PlacementStrategy`).

        Returns
        -------
        list of synth.strategies.Candidate
            ``origin = "placement"``; each provenance holds the target point,
            the deficiency and the angle supplied there (degrees).
        """
        from synth.strategies.base import candidate_from_polys

        designs, _ = placements(problem, family, work=context.work)
        return [candidate_from_polys(family, d.num, d.den, self.origin, d.info)
                for d in shortlist(problem, designs)]


#: The registered strategy object (see :func:`synth.strategies.default_strategies`).
STRATEGY = PlacementStrategy()


def shortlist(problem, designs, limit: int = MAX_CANDIDATES) -> list[Placement]:
    """The designs worth a full verification, at most ``limit``.

    Screened with the eigenvalue-free kernel (:func:`synth.verify.screen_batch`):
    designs with every closed-loop pole in the region and stable over the
    plant-gain range come first, then stable ones, then the rest (with the
    designs whose gain alone exceeds the effort limit); inside a
    class the targets take turns (each target's first construction before
    any target's second), so the list covers the targets evenly.
    """
    from synth.verify.screening import screen_batch

    if not designs:
        return []
    k = max(d.num.size for d in designs)
    kd = max(d.den.size for d in designs)
    k = max(k, kd)
    nums = np.array([np.pad(d.num, (k - d.num.size, 0)) for d in designs])
    dens = np.array([np.pad(d.den, (k - d.den.size, 0)) for d in designs])
    scr = screen_batch(problem, nums, dens)
    klass = np.where(scr.in_region & scr.plant_range_ok, 0,
                     np.where(scr.stable & scr.plant_range_ok, 1, np.where(scr.stable, 2, 3)))
    u_max = problem.requirements.limit("peak_control_effort")
    if u_max is not None:
        # a biproper compensator's output jumps to K at the step: |K| bounds the peak
        klass = np.where(np.array([abs(d.gain) > u_max for d in designs]), 3, klass)
    turn: dict[complex, int] = {}
    order = []
    for i, d in enumerate(designs):
        key = complex(round(d.target.real, 9), round(d.target.imag, 9))
        turn[key] = turn.get(key, -1) + 1
        order.append((int(klass[i]), turn[key], i))
    order.sort()
    return [designs[i] for _, _, i in order[:limit]]
