"""The proportional family: C(s) = K."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import ConicForm, Family, ParallelGains, _conic
from synth.numerics.poly import trim


@dataclass(frozen=True)
class PFamily(Family):
    """Proportional: ``C(s) = K``."""

    name: ClassVar[str] = "P"
    position: ClassVar[int] = 10
    setpoint_weights: ClassVar[bool] = True
    param_names: ClassVar[tuple[str, ...]] = ("gain",)

    def _bounds(self):
        return [self._gain_bound()]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        return K[:, None], np.ones((X.shape[0], 1))

    def natural(self, x):
        return {"gain": float(self.space.gain(x[0]))}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 1 or d.size != 1:
            return None
        return np.array([self._u(n[0] / d[0])])

    def near_gain(self, k):
        return np.array([self._u(k)])

    # -- what the strategies need ---------------------------------------------------
    def placement_designs(self, kit):
        """The gains where the proportional locus meets the target rays and decay lines."""
        out, seen = [], []
        for _s, k, tgt in kit.proportional_points(self.name):
            if any(abs(k - k0) <= 1e-6 * abs(k0) for k0 in seen):
                continue
            seen.append(k)
            out += kit.place(self.name, [], [], tgt, "gain on the proportional locus",
                             {"deficiency_deg": 0.0, "gain_sign": int(np.sign(k))})
        return out

    def convex_fixed_parts(self, w, region):
        return ((),)

    def conic_form(self, fixed, w) -> ConicForm:
        return _conic([1.0], [[1.0]], [0.0], [True], (), ())

    def pid_gains(self, num, den):
        if self.from_polys(num, den) is None:
            return super().pid_gains(num, den)
        return ParallelGains(kp=float(trim(num)[0] / trim(den)[0]), ki=0.0, kd=0.0, tf=0.0)

    def futility(self, explanation):
        """No gain in the allowed gain range stabilises the plant (or keeps it stable over the
        plant-gain range, or stabilises every plant model): explain's exact intervals say so."""
        if explanation is None:
            return None
        if not explanation.stabilizing_in_gain_range:
            return "no proportional gain in the allowed range stabilises the plant"
        robust = explanation.robust_stabilizing
        if robust is not None and not robust:
            return "no proportional gain keeps the loop stable over the plant-gain range"
        models = getattr(explanation, "models", None)
        if models is not None:
            from synth.explain.gain import intersect_all

            allowed = intersect_all(models.stabilizing, explanation.stabilizing_in_gain_range)
            if not allowed:
                return "no proportional gain in the allowed range stabilises every plant model"
        return None


#: The registered family (see :func:`synth.families.registry`).
FAMILY = PFamily
