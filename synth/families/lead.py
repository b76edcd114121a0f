"""The lead family: C(s) = K (s + z) / (s + p) with the zero below the pole."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from synth.families.base import _conic, _PairFamily

#: Poles the convex strategy fixes, as multiples of the target speed.
_CONVEX_POLE = (3.0, 8.0)


@dataclass(frozen=True)
class LeadFamily(_PairFamily):
    """Phase lead: ``C(s) = K (s + z) / (s + p)`` with ``0 < z < p``."""

    name: ClassVar[str] = "lead"
    position: ClassVar[int] = 50
    lead: ClassVar[bool] = True

    def placement_designs(self, kit):
        """One lead section at each target by the bisector method, with the zero below the
        target, or with the zero on a stable real plant pole (at most ``max_section_deg``)."""
        out = []
        for tgt, sign, phi in kit.lead_deficiencies():
            s = tgt.point
            if phi > kit.max_section_deg:
                kit.skip(f"deficiency {phi:.1f} deg at {s:.3g} is too large for one lead section "
                         "(see the general family: split over sections)")
            for name, z, p in kit.lead_sections(s, phi, kit.stable_real_poles(s)):
                out += kit.place(self.name, [z], [p], tgt, name,
                                 {"deficiency_deg": phi, "gain_sign": sign, "lead_angle_deg": phi})
        return out

    def convex_fixed_parts(self, w, region):
        return tuple(self._in_band([a * w]) for a in _CONVEX_POLE)

    def conic_form(self, fixed, w):
        # u s + v (s + p), u, v >= 0: exactly the zeros in [0, p]
        p = float(fixed[0])
        return _conic([1.0, p], [[1.0, 0.0], [1.0, p]], [0.0, 0.0], [True, True], (p,),
                      self.fixed_names)


#: The registered family (see :func:`synth.families.registry`).
FAMILY = LeadFamily
