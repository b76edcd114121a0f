"""The PI family: C(s) = K (s + z) / s."""

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


@dataclass(frozen=True)
class PIFamily(Family):
    """Proportional-integral: ``C(s) = K (s + z) / s`` (``Kp = K``, ``Ki = K z``)."""

    name: ClassVar[str] = "PI"
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_zero")

    def _bounds(self):
        return [self._gain_bound(), self._logw_bound()]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        z = 10.0 ** X[:, 1]
        B = X.shape[0]
        return K[:, None] * _stack(_ones(B), z), _stack(_ones(B), np.zeros(B))

    def _fixed_den(self, fixed):
        return np.array([1.0, 0.0])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        z = 10.0 ** float(x[1])
        return {"gain": K, "zero": z, "Kp": K, "Ki": K * z}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 2 or d.size != 2 or d[1] != 0.0:
            return None
        z = n[1] / n[0]
        if z <= 0:
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(z)])

    def near_gain(self, k):
        return np.array([self._u(k), self.space.log_w[0]])
