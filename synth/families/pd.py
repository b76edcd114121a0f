"""The PD family with derivative filter: C(s) = K (s + z) / (s + p)."""

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
    _stack,
)
from synth.numerics.poly import trim

#: Derivative-filter poles the convex strategy fixes, as multiples of the target speed.
_CONVEX_FILTER = (5.0, 12.0)


@dataclass(frozen=True)
class PDFamily(Family):
    """Proportional-derivative with derivative filter: ``C(s) = K (s + z) / (s + N)``.

    Parametrised by the filter pole ``N`` and the ratio ``N / z = 1 + N_f``,
    ``N_f`` the standard-form filter constant (2 to 50).  Parallel form:
    ``Kp = K z / N``, ``Kd = (K - Kp) / N`` in ``Kp + Kd s / (s / N + 1)``.
    """

    name: ClassVar[str] = "PD"
    position: ClassVar[int] = 30
    setpoint_weights: ClassVar[bool] = True
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

    # -- what the strategies need ---------------------------------------------------
    def placement_designs(self, kit):
        """Filter pole far out (about ten times ``|s_d|``), the zero from the deficiency
        plus the filter's lag, the ratio kept in the family's range."""
        out = []
        for tgt, sign, phi in kit.lead_deficiencies():
            zN = kit.pd_section(tgt.point, phi, PD_RATIO_RANGE)
            if zN is not None:
                z, N = zN
                out += kit.place(self.name, [z], [N], tgt,
                                 "filter pole far out, zero from the deficiency",
                                 {"deficiency_deg": phi, "gain_sign": sign, "filter_pole": N})
        return out

    def convex_fixed_parts(self, w, region):
        return tuple(self._in_band([a * w]) for a in _CONVEX_FILTER)

    def fixed_part_of(self, num, den):
        d = trim(den)
        return self._in_band([d[1] / d[0]]) if d.size == 2 else None

    def conic_form(self, fixed, w):
        # u (s + N/51) + v (s + N/3), u, v >= 0: exactly the zeros with N/z in the PD range
        N = float(fixed[0])
        gen = [[1.0, N / PD_RATIO_RANGE[1]], [1.0, N / PD_RATIO_RANGE[0]]]
        return _conic([1.0, N], gen, [0.0, 0.0], [True, True], (N,), self.fixed_names)

    def pid_gains(self, num, den):
        x = self.from_polys(num, den)
        if x is None:
            return super().pid_gains(num, den)
        nat = self.natural(x)
        return ParallelGains(kp=nat["Kp"], ki=0.0, kd=nat["Kd"], tf=1.0 / nat["filter_pole"])


#: The registered family (see :func:`synth.families.registry`).
FAMILY = PDFamily
