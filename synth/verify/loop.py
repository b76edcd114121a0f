"""The unreduced loop: ``L = C G`` and the characteristic polynomial ``den_C den_G + num_C num_G``."""

from __future__ import annotations

import numpy as np

from synth.numerics.poly import trim


def loop_polynomials(plant, num_c, den_c) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(num_L, den_L, char)``: loop polynomials and the unreduced characteristic polynomial."""
    nc, dc = trim(num_c), trim(den_c)
    num_l = np.polymul(nc, plant.num)
    den_l = np.polymul(dc, plant.den)
    return num_l, den_l, np.polyadd(den_l, num_l)
