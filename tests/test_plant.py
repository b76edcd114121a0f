"""The plant model: forms, dead time, validation, common factors."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from synth.errors import InputError
from synth.numerics.poly import coefficients
from synth.problem.plant import Plant


def test_roots_form_matches_scipy_zpk2tf():
    # scipy.signal.zpk2tf is the reference expansion
    z, p, k = [-2.0], [0.0, -1 + 3j, -1 - 3j, -8.0], 4.0
    num, den = signal.zpk2tf(z, p, k)
    plant = Plant.from_roots([-2.0], [0.0, "-1+3j", -8.0], 4.0)  # a conjugate stands for its pair
    assert np.allclose(plant.rational_num, num)
    assert np.allclose(plant.rational_den, den)


def test_expression_equals_coefficients():
    # 4/(s^2 (s+8)) expanded by hand: s^3 + 8 s^2
    a = Plant.from_expression("4/(s^2*(s+8))")
    assert np.allclose(a.num, [4.0])
    assert np.allclose(a.den, [1.0, 8.0, 0.0, 0.0])


def test_dead_time_rhp_zeros_show_in_engine_form():
    # A Pade form of exp(-sT) is all-pass: its zeros are in the right half-plane (common practice).
    plant = Plant.from_coefficients([1.0], [1.0, 1.0], dead_time=0.5, pade_order=3)
    z = plant.zeros()
    assert z.size == 3 and np.all(z.real > 0)
    # the engine form agrees with the exact delay at low frequency
    w = 0.2j
    assert abs(plant.evaluate(w, exact_delay=False) - plant.evaluate(w)) < 1e-6


def test_improper_and_degenerate_plants_rejected():
    with pytest.raises(InputError, match="improper"):
        Plant.from_coefficients([1, 0, 0], [1, 1])
    with pytest.raises(InputError, match="zero"):
        Plant.from_coefficients([0.0], [1, 1])
    with pytest.raises(InputError, match="non-finite"):
        Plant.from_coefficients([1.0], [1, np.inf])


def test_leading_zeros_trimmed_and_common_factor_reported():
    plant = Plant.from_coefficients([0.0, 1.0, 1.0], [1.0, 3.0, 2.0])
    assert plant.rational_num.tolist() == [1.0, 1.0]
    # (s+1)/((s+1)(s+2)): the factor is kept and reported, never cancelled
    assert plant.order == 2
    shared = plant.common_factors()
    assert len(shared) == 1 and abs(shared[0] + 1.0) < 1e-9


def test_coefficients_reads_and_rejects_lists_the_same_way_everywhere():
    assert coefficients([0.0, 0.0, 2.0, 1.0], "the numerator").tolist() == [2.0, 1.0]
    assert coefficients([0.0], "the numerator").tolist() == [0.0]
    for bad, words in ((["a"], "list of numbers"), ([], "non-empty"), ([[1.0], [2.0]], "1-D"),
                       ([1.0, float("nan")], "non-finite")):
        with pytest.raises(InputError, match=words):
            coefficients(bad, "the numerator")
    with pytest.raises(InputError, match="zero polynomial") as err:
        coefficients([0.0, 0.0], "x.den", allow_zero=False, key="x.den")
    assert err.value.key == "x.den"
