"""The lead-lag family: a lead section times a lag section."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    Family,
    _ones,
    _real_roots_or_none,
    _stack,
)
from synth.numerics.poly import trim


@dataclass(frozen=True)
class LeadLagFamily(Family):
    """Lead-lag: ``C(s) = K (s + z1)(s + z2) / ((s + p1)(s + p2))``, ``z1 < p1``, ``p2 < z2``."""

    name: ClassVar[str] = "lead-lag"
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_lead_a", "log10_lead_b",
                                              "log10_lag_a", "log10_lag_b")
    fixed_names: ClassVar[tuple[str, ...]] = ("lead_pole", "lag_pole")

    def _bounds(self):
        lw = self._logw_bound()
        return [self._gain_bound(), lw, lw, lw, lw]

    @staticmethod
    def _zp(a1, b1, a2, b2):
        z1, p1 = np.minimum(a1, b1), np.maximum(a1, b1)
        z2, p2 = np.maximum(a2, b2), np.minimum(a2, b2)
        return z1, p1, z2, p2

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        z1, p1, z2, p2 = self._zp(*(10.0 ** X[:, j] for j in range(1, 5)))
        B = X.shape[0]
        num = K[:, None] * _stack(_ones(B), z1 + z2, z1 * z2)
        den = _stack(_ones(B), p1 + p2, p1 * p2)
        return num, den

    def _fixed_den(self, fixed):
        return np.polymul([1.0, fixed[0]], [1.0, fixed[1]])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        z1, p1, z2, p2 = (float(v) for v in self._zp(*(10.0 ** float(v) for v in x[1:5])))
        return {"gain": K, "lead_zero": z1, "lead_pole": p1, "lag_zero": z2, "lag_pole": p2}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 3 or d.size != 3:
            return None
        zs, ps = _real_roots_or_none(n / n[0]), _real_roots_or_none(d / d[0])
        if zs is None or ps is None or zs.size != 2 or ps.size != 2:
            return None
        # pair the smaller pole with the larger zero as the lag section
        z_small, z_big = zs
        p_small, p_big = ps
        tol = 1 + 1e-6  # numpy.roots splits double roots by about sqrt(eps)
        if not (z_small <= p_big * tol and p_small <= z_big * tol):
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(z_small), math.log10(p_big),
                         math.log10(z_big), math.log10(p_small)])

    def near_gain(self, k):
        lw = math.log10(self.space.w_char)
        return np.array([self._u(k), lw, lw, lw - 1, lw - 1])
