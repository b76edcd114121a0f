"""The PID family with derivative filter: C(s) = K (s^2 + 2 zeta w s + w^2) / (s (s + p))."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    PD_RATIO_RANGE,
    Family,
    ParallelGains,
    _conic,
    _ones,
    _power_generators,
    _stack,
)
from synth.locus.conditions import section_angle
from synth.numerics.poly import trim

#: Zero damping range of the PID family (below 1: complex zeros; above: real).
_PID_ZETA = (0.1, 30.0)
#: Derivative-filter poles the convex strategy fixes, as multiples of the target speed.
_CONVEX_FILTER = (5.0, 12.0)


@dataclass(frozen=True)
class PIDFamily(Family):
    """PID with derivative filter: ``C(s) = K (s^2 + 2 zeta_z w_z s + w_z^2) / (s (s + N))``.

    Searched over the larger zero magnitude ``m`` (so both zeros stay within
    ``max_frequency``), the zero damping ``zeta_z`` (below 1 complex zeros,
    above 1 real ones) and the filter pole ``N``; ``w_z = m`` for complex
    zeros, ``w_z = m / (zeta_z + sqrt(zeta_z^2 - 1))`` for real ones.
    Parallel form ``Kp + Ki / s + Kd s / (s / N + 1)`` with ``Ki = K w_z^2 / N``,
    ``Kp = K (2 zeta_z w_z - w_z^2 / N) / N`` and ``Kd = (K - Kp) / N``.
    """

    name: ClassVar[str] = "PID"
    position: ClassVar[int] = 40
    setpoint_weights: ClassVar[bool] = True
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_outer_zero",
                                              "log10_zero_damping", "log10_filter_pole")
    fixed_names: ClassVar[tuple[str, ...]] = ("filter_pole",)

    def _bounds(self):
        lw = self._logw_bound()
        return [self._gain_bound(), lw, (math.log10(_PID_ZETA[0]), math.log10(_PID_ZETA[1])), lw]

    @staticmethod
    def _wz(m, zeta):
        return m / np.where(zeta > 1.0, zeta + np.sqrt(np.maximum(zeta * zeta - 1.0, 0.0)), 1.0)

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        zeta = 10.0 ** X[:, 2]
        w = self._wz(10.0 ** X[:, 1], zeta)
        N = 10.0 ** X[:, 3]
        B = X.shape[0]
        num = K[:, None] * _stack(_ones(B), 2 * zeta * w, w * w)
        den = _stack(_ones(B), N, np.zeros(B))
        return num, den

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        zeta = 10.0 ** float(x[2])
        w = float(self._wz(np.array(10.0 ** float(x[1])), np.array(zeta)))
        N = 10.0 ** float(x[3])
        a1, a0 = 2 * zeta * w, w * w
        ki = K * a0 / N
        kp = K * (a1 - a0 / N) / N
        return {"gain": K, "zero_frequency": w, "zero_damping": zeta, "filter_pole": N,
                "Kp": kp, "Ki": ki, "Kd": (K - kp) / N}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 3 or d.size != 3 or d[2] != 0.0:
            return None
        N = d[1] / d[0]
        a1, a0 = n[1] / n[0], n[2] / n[0]
        if N <= 0 or a0 <= 0 or a1 <= 0:
            return None
        w = math.sqrt(a0)
        zeta = a1 / (2 * w)
        m = w * (zeta + math.sqrt(zeta * zeta - 1.0)) if zeta > 1 else w
        return np.array([self._u(n[0] / d[0]), math.log10(m), math.log10(zeta), math.log10(N)])

    def near_gain(self, k):
        # zeros at the bottom of the band and at the filter pole: C ~ K
        lw0, lw1 = self.space.log_w
        N = 10.0 ** lw1
        w1 = 10.0 ** lw0
        w = math.sqrt(w1 * N)
        zeta = min((w1 + N) / (2 * w), _PID_ZETA[1])
        m = w * (zeta + math.sqrt(zeta * zeta - 1.0))
        return np.array([self._u(k), math.log10(min(m, N)), math.log10(zeta), lw1])

    # -- what the strategies need ---------------------------------------------------
    def placement_designs(self, kit):
        """The PI zero a decade (or a quarter) below ``|s_d|``, then the PD zero from the
        deficiency plus the PI section's and the filter's lag; or the two zeros on the
        slowest stable plant poles (:meth:`_cancelling`)."""
        out = []
        for tgt, sign, phi in kit.lead_deficiencies():
            s = tgt.point
            base = {"deficiency_deg": phi, "gain_sign": sign}
            for f in kit.lag_factors:
                zi = abs(s) / f
                pi_angle = section_angle(s, zi, 0.0)   # negative: the PI section lags
                zN = kit.pd_section(s, phi - pi_angle, PD_RATIO_RANGE)
                if zN is None:
                    continue
                z, N = zN
                out += kit.place(self.name, [zi, z], [0.0, N], tgt,
                                 f"PI zero |s_d|/{f:g}, PD zero from the deficiency",
                                 {**base, "pi_zero": zi, "pi_angle_deg": pi_angle,
                                  "filter_pole": N})
            out += self._cancelling(kit, tgt)
        return out

    def _cancelling(self, kit, tgt):
        """PID whose zeros sit on the two slowest stable plant poles.

        What is left is about ``K g / (s (s + N))``, whose locus meets the
        target's damping ray where ``2 zeta w_n = N``: the filter pole is set to
        twice the target decay rate and the gain found on the locus of the whole
        loop (common practice: cancel the slow plant dynamics, let the integrator
        and the filter pole set the speed).  The cancelled modes remain in the
        closed loop (the verifier checks their decay).
        """
        pair = kit.slow_stable_pair()
        if pair is None:
            return []
        N = 2.0 * -tgt.point.real
        if N > kit.w_max:
            return []
        zeros = [-v for v in pair]
        res = kit.relocate(zeros, [0.0, N], tgt, limit=None)
        if res is None:
            return []
        return kit.place(self.name, zeros, [0.0, N], res[2],
                         "PID zeros on the slowest plant poles, filter pole from the decay",
                         {"deficiency_deg": 0.0, "filter_pole": N,
                          "cancelled_poles": [[v.real, v.imag] for v in pair]})

    def convex_fixed_parts(self, w, region):
        return tuple(self._in_band([a * w]) for a in _CONVEX_FILTER)

    def fixed_part_of(self, num, den):
        d = trim(den)
        return self._in_band([d[1] / d[0]]) if d.size == 3 else None

    def conic_form(self, fixed, w):
        # nonnegative coefficients: necessary for zeros in the left half-plane; the exact
        # shape is checked by from_polys after the solve
        N = float(fixed[0])
        return _conic([1.0, N, 0.0], _power_generators(3, w), [0.0, 0.0, 0.0],
                      [True, False, False], (N,), self.fixed_names)

    def circle_form(self):
        return "PID"

    def pid_gains(self, num, den):
        x = self.from_polys(num, den)
        if x is None:
            return super().pid_gains(num, den)
        nat = self.natural(x)
        return ParallelGains(kp=nat["Kp"], ki=nat["Ki"], kd=nat["Kd"],
                             tf=1.0 / nat["filter_pole"])


#: The registered family (see :func:`synth.families.registry`).
FAMILY = PIDFamily
