"""The PID family with derivative filter: C(s) = K (s^2 + 2 zeta w s + w^2) / (s (s + p))."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    Family,
    _ones,
    _stack,
)
from synth.numerics.poly import trim

#: Zero damping range of the PID family (below 1: complex zeros; above: real).
_PID_ZETA = (0.1, 30.0)


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

    def _fixed_den(self, fixed):
        return np.array([1.0, fixed[0], 0.0])

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
