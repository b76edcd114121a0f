"""The s-plane region set by the time-domain requirements, and the second-order relations behind it.

References
----------
K. Ogata, *Modern Control Engineering*, 5th ed., Prentice Hall, 2010, ch. 5.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


def damping_from_overshoot(percent: float) -> float:
    """Damping ratio of a second-order pair whose step overshoot is ``percent``.

    ``zeta = -ln(Mp) / sqrt(pi^2 + ln(Mp)^2)`` with ``Mp = percent / 100``;
    0 for an overshoot of 100 % or more.
    """
    mp = percent / 100.0
    if mp >= 1.0:
        return 0.0
    if mp <= 0.0:
        return 1.0
    lm = math.log(mp)
    return -lm / math.sqrt(math.pi**2 + lm**2)


def overshoot_from_damping(zeta: float) -> float:
    """Step overshoot in percent of a second-order pair: ``100 exp(-pi zeta / sqrt(1 - zeta^2))``."""
    if zeta >= 1.0:
        return 0.0
    if zeta <= 0.0:
        return 100.0
    return 100.0 * math.exp(-math.pi * zeta / math.sqrt(1.0 - zeta**2))


def decay_rate_from_settling(settling_time: float, band_percent: float = 2.0) -> float:
    """Minimum decay rate ``sigma = ln(100 / band) / Ts`` (about 4/Ts for a 2 % band)."""
    return math.log(100.0 / band_percent) / settling_time


@dataclass(frozen=True)
class Region:
    """The s-plane region ``{Re s <= -sigma} ∩ {damping >= zeta}``.

    ``sigma = 0`` and ``zeta = 0`` give the open left half-plane (stability).
    Membership tests are strict: a pole on the boundary is outside.
    """

    sigma: float = 0.0
    zeta: float = 0.0

    @property
    def phi(self) -> float:
        """Half-angle of the damping sector, ``arccos(zeta)``, measured from the negative real axis."""
        return math.acos(self.zeta)

    @property
    def is_stability_only(self) -> bool:
        return self.sigma == 0.0 and self.zeta == 0.0

    def margin(self, roots) -> np.ndarray:
        """Signed distance of each root to the region boundary (positive inside)."""
        r = np.asarray(roots, dtype=complex)
        decay = -r.real - self.sigma
        s_phi = math.sin(self.phi)
        c_phi = self.zeta
        sector = -r.real * s_phi - np.abs(r.imag) * c_phi
        return np.minimum(decay, sector)

    def contains(self, roots, rtol: float = 1e-9) -> np.ndarray:
        """Whether every root along the last axis lies strictly inside the region.

        A root counts as inside when its margin exceeds ``rtol`` times the
        largest root magnitude of its row (relative, so a plant at 1e-6 rad/s
        is judged as one at 1 rad/s; a root numerically on the boundary is
        outside).
        """
        r = np.asarray(roots, dtype=complex)
        if r.shape[-1] == 0:
            return np.ones(r.shape[:-1], dtype=bool)
        finite = np.isfinite(r)
        rr = np.where(finite, r, 0.0)
        scale = np.max(np.abs(rr), axis=-1, keepdims=True)
        inside = (self.margin(rr) > rtol * scale) & finite
        return np.all(inside, axis=-1)

    def describe(self) -> str:
        parts = []
        if self.sigma > 0:
            parts.append(f"Re s <= -{self.sigma:.4g}")
        if self.zeta > 0:
            parts.append(f"damping >= {self.zeta:.3g}")
        return " and ".join(parts) if parts else "open left half-plane"
