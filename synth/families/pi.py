"""The PI family: C(s) = K (s + z) / s."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    Family,
    ParallelGains,
    _conic,
    _ones,
    _power_generators,
    _stack,
)
from synth.locus.conditions import arg_deg
from synth.numerics.poly import trim


@dataclass(frozen=True)
class PIFamily(Family):
    """Proportional-integral: ``C(s) = K (s + z) / s`` (``Kp = K``, ``Ki = K z``)."""

    name: ClassVar[str] = "PI"
    position: ClassVar[int] = 20
    setpoint_weights: ClassVar[bool] = True
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_zero")

    def _bounds(self):
        return [self._gain_bound(), self._logw_bound()]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        z = 10.0 ** X[:, 1]
        B = X.shape[0]
        return K[:, None] * _stack(_ones(B), z), _stack(_ones(B), np.zeros(B))

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

    # -- what the strategies need ---------------------------------------------------
    def placement_designs(self, kit):
        """Three constructions: the zero from the (negative) deficiency at each target;
        the zero on a slow stable plant pole with the gain on the damping ray; the zero a
        decade (or a quarter) below where the proportional locus meets a target ray."""
        points = kit.proportional_points(self.name)
        out = self._by_angle(kit)
        s_max = max(abs(t.point) for t in kit.targets)
        for a in kit.stable_real_poles(s_max):
            # zero on a slow stable real plant pole (common practice for PI),
            # the gain where the locus meets each target damping ray
            for tgt0 in {t.damping: t for t in kit.targets}.values():
                res = kit.relocate([a], [0.0], tgt0, limit=None)
                if res is None:
                    continue
                out += kit.place(self.name, [a], [0.0], res[2],
                                 "PI zero on a plant pole, gain on the damping ray",
                                 {"deficiency_deg": 0.0, "cancelled_pole": -a})
        for s0, k0, tgt0 in points:
            for f in kit.lag_factors:
                zi = abs(s0) / f
                res = kit.relocate([zi], [0.0], tgt0)
                if res is None:
                    continue
                info = {"deficiency_deg": 0.0, "pi_zero_factor": f,
                        "proportional_point": [s0.real, s0.imag], "proportional_gain": k0}
                out += kit.place(self.name, [zi], [0.0], res[2],
                                 f"PI zero |s|/{f:g} below the proportional-locus point", info)
        return out

    def _by_angle(self, kit):
        """The integrator-zero pair supplies ``arg(s_d + z) - arg(s_d)`` in ``(-arg s_d, 0)``,
        so a negative deficiency fixes the zero (as the lead's pole from the zero)."""
        out = []
        for tgt, sign in kit.target_signs():
            s = tgt.point
            phi = kit.deficiency(s, sign)
            if phi is None or not -arg_deg(s) < phi < 0.0:
                continue
            psi = arg_deg(s) + phi      # the zero's vector must make this angle
            z = -s.real + s.imag / math.tan(math.radians(psi))
            if z <= 0.0:
                continue
            out += kit.place(self.name, [z], [0.0], tgt, "PI zero from the deficiency",
                             {"deficiency_deg": phi, "gain_sign": sign})
        return out

    def convex_fixed_parts(self, w, region):
        return ((),)

    def conic_form(self, fixed, w):
        # K s + K z: both coefficients nonnegative for a zero in the left half-plane
        return _conic([1.0, 0.0], _power_generators(2, w), [0.0, 0.0], [True, False], (), ())

    def circle_form(self):
        return "PI"

    def pid_gains(self, num, den):
        x = self.from_polys(num, den)
        if x is None:
            return super().pid_gains(num, den)
        nat = self.natural(x)
        return ParallelGains(kp=nat["Kp"], ki=nat["Ki"], kd=0.0, tf=0.0)


#: The registered family (see :func:`synth.families.registry`).
FAMILY = PIFamily
