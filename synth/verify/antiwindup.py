"""The anti-windup law: how a compensator is implemented when its actuator saturates.

One law covers every scheme synth uses.  With the compensator
``C(s) = S(s) / R(s)`` (``R`` monic of degree ``n``), the reference path
``T(s) / R(s)`` (``T = S`` without set-point weights) and an *observer
polynomial* ``A_o(s)`` (monic, degree ``n``), the controller computes the
unlimited output ``v`` from the (prefiltered) reference ``r``, the
measurement ``y`` and the actuator output ``u`` actually applied::

    A_o(s) v = T(s) r - S(s) y + (A_o(s) - R(s)) u,      u = lim(v)

where ``lim`` is the actuator's saturation and rate limit.  While ``u = v``
the law is ``R v = T r - S y``: the linear compensator, unchanged.  While the
actuator is limited, the controller's states are driven through the stable
``A_o`` by the bounded ``u`` and cannot wind up.  ``A_o - R`` has degree below
``n``, so ``v`` never depends on ``u`` at the same instant.

Schemes (the design JSON's ``anti_windup.scheme``):

``"back-calculation"``
    PI and PID (``R = s`` or ``s (s + N)``), parameter ``tracking_time``
    ``Tt``: ``A_o`` is ``R`` with the integrator's root 0 moved to
    ``-1/Tt``.  In the parallel form ``v = Kp (b r - y) + I + D`` this is
    exactly Astrom and Hagglund's back-calculation
    ``dI/dt = Ki (r - y) + (u - v) / Tt`` (the derivative state ``D`` is
    untouched); see docs/methods.md for the proof and the discrete form.
``"observer"``
    Any other compensator with poles in the closed right half-plane
    (integrators, unstable poles), parameter ``tracking_time``: each such
    root of ``R`` is moved to ``-1/Tt`` in ``A_o``; stable roots stay.
    Astrom and Wittenmark's observer-form anti-windup.
``"none"``
    No anti-windup: ``A_o = R`` (every root of ``R`` in the open left
    half-plane, so the states stay bounded; or a deliberate naive
    implementation to compare with).

References
----------
.. [1] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   sec. 3.5 (integrator windup, back-calculation, the tracking time
   constant; the rule ``Tt = sqrt(Ti Td)``, from memory).
.. [2] K. J. Astrom and B. Wittenmark, *Computer-Controlled Systems*,
   3rd ed., Prentice Hall, 1997, sec. 9.4 (anti-windup in the polynomial
   ``R, S, T`` form with an observer polynomial, from memory).
.. [3] R. Hanus, M. Kinnaert and J.-L. Henrotte, "Conditioning technique, a
   general anti-windup and bumpless transfer method", Automatica 23(6),
   729-739, 1987 (the observer polynomial equal to the compensator's zeros).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.numerics.poly import trim
from synth.verify.controller import AntiWindup, Controller

__all__ = [
    "SCHEMES",
    "Implementation",
    "PidTerms",
    "default_anti_windup",
    "implementation",
    "pid_terms",
    "tracking_range",
    "windup_roots",
]

#: The anti-windup schemes synth implements (the JSON's ``anti_windup.scheme``).
SCHEMES = ("back-calculation", "observer", "none")

#: Points of the tracking-time grid the finishing stage tries (besides the default).
GRID_POINTS = 5


@dataclass(frozen=True)
class PidTerms:
    """A PI or PID read from its polynomials: ``Kp + Ki/s + Kd s / (1 + s/N)``.

    ``N`` is ``None`` for a PI (``Kd = 0``).  ``Ti = Kp/Ki`` and ``Td = Kd/Kp``
    are the standard-form times (``None`` when not defined).
    """

    kp: float
    ki: float
    kd: float
    n: float | None

    @property
    def ti(self) -> float | None:
        return self.kp / self.ki if self.ki != 0 else None

    @property
    def td(self) -> float | None:
        return self.kd / self.kp if self.kp != 0 else None


def _monic(num, den) -> tuple[np.ndarray, np.ndarray]:
    n, d = trim(num), trim(den)
    return n / d[0], d / d[0]


def pid_terms(num, den) -> PidTerms | None:
    """The parallel PI/PID gains of ``num/den`` when it has that form, else ``None``.

    PI: ``den = s``, ``num = Kp s + Ki``.  PID with derivative filter:
    ``den = s (s + N)`` and ``num = (Kp + Kd N) s^2 + (Kp N + Ki) s + Ki N``.
    """
    n, d = _monic(num, den)
    if n.size > d.size:
        return None
    n = np.concatenate([np.zeros(d.size - n.size), n])
    if d.size == 2 and d[1] == 0.0:
        return PidTerms(kp=float(n[0]), ki=float(n[1]), kd=0.0, n=None)
    if d.size == 3 and d[2] == 0.0 and d[1] > 0.0:
        N = float(d[1])
        ki = float(n[2]) / N
        kp = (float(n[1]) - ki) / N
        return PidTerms(kp=kp, ki=ki, kd=(float(n[0]) - kp) / N, n=N)
    return None


def _split_roots(den) -> tuple[np.ndarray, np.ndarray]:
    """Roots of ``den`` in the open left half-plane and in the closed right half-plane.

    An integrator is an exact trailing zero coefficient (an exact 0 root);
    the other roots come from :func:`numpy.roots`, judged by the sign of
    their real part (a stable pole, however slow, keeps a bounded state).
    """
    d = trim(den)
    k = 0
    while k < d.size - 1 and d[d.size - 1 - k] == 0.0:
        k += 1
    rest = d[: d.size - k]
    roots = np.roots(rest) if rest.size > 1 else np.zeros(0, complex)
    return roots[roots.real < 0], np.concatenate([np.zeros(k, complex), roots[roots.real >= 0]])


def windup_roots(den) -> np.ndarray:
    """Roots of the compensator denominator that wind up: those in the closed right half-plane."""
    return _split_roots(den)[1]


def tracking_range(num, den, crossover: float | None = None
                   ) -> tuple[str, float, float, float] | None:
    """The scheme, default tracking time and the range the finishing stage searches.

    Returns ``(scheme, default, low, high)``, or ``None`` when no root of the
    denominator lies in the closed right half-plane (no windup: scheme
    ``"none"``).

    * PI: ``Tt = Ti`` (the tracking pole on the PI zero, which is also the
      conditioned form of Hanus et al.), searched over ``[Ti/8, Ti]``:
      Astrom and Hagglund ask for ``Tt`` below ``Ti``.
    * PID: ``Tt = sqrt(Ti Td)`` (Astrom and Hagglund's rule), searched over
      ``[max(Td, Ti/64), Ti]`` (their advice ``Td < Tt < Ti``); a PID whose
      ``Td`` is not below ``Ti`` or not positive is treated as a PI.
    * Any other compensator (``"observer"``): ``Tt = 1 / w_c`` with ``w_c``
      the loop's gain crossover when given (else the geometric mean of the
      compensator's non-zero root magnitudes; ValueError for a pure
      integrator without a crossover), searched over ``[Tt/4, 2 Tt]``.
    """
    if windup_roots(den).size == 0:
        return None
    terms = pid_terms(num, den)
    ti = terms.ti if terms is not None else None
    if terms is not None and ti is not None and ti > 0:
        td = terms.td
        if terms.n is not None and td is not None and 0 < td < ti:
            lo = max(td, ti / 64.0)
            return ("back-calculation", math.sqrt(ti * td), lo, ti)
        return ("back-calculation", ti, ti / 8.0, ti)
    if crossover is not None and crossover > 0 and math.isfinite(crossover):
        t0 = 1.0 / crossover
    else:
        n, d = _monic(num, den)
        mags = [abs(r) for p in (n, d) if p.size > 1 for r in np.roots(p) if r != 0]
        if not mags:
            # a pure integrator K/s has no time scale of its own; its loop always crosses
            # 0 dB (|L| falls from infinity to 0), so callers have the crossover to give
            raise ValueError("the compensator has no non-zero pole or zero: give the loop's "
                             "crossover frequency to set the tracking time")
        t0 = 1.0 / math.exp(float(np.mean(np.log(mags))))
    return ("observer", t0, t0 / 4.0, 2.0 * t0)


def default_anti_windup(num, den, crossover: float | None = None) -> AntiWindup:
    """The anti-windup synth gives a compensator by default (see :func:`tracking_range`)."""
    found = tracking_range(num, den, crossover)
    if found is None:
        return AntiWindup("none", {})
    scheme, t0, _, _ = found
    return AntiWindup(scheme, {"tracking_time": float(t0)})


def tracking_grid(num, den, crossover: float | None = None) -> tuple[float, ...]:
    """The tracking times the finishing stage tries: the default and a geometric grid."""
    found = tracking_range(num, den, crossover)
    if found is None:
        return ()
    _, t0, lo, hi = found
    grid = np.geomspace(lo, hi, GRID_POINTS)
    return tuple(sorted({float(t0), *(float(t) for t in grid)}))


@dataclass(frozen=True)
class Implementation:
    """A controller as the law ``A_o v = T r - S y + (A_o - R) u``, ``u = lim(v)``.

    Attributes
    ----------
    R, S, T, A_o : tuple of float
        Descending powers of s; ``R`` and ``A_o`` monic of the same degree,
        ``S`` and ``T`` of at most that degree.
    prefilter : (tuple, tuple) or None
        ``F(s)`` applied to the reference before the law (``r`` above is
        ``F`` times the reference).
    scheme : str
        The anti-windup scheme (:data:`SCHEMES`).
    tracking_time : float or None
    """

    R: tuple[float, ...]
    S: tuple[float, ...]
    T: tuple[float, ...]
    A_o: tuple[float, ...]
    prefilter: tuple[tuple[float, ...], tuple[float, ...]] | None
    scheme: str
    tracking_time: float | None = None


def _reference_polynomial(weights, S, R) -> np.ndarray:
    """``T`` for PID set-point weights ``(b, c)``: ``Kp b + Ki/s + Kd c s/(1 + s/N)`` over ``R``."""
    b, c = weights
    terms = pid_terms(S, R)
    if R.size == 1:   # P: u = Kp (b r - y)
        return b * S
    if R.size == 2 and R[1] != 0.0:
        # PD with filter: Kp + Kd N s / (s + N)
        N = float(R[1])
        kp = float(S[-1]) / N
        return np.polyadd(b * kp * R, c * (float(S[0]) - kp) * np.array([1.0, 0.0]))
    if terms is None:
        raise ValueError("set-point weights need a P, PI, PD or PID compensator, got "
                         f"C(s) with denominator {R.tolist()}")
    if terms.n is None:
        return np.array([b * terms.kp, terms.ki])
    N = terms.n
    return (b * terms.kp * np.array([1.0, N, 0.0]) + terms.ki * np.array([0.0, 1.0, N])
            + c * terms.kd * N * np.array([1.0, 0.0, 0.0]))


def implementation(controller: Controller) -> Implementation:
    """The polynomials of the law for a :class:`Controller` (its shaping and anti-windup).

    Raises
    ------
    ValueError
        For an unknown scheme, a missing or non-positive tracking time, or
        set-point weights on a compensator that is no P/PI/PD/PID (a bug of
        whoever built the controller, not bad input).
    """
    S, R = _monic(controller.num, controller.den)
    S = np.concatenate([np.zeros(max(0, R.size - S.size)), S])
    if S.size > R.size:
        raise ValueError("an improper compensator has no implementation with saturation")
    T = S
    prefilter = None
    shaping = controller.shaping
    if shaping is not None:
        if shaping.setpoint_weights is not None:
            T = _reference_polynomial(shaping.setpoint_weights, S, R)
            T = np.concatenate([np.zeros(max(0, R.size - T.size)), T])
        else:
            prefilter = (tuple(float(x) for x in shaping.numerator),
                         tuple(float(x) for x in shaping.denominator))
    aw = controller.anti_windup
    scheme = "none" if aw is None else aw.scheme
    if scheme not in SCHEMES:
        raise ValueError(f"unknown anti-windup scheme {scheme!r}; synth knows {SCHEMES}")
    A_o = R
    tt = None
    if scheme != "none":
        tt = aw.parameters.get("tracking_time")
        if tt is None or not (tt > 0 and math.isfinite(tt)):
            raise ValueError(f"anti-windup {scheme!r} needs a positive tracking_time, got {tt!r}")
        tt = float(tt)
        stable, bad = _split_roots(R)
        if bad.size:
            # R = R_stable * R_bad: keep the stable roots, move the others to -1/Tt
            A_o = np.real(np.poly(np.concatenate([stable, np.full(bad.size, -1.0 / tt)])))
    return Implementation(R=tuple(R.tolist()), S=tuple(S.tolist()), T=tuple(T.tolist()),
                          A_o=tuple(float(x) for x in A_o), prefilter=prefilter,
                          scheme=scheme, tracking_time=tt)
