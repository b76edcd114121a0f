"""The general family: free numerator and denominator of a fixed order 1 to 3."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from synth.families.base import (
    Family,
    _conic,
    _mul_rows,
    _ones,
    _power_generators,
    _stack,
)
from synth.locus.conditions import lead_bisector, section_angle
from synth.numerics.poly import trim
from synth.problem.plant import describe_factored

#: Relative slack accepted by the general family's inverse map at the disc's edge.
_DISC_TOL = 1e-4


@dataclass(frozen=True)
class GeneralFamily(Family):
    """Free fixed-order compensator ``K n(s) / d(s)``, monic ``n`` and ``d`` of order 1 to 3.

    Each monic polynomial is a product of free real factors: ``s + r`` (order
    1), a quadratic (order 2) or ``(s + r)`` times a quadratic (order 3; every
    real cubic has a real root), so every real polynomial of the order whose
    roots lie in the disc ``|s| <= w_max`` is reachable, and no other.

    Coordinates.  With ``W = w_max``: ``r = W sinh(u) c1``; the quadratic
    ``s^2 + a1 s + a0`` is ``W^2 (z^2 + b1 z + b0)`` in ``z = s / W``, whose
    roots lie in the unit disc exactly when ``|b0| <= 1`` and
    ``|b1| <= 1 + b0`` (the second-order Schur-Cohn-Jury conditions), so it
    is searched as ``b0 = c2 sinh(u0)`` and ``b1 = (1 + b0) c1 sinh(u1)``
    with ``c1 = w_min / W``, ``c2 = c1^2`` and bounds that keep ``|b0|`` and
    ``|b1 / (1 + b0)|`` at most 1.  The ``asinh`` coordinates are signed
    logarithms: signs are free, so right-half-plane poles and zeros are
    allowed (needed when the plant fails the parity interlacing property),
    and small and large magnitudes are searched evenly.

    References
    ----------
    E. I. Jury, *Theory and Application of the z-Transform Method*, Wiley,
    1964 (the stability triangle of a second-order polynomial).
    """

    name: ClassVar[str] = "general"
    position: ClassVar[int] = 80

    @property
    def order(self) -> int:
        return self.space.order

    @property
    def _factor_names(self) -> tuple[str, ...]:
        return {1: ("r",), 2: ("q0", "q1"), 3: ("r", "q0", "q1")}[self.order]

    @property
    def param_names(self) -> tuple[str, ...]:  # type: ignore[override]
        f = self._factor_names
        return ("gain", *(f"num_{n}" for n in f), *(f"den_{n}" for n in f))

    @property
    def fixed_names(self) -> tuple[str, ...]:  # type: ignore[override]
        return tuple(f"den_c{i}" for i in range(1, self.order + 1))

    @property
    def _c1(self) -> float:
        return self.space.w_min / self.space.w_max

    def _scales(self):
        c1 = self._c1
        return [{"r": c1, "q0": c1 * c1, "q1": c1}[n] for n in self._factor_names]

    def _bounds(self):
        out = [self._gain_bound()]
        for _ in range(2):
            for c in self._scales():
                b = math.asinh(1.0 / c)
                out.append((-b, b))
        return out

    def _monic(self, U):
        """Monic polynomials from factor coordinates U (B, order)."""
        W = self.space.w_max
        B = U.shape[0]
        sc = self._scales()
        v = [c * np.sinh(U[:, j]) for j, c in enumerate(sc)]
        if self.order == 1:
            return _stack(_ones(B), W * v[0])
        q = 1 if self.order == 3 else 0
        b0 = v[q]
        b1 = (1.0 + b0) * v[q + 1]
        quad = _stack(_ones(B), W * b1, W * W * b0)
        if self.order == 2:
            return quad
        return _mul_rows(_stack(_ones(B), W * v[0]), quad)

    def _polys(self, X):
        n = self.order
        K = self.space.gain(X[:, 0])
        return K[:, None] * self._monic(X[:, 1:1 + n]), self._monic(X[:, 1 + n:1 + 2 * n])

    def _coords(self, monic) -> list[float] | None:
        """Search coordinates of a monic polynomial, or None outside the disc |s| <= w_max."""
        W = self.space.w_max
        p = np.asarray(monic, dtype=float)
        if p.size != self.order + 1:
            return None
        if self.order == 3:
            r = np.roots(p)
            real = r[np.abs(r.imag) <= 1e-9 * np.abs(r)]
            if real.size == 0:
                real = r[[int(np.argmin(np.abs(r.imag)))]]
            root = float(real[0].real)
            quad, _ = np.polydiv(p, [1.0, -root])
            lin = [-root / W]
        elif self.order == 2:
            quad, lin = p, []
        else:
            if abs(p[1]) > W * (1 + _DISC_TOL):
                return None
            return [math.asinh(min(1.0, max(-1.0, p[1] / W)) / self._c1)]
        # roots on the disc's edge come back from numpy.roots slightly off (a triple root
        # by about eps^(1/3)): accept and clip within _DISC_TOL
        if any(abs(v) > 1 + _DISC_TOL for v in lin):
            return None
        lin = [min(1.0, max(-1.0, v)) for v in lin]
        b0 = quad[2] / (W * W)
        b1 = quad[1] / W
        if abs(b0) > 1 + _DISC_TOL or abs(b1) > (1 + b0) + 2 * _DISC_TOL:
            return None
        b0 = min(1.0, max(-1.0, b0))
        v = min(1.0, max(-1.0, b1 / (1 + b0))) if 1 + b0 > 0 else 0.0
        c1 = self._c1
        out = [math.asinh(x / c1) for x in lin]
        return out + [math.asinh(b0 / (c1 * c1)), math.asinh(v / c1)]

    def natural(self, x):
        num, den = self.poly(x)
        out = {"gain": float(self.space.gain(x[0]))}
        for label, p in (("zero", num), ("pole", den)):
            if p.size > 1:
                roots = sorted(np.roots(p), key=lambda c: (c.real, c.imag))
                # relative tests: the same at every frequency scale
                for i, r in enumerate(r for r in roots if r.imag >= -1e-12 * abs(r)):
                    out[f"{label}{i + 1}_re"] = float(r.real)
                    if abs(r.imag) > 1e-12 * abs(r):
                        out[f"{label}{i + 1}_im"] = float(r.imag)
        return out

    def describe(self, x):
        num, den = self.poly(x)
        poles = np.roots(den) if den.size > 1 else np.zeros(0)
        rhp = int(np.sum(poles.real > 1e-9 * float(np.max(np.abs(poles), initial=0.0))))
        text = f"general (order {self.order}): C(s) = {describe_factored(num, den)}"
        return text + (f" ({rhp} right-half-plane pole{'s' if rhp > 1 else ''})" if rhp else "")

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != self.order + 1 or d.size != self.order + 1:
            return None
        un, ud = self._coords(n / n[0]), self._coords(d / d[0])
        if un is None or ud is None:
            return None
        return np.asarray([self._u(n[0] / d[0]), *un, *ud])

    def near_gain(self, k):
        w = self.space.w_char
        p = np.poly(np.full(self.order, -w))
        u = self._coords(p)
        return np.asarray([self._u(k), *u, *u])

    # -- what the strategies need ---------------------------------------------------
    def placement_designs(self, kit):
        """``order`` equal lead sections by the bisector method, each supplying
        ``phi / order`` (for a deficiency too large for one lead); for a step-error limit
        the last one replaced by a lag section whose ratio gives the static gain."""
        out = []
        for tgt, sign, phi in kit.lead_deficiencies():
            if phi > 0.0:
                out += self._multi_lead(kit, tgt, phi, {"deficiency_deg": phi, "gain_sign": sign})
        return out

    def _multi_lead(self, kit, tgt, phi, base):
        s, order = tgt.point, self.order

        def sections(n, lag_angle):
            """``n`` equal bisector sections supplying ``phi - lag_angle``, or None."""
            each = (phi - lag_angle) / n
            zp = lead_bisector(s, each) if 0.0 < each <= kit.max_section_deg else None
            if zp is None:
                kit.skip(f"general: {n} sections cannot supply {phi - lag_angle:.1f} deg")
                return None
            return [zp[0]] * n, [zp[1]] * n, {**base, "sections": n, "section_angle_deg": each}

        out = []
        leads = sections(order, 0.0)
        if leads is not None:
            out += kit.place(self.name, *leads[:2], tgt, "equal lead sections", leads[2])
        if kit.kp_need is not None and order >= 2 and math.isfinite(kit.g0) and kit.g0 != 0.0:
            zl = abs(s) / kit.lag_factors[0]

            def build(beta):
                lag_angle = section_angle(s, zl, zl / beta)
                built = sections(order - 1, lag_angle)
                if built is None:
                    return None
                zeros, poles, info = built
                return [*zeros, zl], [*poles, zl / beta], {**info, "lag_angle_deg": lag_angle}

            found = kit.lag_ratio_for_static_gain(build, s)
            if found is not None:
                zeros, poles, info, beta, kp = found
                out += kit.place(self.name, zeros, poles, tgt, "equal lead sections + lag",
                                 {**info, "static_gain_increase": beta, "static_loop_gain": kp})
        return out

    def convex_fixed_parts(self, w, region):
        """The denominators ``(s + 5 w)^n`` and ``s (s + 5 w)^(n - 1)`` (coefficients after the 1)."""
        n = self.order
        out = []
        for integrator in (False, True):
            roots = [0.0] + [-5.0 * w] * (n - 1) if integrator else [-5.0 * w] * n
            out.append(tuple(float(v) for v in np.poly(roots).real[1:]))
        return tuple(out)

    def fixed_part_of(self, num, den):
        d = trim(den)
        if d.size != self.order + 1:
            return None
        return tuple(float(v) for v in d[1:] / d[0])

    def conic_form(self, fixed, w):
        # every numerator coefficient free; only the leading one's sign is the gain's
        k = self.order + 1
        lower = np.full(k, -np.inf)
        lower[0] = 0.0
        carries = np.zeros(k, dtype=bool)
        carries[0] = True
        den = np.concatenate([[1.0], np.asarray(fixed, dtype=float)])
        return _conic(den, _power_generators(k, w), lower, carries, tuple(fixed), self.fixed_names)


#: The registered family (see :func:`synth.families.registry`).
FAMILY = GeneralFamily
