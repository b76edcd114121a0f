"""Root-locus placement: compensators from the angle and magnitude conditions.

A closed-loop pole sits at a chosen point ``s_d`` exactly when the loop
``L(s) = K C_m(s) G(s)`` (``C_m`` the monic compensator) satisfies

* the angle condition ``arg C_m(s_d) G(s_d) = 180 deg`` (``K > 0``) or
  ``0 deg`` (``K < 0``), and
* the magnitude condition ``K = -1 / (C_m(s_d) G(s_d))``.

The strategy picks a few desired dominant pairs ``s_d`` from the requirement
region (the region's edge moved inward), measures the plant's angle
deficiency ``phi`` there (the angle the compensator must add) and builds:

``lead``
    by three classical constructions: the bisector method (the zero and pole
    lines lie at ``+-phi/2`` about the bisector of the angle between the
    horizontal through ``s_d`` and the line from ``s_d`` to the origin); the
    zero directly below the target (it supplies 90 deg, the pole takes back
    ``90 - phi``); and the zero on a stable real plant pole, the pole from
    the deficiency.  One section supplies at most ``MAX_SECTION_DEG``.
``PD``
    derivative filter pole far out (about ten times ``|s_d|``, inside the
    family's filter range), the zero from the deficiency plus the filter's lag.
``PID``
    the PI zero a decade (or a quarter) below ``|s_d|``, then the PD zero
    from the deficiency plus the PI section's lag and the filter's lag; or
    the two zeros on the slowest stable plant poles, the filter pole at
    twice the target decay rate and the gain where the locus meets the
    target damping ray.
``lag`` and ``lead-lag``
    a lag section for a steady-state error requirement: zero a decade (or a
    quarter) below ``|s_d|``, zero/pole ratio the needed increase of the
    static loop gain; its small angle is added to the lead's deficiency, so
    the dominant pair stays exactly at the target.  Lag alone serves a loop
    whose target already lies on the proportional locus; when the plant has
    too much phase at the target (negative deficiency) a lag by the
    bisector construction supplies it.
``P`` and ``PI``
    the gains where the proportional locus crosses the target damping rays
    and decay line; PI puts its zero a decade (or a quarter) below that
    point, or on a slow stable plant pole, or where the angle condition at a
    target puts it (the integrator-zero pair supplies the negative deficiency).
``general``
    ``order`` equal lead sections each supplying ``phi / order`` by the
    bisector method (for a deficiency too large for one lead), the last one
    replaced by a lag section when a steady-state error needs it.

The gain sign is the one that can make the closed loop's constant term
positive (Routh's necessary condition), unless the allowed gain range excludes it.
Lead sections read the deficiency modulo 360 deg (a wrapped -165 deg is
195 deg of lead, beyond one section).

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

import cmath
import math
from dataclasses import dataclass, field

import numpy as np

from synth.families.base import PD_RATIO_RANGE
from synth.locus.core import line_crossing_gains
from synth.numerics.poly import trim

__all__ = [
    "MAX_CANDIDATES",
    "MAX_SECTION_DEG",
    "ORIGIN",
    "Placement",
    "Target",
    "angle_deficiency",
    "gain_signs",
    "static_gain_need",
    "lead_bisector",
    "lead_from_zero",
    "magnitude_gain",
    "placements",
    "propose",
    "shortlist",
    "target_points",
]

ORIGIN = "placement"

#: Most placement candidates handed to the verifier per family.
MAX_CANDIDATES = 10
#: Largest phase one lead (or lag) section is asked to supply (common
#: practice: about 60 to 70 deg; beyond that the pole/zero ratio explodes).
MAX_SECTION_DEG = 65.0
#: Fractions of the way from the required damping to 1 for the targets.
_DAMPING_STEPS = (0.15, 0.35, 0.55)
#: Target dampings when no damping is required (common practice: 0.6 to 0.8).
_DEFAULT_DAMPINGS = (0.6, 0.7, 0.8)
#: Multiples of the required decay rate for the targets.
_SPEED_STEPS = (1.2, 1.8)
#: Speed-up over the proportional loop for the extra target (common practice:
#: lead compensation buys about a factor 1.5 to 3 in speed).
_SPEEDUP = 1.5
#: How far below |s_d| the lag (or PI) zero goes: a decade, or a quarter.
_LAG_FACTORS = (10.0, 4.0)
#: Derivative filter pole / target magnitude (common practice: about ten).
_FILTER_FACTOR = 10.0
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
# conditions
# ----------------------------------------------------------------------------


def _wrap_deg(a: float) -> float:
    """Angle in degrees wrapped to (-180, 180]."""
    a = math.fmod(a, 360.0)
    if a <= -180.0:
        a += 360.0
    elif a > 180.0:
        a -= 360.0
    return a


def _arg_deg(z: complex) -> float:
    return math.degrees(cmath.phase(z))


def _evaluate(num, den, s: complex) -> complex | None:
    n = complex(np.polyval(num, s))
    d = complex(np.polyval(den, s))
    if abs(d) <= 1e-14 * max(1.0, abs(n)) or abs(n) == 0.0:
        return None
    return n / d


def angle_deficiency(num, den, s: complex, sign: int = 1) -> float | None:
    """Angle (deg) a compensator must add at ``s`` for ``s`` to be on the locus.

    Parameters
    ----------
    num, den : array_like
        Loop (plant) polynomials, descending powers.
    s : complex
        The desired closed-loop pole.
    sign : {1, -1}
        Sign of the compensator gain: the angle condition asks for 180 deg
        (``K > 0``) or 0 deg (``K < 0``).

    Returns
    -------
    float or None
        ``wrap(180 - arg G(s))`` (or ``wrap(-arg G(s))``) in (-180, 180];
        positive means phase lead is needed.  None at a plant pole or zero.

    References
    ----------
    .. [1] K. Ogata, *Modern Control Engineering*, 4th ed., 2002, sec. 6-8
       (angle deficiency of the lead design).
    """
    g = _evaluate(trim(num), trim(den), complex(s))
    if g is None:
        return None
    want = 180.0 if sign > 0 else 0.0
    return _wrap_deg(want - _arg_deg(g))


def magnitude_gain(num_c, den_c, num, den, s: complex) -> float | None:
    """The real gain ``K = -1 / (C_m(s) G(s))`` of the magnitude condition.

    Returns None when ``s`` is not on the locus of ``C_m G`` (the value has a
    relative imaginary part above 1e-6) or at a pole or zero of the loop.
    """
    c = _evaluate(trim(num_c), trim(den_c), complex(s))
    g = _evaluate(trim(num), trim(den), complex(s))
    if c is None or g is None:
        return None
    k = -1.0 / (c * g)
    if abs(k.imag) > 1e-6 * abs(k):
        return None
    return float(k.real)


def _real_axis_hit(s: complex, direction_deg: float) -> float | None:
    """Magnitude ``a > 0`` of the real point ``-a`` reached from ``s`` along a direction.

    ``direction_deg`` is the angle, from the positive real axis, of the ray
    from ``s`` (upper half-plane) down to the real axis; it must lie in
    (-180, 0).
    """
    if not -180.0 < direction_deg < 0.0:
        return None
    x = s.real + s.imag / math.tan(math.radians(-direction_deg))
    return -x if x < 0.0 else None


def lead_bisector(s: complex, phi_deg: float) -> tuple[float, float] | None:
    """Zero and pole magnitudes ``(z, p)`` of a section ``(s + z)/(s + p)`` by the bisector method.

    Parameters
    ----------
    s : complex
        Target point in the upper half-plane.
    phi_deg : float
        Angle the section must supply at ``s``: positive for a lead (``z < p``),
        negative for a lag (``z > p``).

    Returns
    -------
    (z, p) or None
        None when the lines miss the negative real axis.

    Notes
    -----
    With ``theta = arg s``, the bisector of the angle between the horizontal
    line from ``s`` to the left and the line from ``s`` to the origin points
    at ``theta/2 - 180 deg``; the zero line lies at ``+phi/2`` and the pole
    line at ``-phi/2`` from it.  The construction gives the largest ratio
    ``z/p`` for the angle, i.e. the least high-frequency gain.

    References
    ----------
    .. [1] K. Ogata, *Modern Control Engineering*, 4th ed., Prentice Hall,
       2002, sec. 6-8 (lead compensation by the bisector method).
    """
    theta = _arg_deg(s)
    base = 0.5 * theta - 180.0
    z = _real_axis_hit(s, base + 0.5 * phi_deg)
    p = _real_axis_hit(s, base - 0.5 * phi_deg)
    if z is None or p is None:
        return None
    return z, p


def lead_from_zero(s: complex, zero: float, phi_deg: float) -> float | None:
    """Pole magnitude ``p`` so that ``(s + zero)/(s + p)`` supplies ``phi_deg`` at ``s``.

    Returns None when no pole on the negative real axis does it.

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control
       of Dynamic Systems*, 4th ed., 2002, sec. 5.4 (zero placed first, pole
       from the angle condition).
    """
    psi_z = _arg_deg(s + zero)              # angle of the zero's vector at s
    psi_p = psi_z - phi_deg                 # the pole's vector must make this angle
    if not 0.0 < psi_p < 180.0:
        return None
    # the vector from -p to s has angle psi_p: s + p = |.| e^{j psi_p}
    p = -s.real + s.imag / math.tan(math.radians(psi_p))
    return p if p > 0.0 else None


def _section_angle(s: complex, z: float, p: float) -> float:
    """Angle (deg) of ``(s + z)/(s + p)`` at ``s`` (``p = 0`` allowed)."""
    return _wrap_deg(_arg_deg(s + z) - _arg_deg(s + p))


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
    pts = _ray_points(problem.plant.num, problem.plant.den, zeta, 0.0,
                      lambda k: k * sign[0] > 0)
    return max(abs(s) for s, _ in pts) if pts else None


# ----------------------------------------------------------------------------
# steady state
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


# ----------------------------------------------------------------------------
# building blocks
# ----------------------------------------------------------------------------


def _poly_from(zeros, poles) -> tuple[np.ndarray, np.ndarray]:
    num = np.poly([-z for z in zeros]).real if zeros else np.ones(1)
    den = np.poly([-p for p in poles]).real if poles else np.ones(1)
    return num, den


def _finish(structure, zeros, poles, num, den, tgt: Target, construction, info, limits):
    """Gain by the magnitude condition; None if off the locus or out of bounds."""
    cn, cd = _poly_from(zeros, poles)
    k = magnitude_gain(cn, cd, num, den, tgt.point)
    if k is None or k == 0.0:
        return None, "target not on the locus after construction"
    lo, hi, wmax = limits
    if (lo is not None and k < lo) or (hi is not None and k > hi):
        return None, f"gain {k:.4g} from the magnitude condition is outside the gain range"
    if any(abs(v) > wmax for v in (*zeros, *poles)):
        return None, "a pole or zero exceeds search.max_frequency"
    g = _evaluate(trim(num), trim(den), tgt.point)
    supplied = _wrap_deg(_arg_deg(complex(np.polyval(cn, tgt.point) / np.polyval(cd, tgt.point))))
    prov = {
        "method": "root-locus angle and magnitude conditions",
        "construction": construction,
        "target": tgt.to_json(),
        "target_damping": tgt.damping,
        "target_natural_frequency": tgt.natural_frequency,
        "target_basis": tgt.basis,
        "plant_angle_deg": _arg_deg(g),
        "angle_supplied_deg": supplied,
        "gain_from": "magnitude condition",
        "zeros": [[-float(np.real(z)), -float(np.imag(z))] for z in zeros],
        "poles": [[-float(np.real(p)), -float(np.imag(p))] for p in poles],
    }
    prov.update(info)
    return Placement(structure, k * cn, cd, k, tgt.point, construction, prov), ""


def _lead_sections(s: complex, phi: float, plant_poles) -> list[tuple[str, float, float]]:
    """Candidate single lead sections ``(construction, z, p)`` supplying ``phi`` at ``s``."""
    out = []
    if not 0.0 < phi <= MAX_SECTION_DEG:
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


def _stable_real_poles(den, s) -> list[float]:
    """Magnitudes of stable real plant poles worth cancelling: the two slowest below 3 |s|."""
    d = trim(den)
    if d.size < 2:
        return []
    r = np.roots(d)
    real = r[(np.abs(r.imag) <= 1e-9 * np.maximum(1.0, np.abs(r))) & (r.real < 0)]
    mags = sorted(float(-v.real) for v in real if -v.real < 3.0 * abs(s))
    return mags[:2]


def _pd_section(s: complex, phi: float, wmax: float) -> tuple[float, float] | None:
    """PD zero ``z`` and filter pole ``N`` supplying ``phi`` at ``s``, ``N/z`` in the family range."""
    if phi <= 0.0:
        return None
    N = min(_FILTER_FACTOR * abs(s), wmax)
    for _ in range(30):
        psi = phi + _arg_deg(s + N)   # zero angle = deficiency + filter lag
        if not 0.0 < psi < 180.0:
            return None
        z = -s.real + s.imag / math.tan(math.radians(psi))
        if z <= 0.0:
            return None
        N_new = min(max(N, 1.001 * PD_RATIO_RANGE[0] * z), 0.999 * PD_RATIO_RANGE[1] * z, wmax)
        if abs(N_new - N) <= 1e-12 * N:
            break
        N = N_new
    else:
        return None
    if not (PD_RATIO_RANGE[0] < N / z < PD_RATIO_RANGE[1]):
        return None
    return z, N


# ----------------------------------------------------------------------------
# per family
# ----------------------------------------------------------------------------


def _limits(problem):
    gr = problem.requirements.limit("gain")
    lo, hi = (None, None) if gr is None else (float(gr[0]), float(gr[1]))
    return lo, hi, float(problem.search.max_frequency)


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


def _lead_like(problem, num, den, structure, skipped) -> list[Placement]:
    """lead, PD, PID, lead-lag and general: dominant pair at each target."""
    limits = _limits(problem)
    wmax = limits[2]
    kp_need, why = static_gain_need(problem, num, den)
    g0 = _dc(num, den)
    order = _space(problem).order
    out = []
    for tgt in target_points(problem):
        s = tgt.point
        for sign in gain_signs(problem):
            phi = angle_deficiency(num, den, s, sign)
            if phi is None:
                continue
            # lead sections add positive angle: a deficiency of -165 deg is 195 deg of lead
            phi = phi % 360.0
            base = {"deficiency_deg": phi, "gain_sign": sign}
            if structure == "lead":
                if phi > MAX_SECTION_DEG:
                    skipped.append(f"deficiency {phi:.1f} deg at {s:.3g} is too large for one "
                                   "lead section (see the general family: split over sections)")
                for name, z, p in _lead_sections(s, phi, _stable_real_poles(den, s)):
                    pl, msg = _finish("lead", [z], [p], num, den, tgt, name,
                                      {**base, "lead_angle_deg": phi}, limits)
                    _keep(out, skipped, pl, msg)
            elif structure == "PD":
                zN = _pd_section(s, phi, wmax)
                if zN is None:
                    continue
                z, N = zN
                pl, msg = _finish("PD", [z], [N], num, den, tgt,
                                  "filter pole far out, zero from the deficiency",
                                  {**base, "filter_pole": N}, limits)
                _keep(out, skipped, pl, msg)
            elif structure == "PID":
                for f in _LAG_FACTORS:
                    zi = abs(s) / f
                    pi_angle = _section_angle(s, zi, 0.0)   # negative: the PI section lags
                    zN = _pd_section(s, phi - pi_angle, wmax)
                    if zN is None:
                        continue
                    z, N = zN
                    pl, msg = _finish("PID", [zi, z], [0.0, N], num, den, tgt,
                                      f"PI zero |s_d|/{f:g}, PD zero from the deficiency",
                                      {**base, "pi_zero": zi, "pi_angle_deg": pi_angle,
                                       "filter_pole": N}, limits)
                    _keep(out, skipped, pl, msg)
                pl = _pid_cancelling(num, den, tgt, limits)
                if pl is not None:
                    out.append(pl)
            elif structure == "lead-lag":
                if kp_need is None:
                    skipped.append(f"lead-lag: no lag section needed ({why})")
                    continue
                for f in _LAG_FACTORS:
                    for pl in _lead_lag(s, phi, f, kp_need, g0, num, den, tgt, base, limits,
                                        skipped):
                        out.append(pl)
            elif structure == "general":
                out.extend(_multi_lead(s, phi, order, kp_need, g0, num, den, tgt, base,
                                       limits, skipped))
    return out


def _keep(out, skipped, pl, msg):
    if pl is not None:
        out.append(pl)
    elif msg:
        skipped.append(msg)


def _lead_lag(s, phi, factor, kp_need, g0, num, den, tgt, base, limits, skipped):
    """Lead sections by each construction plus a lag for the static gain, angle compensated."""
    out = []
    if not math.isfinite(g0) or g0 == 0.0:
        return out
    zl = abs(s) / factor
    # the lead constructions, each iterated on the lag ratio
    names = [c[0] for c in _lead_sections(s, min(phi, MAX_SECTION_DEG), [])] or ["bisector"]
    for name in names:
        beta = 1.0
        pl = None
        for _ in range(8):
            pl_ = zl / beta
            lag_angle = _section_angle(s, zl, pl_)
            need = phi - lag_angle
            secs = [c for c in _lead_sections(s, need, []) if c[0] == name]
            if not secs:
                skipped.append(f"lead-lag: lead deficiency {need:.1f} deg at {s:.3g} is out of "
                               "range for one section")
                break
            _, z, p = secs[0]
            cn, cd = _poly_from([z, zl], [p, pl_])
            k = magnitude_gain(cn, cd, num, den, s)
            if k is None:
                break
            kp = k * (z / p) * beta * g0
            if kp <= 0.0:
                break
            if kp >= kp_need * (1.0 - 1e-9):
                info = {**base, "lead_angle_deg": need, "lag_angle_deg": lag_angle,
                        "lag_zero_factor": factor, "static_gain_increase": beta,
                        "static_loop_gain": kp}
                pl, msg = _finish("lead-lag", [z, zl], [p, pl_], num, den, tgt,
                                  f"{name} lead + lag zero |s_d|/{factor:g}", info, limits)
                _keep(out, skipped, pl, msg)
                break
            beta *= kp_need / kp * 1.02
    return out


def _multi_lead(s, phi, order, kp_need, g0, num, den, tgt, base, limits, skipped):
    """``order`` equal bisector sections (general family); lag for the last when needed."""
    out = []
    if phi <= 0.0:
        return out
    n_lead = order
    variants = [("equal lead sections", n_lead, None)]
    if kp_need is not None and order >= 2 and math.isfinite(g0) and g0 != 0.0:
        variants.append(("equal lead sections + lag", order - 1, abs(s) / _LAG_FACTORS[0]))
    for name, n, zl in variants:
        beta = 1.0
        for _ in range(8):
            lag_angle = 0.0 if zl is None else _section_angle(s, zl, zl / beta)
            each = (phi - lag_angle) / n
            zp = lead_bisector(s, each) if 0.0 < each <= MAX_SECTION_DEG else None
            if zp is None:
                skipped.append(f"general: {n} sections cannot supply {phi - lag_angle:.1f} deg")
                break
            z, p = zp
            zeros, poles = [z] * n, [p] * n
            if zl is not None:
                zeros.append(zl)
                poles.append(zl / beta)
            info = {**base, "sections": n, "section_angle_deg": each}
            if zl is None:
                pl, msg = _finish("general", zeros, poles, num, den, tgt, name, info, limits)
                _keep(out, skipped, pl, msg)
                break
            cn, cd = _poly_from(zeros, poles)
            k = magnitude_gain(cn, cd, num, den, s)
            if k is None:
                break
            kp = k * (z / p) ** n * beta * g0
            if kp <= 0.0:
                break
            if kp >= kp_need * (1.0 - 1e-9):
                info.update(lag_angle_deg=lag_angle, static_gain_increase=beta,
                            static_loop_gain=kp)
                pl, msg = _finish("general", zeros, poles, num, den, tgt, name, info, limits)
                _keep(out, skipped, pl, msg)
                break
            beta *= kp_need / kp * 1.02
    return out


def _ray_points(num, den, zeta: float, sigma_floor: float, sign_ok) -> list[tuple[complex, float]]:
    """Points ``(s, K)`` where the locus of ``num/den`` crosses the damping ray ``zeta``."""
    direction = cmath.exp(1j * (math.pi - math.acos(zeta)))
    ks, ts = line_crossing_gains(num, den, 0j, direction)
    out = []
    for k, t in zip(ks, ts, strict=True):
        s = complex(t * direction)
        if t > 0 and -s.real >= sigma_floor and sign_ok(k):
            out.append((s, float(k)))
    return out


def _line_points(num, den, sigma: float, sign_ok) -> list[tuple[complex, float]]:
    """Points ``(s, K)`` where the locus crosses the decay line ``Re s = -sigma`` (Im s > 0)."""
    ks, ts = line_crossing_gains(num, den, complex(-sigma, 0.0), 1j)
    return [(complex(-sigma, t), float(k)) for k, t in zip(ks, ts, strict=True)
            if t > 1e-12 and sign_ok(k)]


def _proportional_like(problem, num, den, structure, skipped) -> list[Placement]:
    """P, PI and lag: points of the proportional locus, then a lag or PI section."""
    lo, hi, wmax = _limits(problem)
    region = problem.region

    def sign_ok(k):
        return k != 0.0 and (lo is None or k >= lo) and (hi is None or k <= hi)

    dampings = sorted({t.damping for t in target_points(problem)})
    points = []
    for zt in dampings:
        for s, k in _ray_points(num, den, zt, region.sigma, sign_ok):
            wn = abs(s)
            points.append((s, k, Target(s, zt, wn, "proportional locus on the damping ray")))
    if region.sigma > 0:
        for f in _SPEED_STEPS:
            for s, k in _line_points(num, den, f * region.sigma, sign_ok):
                z = -s.real / abs(s)
                if z >= region.zeta:
                    points.append((s, k, Target(s, z, abs(s),
                                                "proportional locus on the decay line")))
    if not points:
        skipped.append(f"{structure}: the proportional locus does not cross the target "
                       "damping rays or decay lines")
    out = []
    if structure == "P":
        seen = []
        for _s, k, tgt in points:
            if any(abs(k - k0) <= 1e-6 * abs(k0) for k0 in seen):
                continue
            seen.append(k)
            pl, msg = _finish("P", [], [], num, den, tgt, "gain on the proportional locus",
                              {"deficiency_deg": 0.0, "gain_sign": int(np.sign(k))},
                              (lo, hi, wmax))
            _keep(out, skipped, pl, msg)
        return out
    if structure == "PI":
        out.extend(_pi_by_angle(problem, num, den, (lo, hi, wmax), skipped))
        targets = target_points(problem)
        s_max = max(abs(t.point) for t in targets)
        for a in _stable_real_poles(den, s_max):
            # zero on a slow stable real plant pole (common practice for PI),
            # the gain where the locus meets each target damping ray
            for tgt0 in {t.damping: t for t in targets}.values():
                res = _relocate(num, den, [a], [0.0], tgt0, sign_ok, limit=None)
                if res is None:
                    continue
                p_, msg = _finish("PI", [a], [0.0], num, den, res[2],
                                  "PI zero on a plant pole, gain on the damping ray",
                                  {"deficiency_deg": 0.0, "cancelled_pole": -a},
                                  (lo, hi, wmax))
                _keep(out, skipped, p_, msg)
        for s0, k0, tgt0 in points:
            for f in _LAG_FACTORS:
                zi = abs(s0) / f
                pl = _relocate(num, den, [zi], [0.0], tgt0, sign_ok)
                if pl is None:
                    continue
                s1, _k1, tgt = pl
                info = {"deficiency_deg": 0.0, "pi_zero_factor": f,
                        "proportional_point": [s0.real, s0.imag], "proportional_gain": k0}
                p_, msg = _finish("PI", [zi], [0.0], num, den, tgt,
                                  f"PI zero |s|/{f:g} below the proportional-locus point",
                                  info, (lo, hi, wmax))
                _keep(out, skipped, p_, msg)
        return out
    # lag: alone for the static gain, or by the bisector for a negative deficiency
    kp_need, why = static_gain_need(problem, num, den)
    g0 = _dc(num, den)
    if kp_need is not None and math.isfinite(g0) and g0 != 0.0:
        for s0, k0, tgt0 in points:
            if k0 * g0 >= kp_need:
                continue  # proportional gain alone meets the error limit
            for f in _LAG_FACTORS:
                zl = abs(s0) / f
                beta, tgt, k1 = 1.0, tgt0, k0
                for _ in range(10):
                    beta *= kp_need / (k1 * g0) * 1.02
                    res = _relocate(num, den, [zl], [zl / beta], tgt0, sign_ok)
                    if res is None:
                        break
                    _s1, k1, tgt = res
                    if k1 * g0 * beta >= kp_need * (1 - 1e-9):
                        info = {"deficiency_deg": 0.0, "lag_zero_factor": f,
                                "static_gain_increase": beta, "static_loop_gain": k1 * g0 * beta,
                                "proportional_point": [s0.real, s0.imag],
                                "proportional_gain": k0}
                        p_, msg = _finish("lag", [zl], [zl / beta], num, den, tgt,
                                          f"lag zero |s|/{f:g}, ratio from the static gain",
                                          info, (lo, hi, wmax))
                        _keep(out, skipped, p_, msg)
                        break
                    if k1 * g0 <= 0:
                        break
    elif kp_need is None and why:
        skipped.append(f"lag for the static gain: {why}")
    # negative deficiency at a target: the lag supplies the (negative) angle
    for tgt in target_points(problem):
        for sign in gain_signs(problem):
            phi = angle_deficiency(num, den, tgt.point, sign)
            if phi is None or not -MAX_SECTION_DEG <= phi < 0.0:
                continue
            zp = lead_bisector(tgt.point, phi)
            if zp is None:
                continue
            z, p = zp
            if kp_need is not None and math.isfinite(g0):
                k = magnitude_gain([1.0, z], [1.0, p], num, den, tgt.point)
                if k is None or k * (z / p) * g0 < kp_need:
                    continue  # this lag lowers the static gain below the error limit
            pl, msg = _finish("lag", [z], [p], num, den, tgt, "bisector (negative deficiency)",
                              {"deficiency_deg": phi, "gain_sign": sign}, (lo, hi, wmax))
            _keep(out, skipped, pl, msg)
    return out


def _slow_stable_pair(den) -> list[complex] | None:
    """The two slowest stable plant poles (a complex pair or two real poles), or None."""
    d = trim(den)
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


def _pid_cancelling(num, den, tgt: Target, limits) -> Placement | None:
    """PID whose zeros sit on the two slowest stable plant poles.

    What is left is about ``K g / (s (s + N))``, whose locus meets the
    target's damping ray where ``2 zeta w_n = N``: the filter pole is set to
    twice the target decay rate and the gain found on the locus of the whole
    loop (common practice: cancel the slow plant dynamics, let the integrator
    and the filter pole set the speed).  The cancelled modes remain in the
    closed loop (the verifier checks their decay).
    """
    pair = _slow_stable_pair(den)
    lo, hi, wmax = limits
    if pair is None:
        return None
    N = 2.0 * -tgt.point.real
    if N > wmax:
        return None

    def sign_ok(k):
        return k != 0.0 and (lo is None or k >= lo) and (hi is None or k <= hi)

    zeros = [-v for v in pair]
    res = _relocate(num, den, zeros, [0.0, N], tgt, sign_ok, limit=None)
    if res is None:
        return None
    pl, _ = _finish("PID", zeros, [0.0, N], num, den, res[2],
                    "PID zeros on the slowest plant poles, filter pole from the decay",
                    {"deficiency_deg": 0.0, "filter_pole": N,
                     "cancelled_poles": [[v.real, v.imag] for v in pair]}, limits)
    return pl


def _pi_by_angle(problem, num, den, limits, skipped) -> list[Placement]:
    """PI ``K (s + z)/s`` with the zero from the (negative) deficiency at each target.

    The pair integrator-zero supplies ``arg(s_d + z) - arg(s_d)`` in
    ``(-arg s_d, 0)``, so the zero follows from the angle condition as in
    :func:`lead_from_zero` with the pole fixed at the origin.
    """
    out = []
    for tgt in target_points(problem):
        s = tgt.point
        for sign in gain_signs(problem):
            phi = angle_deficiency(num, den, s, sign)
            if phi is None or not -_arg_deg(s) < phi < 0.0:
                continue
            psi = _arg_deg(s) + phi      # the zero's vector must make this angle
            z = -s.real + s.imag / math.tan(math.radians(psi))
            if z <= 0.0:
                continue
            pl, msg = _finish("PI", [z], [0.0], num, den, tgt, "PI zero from the deficiency",
                              {"deficiency_deg": phi, "gain_sign": sign}, limits)
            _keep(out, skipped, pl, msg)
    return out


def _relocate(num, den, zeros, poles, tgt0: Target, sign_ok, limit: float | None = 0.5):
    """Crossing of the compensated locus with ``tgt0``'s damping ray nearest the old point."""
    cn, cd = _poly_from(zeros, poles)
    n2, d2 = np.polymul(num, cn), np.polymul(den, cd)
    pts = _ray_points(n2, d2, tgt0.damping, 0.0, sign_ok)
    if not pts:
        return None
    s1, k1 = min(pts, key=lambda sk: abs(sk[0] - tgt0.point))
    if limit is not None and abs(s1 - tgt0.point) > limit * abs(tgt0.point):
        return None  # the section moved the pair too far: not a small correction
    return s1, k1, Target(s1, tgt0.damping, abs(s1), tgt0.basis + " (after the section)")


# ----------------------------------------------------------------------------
# entry points
# ----------------------------------------------------------------------------

_LEAD_LIKE = ("lead", "PD", "PID", "lead-lag", "general")
_PROP_LIKE = ("P", "PI", "lag")


def placements(problem, structure: str) -> tuple[list[Placement], list[str]]:
    """All placement designs of one structure, and why others were skipped.

    Parameters
    ----------
    problem : synth.requirements.Problem
    structure : str
        Family name (``P``, ``PI``, ``PD``, ``PID``, ``lead``, ``lag``,
        ``lead-lag``, ``general``).

    Returns
    -------
    designs : list of Placement
        Duplicates removed (same compensator to 1e-9 relative).
    skipped : list of str
        Plain-language reasons for targets or constructions left out.
    """
    num, den = problem.plant.num, problem.plant.den
    skipped: list[str] = []
    if structure in _LEAD_LIKE:
        designs = _lead_like(problem, num, den, structure, skipped)
    elif structure in _PROP_LIKE:
        designs = _proportional_like(problem, num, den, structure, skipped)
    else:
        return [], [f"no placement construction for {structure}"]
    unique: list[Placement] = []
    for d in designs:
        key = np.concatenate([d.num, d.den])
        if any(k.size == key.size and np.allclose(k, key, rtol=1e-9, atol=0)
               for k in (np.concatenate([u.num, u.den]) for u in unique)):
            continue
        unique.append(d)
    return unique, list(dict.fromkeys(skipped))


def propose(problem, family, context) -> list:
    """Placement candidates for one family (``[]`` for families without a construction).

    Parameters
    ----------
    problem : synth.requirements.Problem
    family : synth.families.Family
    context : synth.strategies.SearchContext
        Only the deadline is used: the construction is deterministic.

    Returns
    -------
    list of synth.strategies.Candidate
        ``origin = "placement"``; each provenance holds the target point, the
        deficiency and the angle supplied there (degrees).
    """
    from synth.strategies import candidate_from_polys

    if context is not None and context.time_left() <= 0:
        return []
    if family.name == "general" and family.order < 1:
        return []
    designs, _ = placements(problem, family.name)
    out = []
    for d in shortlist(problem, designs):
        out.append(candidate_from_polys(family, d.num, d.den, ORIGIN, d.info))
    return out


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
