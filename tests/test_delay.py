"""Tests for synth.problem.delay.pade.

External references: scipy.interpolate.pade applied to the Taylor coefficients
of exp(-x) (reference library); the all-pass property of the diagonal Pade
form of a delay, numerator roots = negatives of denominator roots (common
practice); numpy.roots.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.interpolate import pade as scipy_pade

from synth.errors import InputError
from synth.problem.delay import MAX_PADE_ORDER, pade


@pytest.mark.parametrize("order", range(1, MAX_PADE_ORDER + 1))
@pytest.mark.parametrize("T", [0.05, 1.0, 3.7])
def test_against_scipy_interpolate_pade(order, T):
    # scipy.interpolate.pade(taylor, m, n) returns numpy.poly1d p, q with
    # exp(-x) ~ p(x)/q(x); substitute x = s T.
    taylor = [(-1.0) ** k / math.factorial(k) for k in range(2 * order + 1)]
    with warnings.catch_warnings():
        # scipy solves an ill-conditioned Toeplitz system at high orders; its
        # answer is still accurate enough for the tolerance below.
        warnings.simplefilter("ignore")
        p, q = scipy_pade(taylor, order, order)
    num, den = pade(T, order)
    # scipy normalises q(0) = 1 like we do; rescale coefficients by T^k.
    k = np.arange(order, -1, -1)
    ref_num = np.asarray(p.coeffs) * T ** k
    ref_den = np.asarray(q.coeffs) * T ** k
    np.testing.assert_allclose(num, ref_num, rtol=1e-7, atol=1e-12 * np.max(np.abs(ref_num)))
    np.testing.assert_allclose(den, ref_den, rtol=1e-7, atol=1e-12 * np.max(np.abs(ref_den)))


@pytest.mark.parametrize("order", range(1, MAX_PADE_ORDER + 1))
def test_all_pass_mirror_roots(order):
    # common practice: the diagonal Pade form of exp(-sT) is all-pass, its
    # zeros are the negatives of its poles (numpy.roots), poles in the LHP.
    num, den = pade(0.8, order)
    zeros = np.sort_complex(np.roots(num))
    poles = np.sort_complex(np.roots(den))
    np.testing.assert_allclose(np.sort_complex(-poles), zeros, rtol=1e-6, atol=1e-8)
    assert np.all(poles.real < 0)
    w = np.logspace(-2, 2, 50)
    mag = np.abs(np.polyval(num, 1j * w) / np.polyval(den, 1j * w))
    np.testing.assert_allclose(mag, 1.0, rtol=1e-9)


def test_first_order_textbook_form():
    # The well-known first-order form (1 - sT/2)/(1 + sT/2), scaled to unit constants.
    num, den = pade(2.0, 1)
    np.testing.assert_allclose(num, [-1.0, 1.0])
    np.testing.assert_allclose(den, [1.0, 1.0])


def test_phase_close_to_delay_at_low_frequency():
    # exp(-j w T) is the target (common practice: good below w ~ order/T).
    T, order = 0.5, 4
    num, den = pade(T, order)
    w = np.linspace(0.01, 2.0, 40)
    approx = np.polyval(num, 1j * w) / np.polyval(den, 1j * w)
    np.testing.assert_allclose(approx, np.exp(-1j * w * T), atol=1e-7)


def test_zero_delay():
    num, den = pade(0.0, 5)
    assert num.tolist() == [1.0] and den.tolist() == [1.0]


@pytest.mark.parametrize(
    ("T", "order", "fragment"),
    [
        (-1.0, 2, ">= 0"),
        (float("nan"), 2, "finite"),
        (float("inf"), 2, "finite"),
        (1.0, 0, "from 1 to"),
        (1.0, 11, "from 1 to"),
        (1.0, 2.5, "integer"),
        (1.0, True, "integer"),
        ("1", 2, "number"),
    ],
)
def test_bad_arguments(T, order, fragment):
    with pytest.raises(InputError, match=fragment):
        pade(T, order)
