"""The lead-lag family: a lead section times a lag section."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    Family,
    _conic,
    _ones,
    _real_roots_or_none,
    _stack,
)
from synth.locus.conditions import section_angle
from synth.numerics.poly import trim

#: (lead pole, lag pole, lag zero) the convex strategy fixes, over the target speed:
#: a lag ratio of 10 (common practice).
_CONVEX_PARTS = ((5.0, 0.03, 0.3),)


@dataclass(frozen=True)
class LeadLagFamily(Family):
    """Lead-lag: ``C(s) = K (s + z1)(s + z2) / ((s + p1)(s + p2))``, ``z1 < p1``, ``p2 < z2``."""

    name: ClassVar[str] = "lead-lag"
    position: ClassVar[int] = 70
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_lead_a", "log10_lead_b",
                                              "log10_lag_a", "log10_lag_b")
    fixed_names: ClassVar[tuple[str, ...]] = ("lead_pole", "lag_pole", "lag_zero")

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

    # -- what the strategies need ---------------------------------------------------
    def placement_designs(self, kit):
        """For a step-error limit: a lead section by each construction plus a lag section
        (zero a decade or a quarter below ``|s_d|``) whose ratio is raised until the static
        loop gain suffices, the lead supplying the lag's angle too, so the dominant pair
        stays exactly at the target."""
        out = []
        for tgt, sign, phi in kit.lead_deficiencies():
            if kit.kp_need is None:
                kit.skip(f"lead-lag: no lag section needed ({kit.kp_why})")
                continue
            base = {"deficiency_deg": phi, "gain_sign": sign}
            for f in kit.lag_factors:
                out += self._sections(kit, tgt, phi, f, base)
        return out

    def _sections(self, kit, tgt, phi, factor, base):
        s = tgt.point
        if not math.isfinite(kit.g0) or kit.g0 == 0.0:
            return []
        zl = abs(s) / factor
        out = []
        # the lead constructions, each iterated on the lag ratio
        names = [c[0] for c in kit.lead_sections(s, min(phi, kit.max_section_deg))] or ["bisector"]
        for name in names:

            def build(beta, name=name):
                lag_angle = section_angle(s, zl, zl / beta)
                need = phi - lag_angle
                secs = [c for c in kit.lead_sections(s, need) if c[0] == name]
                if not secs:
                    kit.skip(f"lead-lag: lead deficiency {need:.1f} deg at {s:.3g} is out of "
                             "range for one section")
                    return None
                _, z, p = secs[0]
                return [z, zl], [p, zl / beta], {"lead_angle_deg": need, "lag_angle_deg": lag_angle}

            found = kit.lag_ratio_for_static_gain(build, s)
            if found is not None:
                zeros, poles, info, beta, kp = found
                out += kit.place(self.name, zeros, poles, tgt,
                                 f"{name} lead + lag zero |s_d|/{factor:g}",
                                 {**base, **info, "lag_zero_factor": factor,
                                  "static_gain_increase": beta, "static_loop_gain": kp})
        return out

    def convex_fixed_parts(self, w, region):
        # the closed loop keeps a slow pole near the lag zero: keep it inside the
        # region's decay rate so that a certificate can exist
        out = []
        for a, b, c in _CONVEX_PARTS:
            z = max(c * w, 1.5 * region.sigma)
            out.append(self._in_band([a * w, z * b / c, z]))
        return tuple(out)

    def fixed_part_of(self, num, den):
        """(lead pole, lag pole, lag zero) of a lead-lag with real left-half-plane roots."""
        d, n = trim(den), trim(num)
        if d.size != 3 or n.size != 3:
            return None
        r, q = np.roots(d), np.roots(n)
        if (np.any(np.abs(r.imag) > 1e-9 * np.abs(r)) or np.any(r.real >= 0)
                or np.any(np.abs(q.imag) > 1e-9 * np.abs(q)) or np.any(q.real >= 0)):
            return None
        poles, zeros = np.sort(-r.real), np.sort(-q.real)
        if not zeros[0] > poles[0]:
            return None
        # the smaller zero belongs to the lag
        return self._in_band([poles[1], poles[0], zeros[0]])

    def conic_form(self, fixed, w):
        # (s + z_lag) (u s + v (s + p_lead)), u, v >= 0: the lag section fixed, the lead
        # zero in [0, p_lead], both zeros real
        p1, p2, z2 = (float(v) for v in fixed)
        den = np.polymul([1.0, p1], [1.0, p2])
        gen = [np.polymul([1.0, z2], [1.0, 0.0]), np.polymul([1.0, z2], [1.0, p1])]
        return _conic(den, gen, [0.0, 0.0], [True, True], (p1, p2, z2), self.fixed_names)


#: The registered family (see :func:`synth.families.registry`).
FAMILY = LeadLagFamily
