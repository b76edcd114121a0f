"""Low-order process models for the published tuning rules.

The classic PI/PID rules are stated for a first-order-plus-dead-time (FOPDT)
or second-order-plus-dead-time (SOPDT) model, or for an integrating process
with dead time.  This module gets such a model from a transfer function

* by Skogestad's **half rule** (from the factored time constants, the
  numerator lead/lag terms and the dead time), :func:`half_rule`;
* from the **step response** (steepest tangent, tangent plus 63 % point, or
  Smith's two-point method), :func:`step_response_model`; for an integrating
  process the velocity gain and the apparent dead time of the step response's
  asymptote.

Everything is worked in the plant's own time scale: time constants are
ratios of the plant's roots, step-response grids span a multiple of its
slowest time constant, and no tolerance is absolute.

References
----------
.. [1] S. Skogestad, "Simple analytic rules for model reduction and PID
   controller tuning", J. Process Control 13 (2003) 291-309, section 3
   (the half rule and the rules T1-T3 for numerator time constants).
.. [2] J. G. Ziegler and N. B. Nichols, "Optimum settings for automatic
   controllers", Trans. ASME 64 (1942) 759-768 (the steepest tangent of the
   step response).
.. [3] K. J. Astrom and T. Hagglund, "Revisiting the Ziegler-Nichols step
   response method for PID control", J. Process Control 14 (2004) 635-650
   (K, L from the steepest tangent; T from the 63 % point).
.. [4] C. L. Smith, *Digital Computer Process Control*, Intext, 1972 (the
   two-point method: 28.3 % and 63.2 % of the final value).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.errors import SynthError

__all__ = ["ProcessModel", "RuleNotApplicable", "half_rule", "half_rule_factors",
           "step_response_model"]

#: Roots closer than this fraction of their magnitude count as one multiple root
#: (numpy.roots splits an n-fold root by about eps**(1/n) relative: 1 % for n = 8).
_CLUSTER_RTOL = 0.05

#: Imaginary part (relative to the magnitude) below which a cluster's mean is real.
_REAL_RTOL = 1e-6


class RuleNotApplicable(SynthError):
    """A tuning rule or model reduction does not apply to this plant (with the reason)."""


@dataclass(frozen=True)
class ProcessModel:
    """``K exp(-theta s) / prod(tau_i s + 1)``, or ``Kv exp(-theta s) / (s prod(tau_i s + 1))``.

    Attributes
    ----------
    gain : float
        Static gain K; for an integrating model the velocity gain Kv (output
        units per input unit per second).
    time_constants : tuple of float
        The lags, largest first (0, 1 or 2 of them).
    dead_time : float
        The (effective) dead time theta.
    integrating : bool
        A pole at the origin in front of the lags.
    method : str
        How the model was obtained ("half rule", "tangent", ...).
    """

    gain: float
    time_constants: tuple[float, ...]
    dead_time: float
    integrating: bool = False
    method: str = ""

    @property
    def order(self) -> int:
        """Model order as the half rule counts it: the lags, plus one for an integrator.

        (An integrator is the limit of an infinitely slow lag, so ``k'/s`` is a
        first-order model and ``k'/(s (tau s + 1))`` a second-order one.)
        """
        return len(self.time_constants) + (1 if self.integrating else 0)

    @property
    def normalised_dead_time(self) -> float:
        """``L / (L + T)`` of a FOPDT model (1 for a pure delay, 0 for an integrator)."""
        if self.integrating:
            return 0.0
        T = self.time_constants[0] if self.time_constants else 0.0
        return self.dead_time / (self.dead_time + T)

    def numerator(self) -> np.ndarray:
        """Delay-free numerator, descending powers of s."""
        return np.array([self.gain])

    def denominator(self) -> np.ndarray:
        """Delay-free denominator, descending powers of s."""
        den = np.array([1.0])
        for tau in self.time_constants:
            den = np.polymul(den, [tau, 1.0])
        return np.polymul(den, [1.0, 0.0]) if self.integrating else den

    def reduced(self, order: int) -> ProcessModel:
        """The same model with at most ``order`` lags, by the half rule [1]_.

        References
        ----------
        .. [1] Skogestad (2003), section 3.1.
        """
        return half_rule_factors(self.gain, self.time_constants, (), self.dead_time,
                                 order=order, integrating=self.integrating)


# ----------------------------------------------------------------------------
# the half rule
# ----------------------------------------------------------------------------


def _strip_origin(poly: np.ndarray) -> tuple[np.ndarray, int]:
    """Remove exact roots at the origin (trailing zero coefficients); return their count."""
    p = np.trim_zeros(np.asarray(poly, dtype=float), "f")
    m = 0
    while p.size > 1 and p[-1] == 0.0:
        p = p[:-1]
        m += 1
    return p, m


def _origin_split(num, den) -> tuple[np.ndarray, np.ndarray, int]:
    """Numerator and denominator without their roots at the origin, and the poles there.

    Raises
    ------
    RuleNotApplicable
        For a zero at the origin or more than one pole there.
    """
    n, zn = _strip_origin(num)
    d, zd = _strip_origin(den)
    if zn:
        raise RuleNotApplicable("the plant has a zero at the origin (no static gain to control)")
    if zd > 1:
        raise RuleNotApplicable(f"the plant has {zd} poles at the origin; the rules allow one")
    return n, d, zd


def _root_clusters(poly: np.ndarray) -> list[tuple[complex, int]]:
    """Roots of ``poly`` with near-coincident ones merged: ``(mean root, multiplicity)``.

    numpy.roots returns an n-fold root as a ring of radius ~eps**(1/n); the
    mean of the ring is accurate to rounding, so each ring is replaced by it.
    """
    if poly.size <= 1:
        return []
    roots = sorted(np.roots(poly), key=abs)
    clusters: list[list[complex]] = []
    for r in roots:
        for c in clusters:
            centre = sum(c) / len(c)
            if abs(r - centre) <= _CLUSTER_RTOL * max(abs(r), abs(centre)):
                c.append(r)
                break
        else:
            clusters.append([r])
    return [(complex(sum(c) / len(c)), len(c)) for c in clusters]


def _real_time_constants(poly: np.ndarray, what: str) -> list[float]:
    """``T`` of each factor ``(T s + 1)`` of ``poly`` (negative T: a right-half-plane root)."""
    out: list[float] = []
    for root, mult in _root_clusters(poly):
        if abs(root.imag) > _REAL_RTOL * abs(root):
            zeta = -root.real / abs(root)
            raise RuleNotApplicable(
                f"the half rule needs real {what}; this plant has a complex pair "
                f"(damping {zeta:.3g}, frequency {abs(root):.4g} rad/s)")
        out.extend([-1.0 / root.real] * mult)
    return out


def half_rule(num, den, dead_time: float = 0.0, order: int = 1) -> ProcessModel:
    """Skogestad's half rule: a FOPDT (``order=1``) or SOPDT (``order=2``) model of a plant.

    The plant ``num/den * exp(-dead_time s)`` is factored into a gain, lags
    ``(tau s + 1)``, numerator terms ``(T0 s + 1)`` (a right-half-plane zero
    gives ``T0 < 0``) and at most one pole at the origin; then
    :func:`half_rule_factors` applies the rule.

    Parameters
    ----------
    num, den : array_like
        Delay-free transfer function, descending powers of s.
    dead_time : float
    order : {1, 2}

    Returns
    -------
    ProcessModel

    Raises
    ------
    RuleNotApplicable
        For complex poles or zeros, unstable poles, more than one pole at the
        origin or a zero at the origin.

    References
    ----------
    .. [1] S. Skogestad, "Simple analytic rules for model reduction and PID
       controller tuning", J. Process Control 13 (2003) 291-309, section 3.
    """
    n, d, zd = _origin_split(num, den)
    lags = _real_time_constants(d, "poles")
    if any(t < 0 for t in lags):
        raise RuleNotApplicable("the plant is unstable; the half rule needs stable lags")
    leads = _real_time_constants(n, "zeros")
    # gain: ratio of the constant terms once the origin roots are out (leading sign kept)
    gain = float(n[-1] / d[-1])
    return half_rule_factors(gain, lags, leads, float(dead_time), order=order,
                             integrating=zd == 1)


def _lhp_zero(T0: float, lags: list[float], theta: float) -> tuple[float, list[float]]:
    """Skogestad's rules T1-T3 for a numerator term ``(T0 s + 1)``, ``T0 > 0``.

    ``tau0`` is the closest larger lag (else the largest smaller one); theta
    the effective delay.  Returns the gain factor and the new lag list.
    """
    finite = [t for t in lags if math.isfinite(t)]
    if not finite:
        raise RuleNotApplicable("a left-half-plane zero with no lag to cancel it against")
    larger = [t for t in finite if t >= T0]
    tau0 = min(larger) if larger else max(finite)
    rest = list(lags)
    rest.remove(tau0)
    if T0 >= tau0:
        if tau0 >= theta:          # T1
            return T0 / tau0, rest
        if T0 >= theta:            # T1a
            return T0 / theta, rest
        return 1.0, rest           # T1b
    if T0 >= 5.0 * theta:          # T2
        return T0 / tau0, rest
    tilde = min(tau0, 5.0 * theta)  # T3
    return tilde / tau0, [*rest, tilde - T0]


def _split(lags: list[float], theta0: float, order: int) -> tuple[list[float], float]:
    """The half rule proper: keep ``order`` lags, half of the next to the last kept and the delay."""
    lags = sorted(lags, reverse=True)
    if len(lags) <= order:
        return lags, theta0
    kept = lags[:order]
    nxt = lags[order]
    kept[-1] = kept[-1] + nxt / 2.0
    return kept, theta0 + nxt / 2.0 + sum(lags[order + 1:])


def half_rule_factors(gain: float, lags, leads=(), dead_time: float = 0.0, order: int = 1,
                      integrating: bool = False) -> ProcessModel:
    """The half rule on a factored plant ``gain * prod(T0 s + 1) / prod(tau s + 1) * exp(-theta s)``.

    Right-half-plane numerator terms (``T0 < 0``) are approximated by a
    delay ``|T0|``; left-half-plane ones by Skogestad's rules T1-T3 against
    a neighbouring lag (using the effective delay of the model without
    them); then the largest neglected lag is split half to the smallest kept
    lag and half to the delay, and every smaller lag goes to the delay.  An
    integrating plant keeps its integrator as an infinitely slow lag.

    Parameters
    ----------
    gain : float
        Static gain (velocity gain when ``integrating``).
    lags : sequence of float
        Time constants of the lags, all > 0.
    leads : sequence of float
        Numerator time constants ``T0`` (negative: right-half-plane zero).
    dead_time : float
    order : {1, 2}
        Number of lags kept, an integrator counting as the slowest one.
    integrating : bool

    Returns
    -------
    ProcessModel

    References
    ----------
    .. [1] S. Skogestad, "Simple analytic rules for model reduction and PID
       controller tuning", J. Process Control 13 (2003) 291-309, eqs. (10),
       (11) (half rule) and rules T1, T1a, T1b, T2, T3 (numerator terms).
    """
    if order not in (1, 2):
        raise ValueError(f"order must be 1 or 2, got {order!r}")
    lags = [float(t) for t in lags]
    if any(not t > 0 for t in lags):
        raise ValueError(f"lags must be positive time constants, got {lags}")
    theta0 = float(dead_time) + sum(-t for t in leads if t < 0)
    # the integrator is an infinitely slow lag that is always kept (it takes one slot)
    inf = [math.inf] if integrating else []
    slots = order
    k = float(gain)
    for T0 in sorted((t for t in leads if t > 0), reverse=True):
        _, theta = _split(inf + lags, theta0, slots)
        factor, rest = _lhp_zero(T0, inf + lags, theta)
        k *= factor
        lags = [t for t in rest if math.isfinite(t)]
    kept, theta = _split(inf + lags, theta0, slots)
    kept = [t for t in kept if math.isfinite(t)]
    return ProcessModel(gain=k, time_constants=tuple(kept), dead_time=theta,
                        integrating=integrating, method="half rule")


# ----------------------------------------------------------------------------
# step-response models
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class _StepModel:
    """Exact step and impulse responses of a stable strictly proper plant (state space)."""

    A: np.ndarray
    B: np.ndarray
    C: np.ndarray
    D: float

    def step(self, t: float) -> float:
        """Unit-step response at ``t`` from one augmented matrix exponential (Van Loan)."""
        from scipy.linalg import expm

        n = self.A.shape[0]
        M = np.zeros((n + 1, n + 1))
        M[:n, :n] = self.A * t
        M[:n, n] = self.B[:, 0] * t
        x = expm(M)[:n, n]
        return float(self.C[0] @ x + self.D)

    def impulse(self, t: float) -> float:
        """Impulse response (slope of the step response) at ``t > 0``."""
        from scipy.linalg import expm

        return float(self.C[0] @ expm(self.A * t) @ self.B[:, 0])


def _low_coefficient_ratio(poly: np.ndarray) -> float:
    """``p'(0) / p(0)`` of a polynomial in descending powers (with ``p(0) != 0``)."""
    return float(poly[-2] / poly[-1]) if poly.size > 1 else 0.0


def step_response_model(num, den, dead_time: float = 0.0, method: str = "tangent-63",
                        ) -> ProcessModel:
    """A FOPDT (or integrating) model read off the plant's unit-step response.

    Methods (non-integrating plants; K is the static gain):

    ``"tangent"``
        Ziegler and Nichols: the steepest tangent meets the time axis at L;
        T = K / (steepest slope), so that ``a = K L / T`` is the tangent's
        intercept [2]_.
    ``"tangent-63"``
        Astrom and Hagglund: L as above, T = t63 - L with t63 the time to
        63.2 % of the final value [3]_ (the identification behind AMIGO).
    ``"two-point"``
        Smith: ``T = 1.5 (t63 - t28)``, ``L = t63 - T`` [4]_.

    For a plant with one pole at the origin every method gives the velocity
    gain Kv and the apparent dead time of the asymptote ``Kv (t - L)``:
    ``L = dead_time + sum(lags) - sum(numerator time constants)``, exactly
    from the low-order coefficients.

    Parameters
    ----------
    num, den : array_like
        Delay-free transfer function, descending powers of s.
    dead_time : float
    method : {"tangent", "tangent-63", "two-point"}

    Returns
    -------
    ProcessModel

    Raises
    ------
    RuleNotApplicable
        Unstable plant, more than one pole at the origin, a zero at the
        origin, a non-strictly-proper plant, or a response that never reaches
        the level a method needs.

    References
    ----------
    .. [2] Ziegler and Nichols (1942).
    .. [3] Astrom and Hagglund (2004), section 2.
    .. [4] Smith (1972).
    """
    if method not in ("tangent", "tangent-63", "two-point"):
        raise ValueError(f"unknown method {method!r}")
    n, d, zd = _origin_split(num, den)
    if n.size > d.size + zd - 1:
        raise RuleNotApplicable("the step-response methods need a strictly proper plant")
    poles = np.roots(d) if d.size > 1 else np.zeros(0)
    scale = max([abs(p) for p in poles] + [0.0])
    if poles.size and np.any(poles.real >= -_REAL_RTOL * scale):
        raise RuleNotApplicable("the plant is unstable or marginal; a step test does not settle")
    dead_time = float(dead_time)
    if zd == 1:
        kv = float(n[-1] / d[-1])
        L = dead_time + _low_coefficient_ratio(d) - _low_coefficient_ratio(n)
        if not L > 0:
            raise RuleNotApplicable("the step response's asymptote has no positive apparent "
                                    "dead time")
        return ProcessModel(gain=kv, time_constants=(), dead_time=L, integrating=True,
                            method="asymptote")
    from scipy.signal import impulse, step, tf2ss

    K = float(n[-1] / d[-1])
    A, B, C, D = tf2ss(n / K, d)
    sys = _StepModel(A, B, C, float(D.ravel()[0]) if D.size else 0.0)
    slowest = 1.0 / float(np.min(-poles.real))
    t = np.linspace(0.0, 15.0 * slowest, 6001)
    y = step((A, B, C, D), T=t)[1]
    if method == "two-point":
        t28 = _crossing(sys, t, y, 0.283)
        t63 = _crossing(sys, t, y, 0.632)
        T = 1.5 * (t63 - t28)
        L = t63 - T + dead_time
        if not (T > 0 and L >= 0):
            raise RuleNotApplicable("the two-point method gives no positive time constant")
        return ProcessModel(gain=K, time_constants=(T,), dead_time=L, method="two-point")
    h = impulse((A, B, C, D), T=t)[1]
    i = int(np.argmax(h))
    from scipy.optimize import minimize_scalar

    lo, hi = t[max(i - 1, 0)], t[min(i + 1, t.size - 1)]
    res = minimize_scalar(lambda x: -sys.impulse(x), bounds=(lo, hi), method="bounded",
                          options={"xatol": 1e-10 * (hi - lo + slowest)})
    ts = float(res.x) if -res.fun >= h[i] else float(t[i])
    slope = sys.impulse(ts) if ts > 0 else float(h[i])
    if not slope > 0:
        raise RuleNotApplicable("the step response never rises")
    L = ts - sys.step(ts) / slope + dead_time
    if method == "tangent":
        T = 1.0 / slope
    else:
        T = _crossing(sys, t, y, 0.632) + dead_time - L
    if not (T > 0 and L >= 0):
        raise RuleNotApplicable("the tangent method gives no positive time constant")
    return ProcessModel(gain=K, time_constants=(T,), dead_time=L, method=method)


def _crossing(sys: _StepModel, t: np.ndarray, y: np.ndarray, level: float) -> float:
    """First time the normalised step response reaches ``level`` (refined by brentq)."""
    from scipy.optimize import brentq

    idx = np.flatnonzero(y >= level)
    if idx.size == 0:
        raise RuleNotApplicable(f"the step response never reaches {100 * level:.1f} % of its "
                                "final value")
    j = int(idx[0])
    if j == 0:
        return 0.0
    return float(brentq(lambda x: sys.step(x) - level, t[j - 1], t[j],
                        xtol=1e-12 * t[j], rtol=1e-12))
