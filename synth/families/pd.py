"""The PD family with derivative filter: C(s) = K (s + z) / (s + p)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    PD_RATIO_RANGE,
    Family,
    _ones,
    _stack,
)
from synth.numerics.poly import trim


@dataclass(frozen=True)
class PDFamily(Family):
    """Proportional-derivative with derivative filter: ``C(s) = K (s + z) / (s + N)``.

    Parametrised by the filter pole ``N`` and the ratio ``N / z = 1 + N_f``,
    ``N_f`` the standard-form filter constant (2 to 50).  Parallel form:
    ``Kp = K z / N``, ``Kd = (K - Kp) / N`` in ``Kp + Kd s / (s / N + 1)``.
    """

    name: ClassVar[str] = "PD"
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_filter_pole", "log10_ratio")
    fixed_names: ClassVar[tuple[str, ...]] = ("filter_pole",)

    def _bounds(self):
        lw0, lw1 = self._logw_bound()
        return [self._gain_bound(), (lw0 + math.log10(PD_RATIO_RANGE[0]), lw1),
                (math.log10(PD_RATIO_RANGE[0]), math.log10(PD_RATIO_RANGE[1]))]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        N = 10.0 ** X[:, 1]
        z = N / 10.0 ** X[:, 2]
        B = X.shape[0]
        return K[:, None] * _stack(_ones(B), z), _stack(_ones(B), N)

    def _fixed_den(self, fixed):
        return np.array([1.0, fixed[0]])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        N = 10.0 ** float(x[1])
        z = N / 10.0 ** float(x[2])
        kp = K * z / N
        return {"gain": K, "zero": z, "filter_pole": N, "Kp": kp, "Kd": (K - kp) / N}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 2 or d.size != 2:
            return None
        z, N = n[1] / n[0], d[1] / d[0]
        if not (0 < z < N):
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(N), math.log10(N / z)])

    def near_gain(self, k):
        # filter pole at the top of the band: C ~ K z / N below the zero
        lw1 = self.space.log_w[1]
        r = math.log10(PD_RATIO_RANGE[0])
        return np.array([self._u(k * 10.0 ** r), lw1, r])
