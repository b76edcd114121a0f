"""The lag family: C(s) = K (s + z) / (s + p) with the pole below the zero."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

from synth.families.base import _conic, _PairFamily
from synth.locus.conditions import lead_bisector

#: Poles the convex strategy fixes, as multiples of the target speed.
_CONVEX_POLE = (0.02, 0.1)


@dataclass(frozen=True)
class LagFamily(_PairFamily):
    """Phase lag: ``C(s) = K (s + z) / (s + p)`` with ``0 < p < z``."""

    name: ClassVar[str] = "lag"
    position: ClassVar[int] = 60
    lead: ClassVar[bool] = False

    def placement_designs(self, kit):
        """A lag section for a step-error limit (zero a decade or a quarter below the point
        where the proportional locus meets a target ray, ratio from the static-gain need,
        the pair kept on the ray); and, where the plant has too much phase at a target
        (negative deficiency), a lag by the bisector construction."""
        points = kit.proportional_points(self.name)
        out = []
        kp_need, g0 = kit.kp_need, kit.g0
        if kp_need is not None and math.isfinite(g0) and g0 != 0.0:
            for s0, k0, tgt0 in points:
                if k0 * g0 >= kp_need:
                    continue  # proportional gain alone meets the error limit
                for f in kit.lag_factors:
                    out.extend(self._for_static_gain(kit, s0, k0, tgt0, f))
        elif kp_need is None and kit.kp_why:
            kit.skip(f"lag for the static gain: {kit.kp_why}")
        # negative deficiency at a target: the lag supplies the (negative) angle
        for tgt, sign in kit.target_signs():
            phi = kit.deficiency(tgt.point, sign)
            if phi is None or not -kit.max_section_deg <= phi < 0.0:
                continue
            zp = lead_bisector(tgt.point, phi)
            if zp is None:
                continue
            z, p = zp
            if kp_need is not None and math.isfinite(g0):
                k = kit.gain_for([z], [p], tgt.point)
                if k is None or k * (z / p) * g0 < kp_need:
                    continue  # this lag lowers the static gain below the error limit
            out += kit.place(self.name, [z], [p], tgt, "bisector (negative deficiency)",
                             {"deficiency_deg": phi, "gain_sign": sign})
        return out

    def _for_static_gain(self, kit, s0, k0, tgt0, f):
        """Lag zero ``|s_0| / f``, the ratio raised until the static loop gain suffices."""
        kp_need, g0 = kit.kp_need, kit.g0
        zl = abs(s0) / f
        beta, tgt, k1 = 1.0, tgt0, k0
        for _ in range(10):
            beta *= kp_need / (k1 * g0) * 1.02
            res = kit.relocate([zl], [zl / beta], tgt0)
            if res is None:
                return []
            _s1, k1, tgt = res
            if k1 * g0 * beta >= kp_need * (1 - 1e-9):
                info = {"deficiency_deg": 0.0, "lag_zero_factor": f,
                        "static_gain_increase": beta, "static_loop_gain": k1 * g0 * beta,
                        "proportional_point": [s0.real, s0.imag], "proportional_gain": k0}
                return kit.place(self.name, [zl], [zl / beta], tgt,
                                 f"lag zero |s|/{f:g}, ratio from the static gain", info)
            if k1 * g0 <= 0:
                return []
        return []

    def convex_fixed_parts(self, w, region):
        return tuple(self._in_band([a * w]) for a in _CONVEX_POLE)

    def conic_form(self, fixed, w):
        # u (s + p) + v w, u, v >= 0: exactly the zeros in [p, inf)
        p = float(fixed[0])
        return _conic([1.0, p], [[1.0, p], [0.0, w]], [0.0, 0.0], [True, False], (p,),
                      self.fixed_names)


#: The registered family (see :func:`synth.families.registry`).
FAMILY = LagFamily
