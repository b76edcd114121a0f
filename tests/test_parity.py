"""Parity interlacing (strong stabilisability) and its consequences.

External sources:
- the definition of the parity interlacing property: D. C. Youla, J. J.
  Bongiorno and C. N. Lu, "Single-loop feedback stabilization of linear
  multivariable dynamical plants", Automatica 10, 1974; J. C. Doyle, B. A.
  Francis and A. R. Tannenbaum, *Feedback Control Theory*, Macmillan, 1992,
  ch. 5 (from memory). The verdicts below are worked from that definition by
  hand and cross-checked with an equivalent criterion computed in the test
  with numpy.polyval (the denominator keeps one sign at all real closed-RHP
  zeros, infinity included: M. Vidyasagar, *Control System Synthesis*, MIT
  Press, 1985, from memory);
- the consequence (a plant that fails needs an unstable compensator): dense
  grids of first-order compensators, closed-loop roots from numpy.linalg.eigvals;
- the diagonal Pade form's real zero: numpy.roots of the textbook Pade
  polynomial 1 + x/2 + x^2/10 + x^3/120 (G. A. Baker and P. Graves-Morris,
  *Pade Approximants*, 1996, from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from synth.explain import explain_problem, parity_interlacing
from synth.problem.plant import Plant
from synth.problem.requirements import Problem


def _explain(num, den, **kw):
    return explain_problem(Problem(plant=Plant.from_coefficients(num, den, **kw)))


def _den_sign_criterion(num, den) -> bool:
    """Equivalent test: sign of den is the same at every real closed-RHP zero (and at infinity)."""
    zr = np.roots(num) if len(np.trim_zeros(num, "f")) > 1 else np.zeros(0)
    real = zr[(np.abs(zr.imag) < 1e-7) & (zr.real >= -1e-12)].real
    signs = [np.sign(np.polyval(den, z)) for z in real]
    if len(np.trim_zeros(den, "f")) > len(np.trim_zeros(num, "f")):
        signs.append(np.sign(np.trim_zeros(den, "f")[0]))
    return len(set(signs)) <= 1


# (numerator, denominator, strongly stabilisable) worked by hand from the definition
CASES = [
    # zeros 1 and infinity, one real pole (2) between them: fails
    (np.poly([1.0]), np.poly([2.0, -1.0]), False),
    # zeros 1 and infinity, no real pole beyond 1 (0.5 lies below): holds
    (np.poly([1.0]), np.poly([-1.0, 0.5]), True),
    # zeros 1, 3, infinity: pole 2 between 1 and 3 (odd): fails
    (np.poly([1.0, 3.0]), np.poly([2.0, -1.0, -1.0]), False),
    # zeros 1 and infinity, double pole at 2 between them: even with multiplicity, holds
    (np.poly([1.0]), np.poly([2.0, 2.0, -1.0]), True),
    # zeros 0 and infinity, pole 1 between: fails
    (np.poly([0.0]), np.poly([1.0, -2.0]), False),
    # biproper: the only real RHP zero is 0 (no zero at infinity): holds trivially
    (np.poly([0.0]), np.poly([1.0]), True),
    # complex RHP poles between the zeros do not count: holds
    (np.poly([1.0]), np.real(np.poly([2 + 1j, 2 - 1j, -1.0])), True),
    # no RHP zero at all: only infinity, holds for any unstable poles
    (np.array([1.0]), np.poly([1.0, 2.0, 3.0]), True),
]


@pytest.mark.parametrize("num, den, expected", CASES)
def test_parity_verdicts_worked_from_definition(num, den, expected):
    assert parity_interlacing(num, den).holds is expected
    assert _den_sign_criterion(num, den) is expected
    assert _explain(num, den).strongly_stabilizable is expected


def test_odd_interval_and_minimum_unstable_poles():
    # zeros 1, 3, 5, inf; poles 2 (in (1,3)) and 6 (in (5, inf)): two odd intervals
    chk = parity_interlacing(np.poly([1.0, 3.0, 5.0]), np.poly([2.0, 6.0, -1.0, -1.0]))
    assert not chk.holds
    (a1, b1), (a2, b2) = chk.odd_intervals
    assert (a1, b1, a2) == pytest.approx((1.0, 3.0, 5.0)) and b2 is None
    assert chk.min_unstable_compensator_poles == 2


def _pade3_real_zero(theta: float) -> float:
    # exp(-x) ~ P(-x)/P(x), P(x) = 1 + x/2 + x^2/10 + x^3/120; the real root of P is negative
    r = np.roots([1 / 120, 1 / 10, 1 / 2, 1.0])
    return float(-r[np.abs(r.imag) < 1e-9].real[0] / theta)


@pytest.mark.parametrize("pole, expected", [(3.0, True), (5.0, False)])
def test_dead_time_pade_zero_takes_part(pole, expected):
    # exp(-s)/(s - p) in its order-3 Pade form: real RHP zero near 4.644
    z = _pade3_real_zero(1.0)
    assert 4.6 < z < 4.7
    e = _explain([1.0], [1.0, -pole], dead_time=1.0, pade_order=3)
    assert e.strongly_stabilizable is expected
    assert e.strongly_stabilizable is (not (z < pole))
    # an order-2 Pade form has only complex zeros: nothing to interlace with
    e2 = _explain([1.0], [1.0, -5.0], dead_time=1.0, pade_order=2)
    assert e2.strongly_stabilizable


def test_hidden_unstable_mode_is_not_strongly_stabilizable():
    e = _explain(np.poly([1.0]), np.poly([1.0, -2.0]))
    assert not e.strongly_stabilizable
    assert e.suggestions == ()


def _first_order_grid(num, den, pole_values, hurwitz_reference):
    """All (k, a, b) with C = k (s + a)/(s + b) stabilising num/den, over a dense grid."""
    k = np.concatenate([-np.geomspace(1e-2, 1e3, 60), np.geomspace(1e-2, 1e3, 60)])
    a = np.linspace(-10.0, 10.0, 41)
    b = np.asarray(pole_values, dtype=float)
    K, A, B = (x.ravel() for x in np.meshgrid(k, a, b, indexing="ij"))
    num, den = np.asarray(num, float), np.asarray(den, float)
    size = den.size + 1
    # (s + b) den + k (s + a) num, coefficient by coefficient, padded to one length
    dd = np.zeros((K.size, size))
    dd[:, :-1] += den[None, :]
    dd[:, 1:] += B[:, None] * den[None, :]
    nn = np.zeros((K.size, size))
    w = num.size
    nn[:, size - w - 1:-1] += K[:, None] * num[None, :]
    nn[:, size - w:] += (K * A)[:, None] * num[None, :]
    chi = dd + nn
    stable = hurwitz_reference(chi)
    return K[stable], A[stable], B[stable]


def test_failing_plant_has_no_stable_first_order_stabiliser(hurwitz_reference):
    # (s-1)/((s-2)(s+1)) fails parity interlacing: zeros 1 and infinity, pole 2 between
    num, den = np.poly([1.0]), np.poly([2.0, -1.0])
    assert not _explain(num, den).strongly_stabilizable
    # stable compensator poles s = -b, b > 0 (and b = 0 for PI-like): none stabilises
    k, _, _ = _first_order_grid(num, den, np.concatenate([[0.0], np.geomspace(1e-2, 50, 40)]),
                                hurwitz_reference)
    assert k.size == 0
    # unstable compensator poles: stabilisers exist, and every one has its pole s = -b
    # inside (1, infinity), the interval the explanation names
    k, _, b = _first_order_grid(num, den, -np.linspace(0.05, 10.0, 80), hurwitz_reference)
    assert k.size > 0
    assert np.all(-b > 1.0)
    e = _explain(num, den)
    assert e.facts.parity.odd_intervals == ((1.0, None),)
    assert e.suggested_structures[0] == "general"


def test_passing_plant_has_a_stable_first_order_stabiliser_but_no_p_gain(hurwitz_reference):
    # (s-1)/((s+1)(s-0.5)) passes parity interlacing; a plain gain cannot stabilise it
    # (Routh by hand: s^2 + (0.5+K) s - (0.5+K) needs K > -0.5 and K < -0.5)
    num, den = np.poly([1.0]), np.poly([-1.0, 0.5])
    e = _explain(num, den)
    assert e.strongly_stabilizable
    assert e.stabilizing_gain_intervals == ()
    k, _, _ = _first_order_grid(num, den, np.geomspace(1e-2, 50, 60), hurwitz_reference)
    assert k.size > 0


_root = st.floats(-4.0, 4.0, allow_nan=False).map(lambda x: round(x, 1))


@settings(max_examples=60, deadline=None)
@given(st.lists(_root, min_size=0, max_size=3), st.lists(_root, min_size=1, max_size=4))
def test_parity_matches_denominator_sign_criterion(zs, ps):
    assume(len(zs) <= len(ps) and not set(zs) & set(ps))
    num = np.poly(zs) if zs else np.array([1.0])
    den = np.poly(ps)
    assert parity_interlacing(num, den).holds is _den_sign_criterion(num, den)
