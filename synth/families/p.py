"""The proportional family: C(s) = K."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    Family,
)
from synth.numerics.poly import trim


@dataclass(frozen=True)
class PFamily(Family):
    """Proportional: ``C(s) = K``."""

    name: ClassVar[str] = "P"
    param_names: ClassVar[tuple[str, ...]] = ("gain",)

    def _bounds(self):
        return [self._gain_bound()]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        return K[:, None], np.ones((X.shape[0], 1))

    def _fixed_den(self, fixed):
        return np.ones(1)

    def natural(self, x):
        return {"gain": float(self.space.gain(x[0]))}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 1 or d.size != 1:
            return None
        return np.array([self._u(n[0] / d[0])])

    def near_gain(self, k):
        return np.array([self._u(k)])
