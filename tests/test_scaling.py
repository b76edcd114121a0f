"""Scale-proof numerics: plants whose numbers are far from 1 against exact references.

References used here, all outside synth:

* Routh's criterion worked by hand (common practice) for the closed-form intervals;
* exact rational arithmetic (sympy, tests/exact.py): Hurwitz determinants and
  Orlando's formula for every stabilising gain interval of random plants;
* ``fractions.Fraction`` for the asymptote centroid ``(sum p - sum z)/(n - m)``;
* ``mpmath.polyroots`` at 60 digits for roots of badly scaled polynomials;
* ``numpy.roots`` on the frequency-scaled characteristic polynomial for
  designs of plants at 1e5 and 1e-4 rad/s.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from exact import exact_stable_intervals, mp_roots
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from synth.explain import explain_problem
from synth.explain.structure import parity_interlacing
from synth.locus.core import closed_loop_roots, gain_at, marginal_intervals, stable_gain_intervals
from synth.locus.special import gain_at as special_gain_at
from synth.locus.special import locus_facts
from synth.locus.trace import trace_locus
from synth.numerics.poly import common_roots, scaled_roots
from synth.numerics.scaling import LoopScaling
from synth.numerics.screening import hurwitz_exact
from synth.problem.plant import Plant
from synth.problem.requirements import problem_from_text


def _same_intervals(got, ref, rtol=1e-9):
    assert len(got) == len(ref), (got, ref)
    for (a, b), (c, d) in zip(got, ref, strict=True):
        for x, y in ((a, c), (b, d)):
            assert (x is None) == (y is None), (got, ref)
            if x is not None:
                assert x == pytest.approx(y, rel=rtol, abs=0.0), (got, ref)


# -- the plants of the report, exact answers ---------------------------------------------------

def test_fast_triple_pole_keeps_its_order_and_exact_interval():
    # 1e15/(s+1e5)^3: s^3 + 3a s^2 + 3a^2 s + a^3 (1 + K) with a = 1e5; Routh by hand
    # (common practice): 9 a^3 > a^3 (1 + K) and 1 + K > 0, so -1 < K < 8
    p = Plant.from_roots([], [-1e5] * 3, 1e15)
    assert p.order == 3 and p.den[0] == 1.0
    got = stable_gain_intervals(p.num, p.den)
    _same_intervals(got, [(-1.0, 8.0)], rtol=1e-12)
    _same_intervals(got, exact_stable_intervals(p.num, p.den), rtol=1e-12)
    # K = 10 is not stabilising (numpy.roots on the scaled polynomial s = 1e5 z)
    assert np.max(np.roots([1.0, 3.0, 3.0, 11.0]).real) > 0


def test_slow_thermal_chain_exact_interval():
    # 1e-12/((s+1e-4)(s+2e-4)(s+5e-4)): s^3 + 8a s^2 + 17a^2 s + 10a^3 + 1e-12 K, a = 1e-4;
    # Routh by hand: 136 a^3 > 10 a^3 + 1e-12 K and 10 a^3 + 1e-12 K > 0, so -10 < K < 126
    p = Plant.from_roots([], [-1e-4, -2e-4, -5e-4], 1e-12)
    got = stable_gain_intervals(p.num, p.den)
    _same_intervals(got, [(-10.0, 126.0)], rtol=1e-12)
    _same_intervals(got, exact_stable_intervals(p.num, p.den), rtol=1e-12)


def test_thirty_decade_coefficients_are_kept():
    # (s + 1e10)^3 has coefficients from 1 to 1e30: no coefficient may be dropped
    den = np.poly([-1e10] * 3)
    p = Plant.from_coefficients([1e30], den)
    assert p.order == 3 and p.relative_degree == 3
    # Routh by hand as above: -1 < K < 8
    _same_intervals(stable_gain_intervals(p.num, p.den), [(-1.0, 8.0)], rtol=1e-12)


def test_scaled_roots_against_mpmath():
    # roots from 1e-6 to 1e6: coefficients span about 36 decades
    roots = np.array([-1e-6, -3e-3, -2.0, -5e2 + 7e2j, -5e2 - 7e2j, -1e6])
    p = np.real(np.poly(roots))
    ref = mp_roots(p)
    got = scaled_roots(p)
    for r in ref:
        assert np.min(np.abs(got - r)) <= 1e-9 * abs(r)


def test_scaling_is_exact():
    # powers of two only: the scaled loop maps back to the original bit for bit
    num, den = [3e11, 7e15], np.poly([-1e5, -2e5, -3e5 + 1e5j, -3e5 - 1e5j]).real
    sc = LoopScaling.for_loop(num, den)
    for x in (sc.w0, sc.cd, sc.cn):
        assert math.frexp(x)[0] == 0.5
    w = sc.w0
    for p, c in ((den, sc.cd), (np.asarray(num), sc.cn)):
        back = sc.den(p) * c if c == sc.cd else sc.num(p) * c
        deg = p.size - 1
        assert np.array_equal(back / w ** np.arange(deg, -1, -1, dtype=float), p)


# -- property test: random plants spread over many decades against exact arithmetic ----------

@st.composite
def _spread_plants(draw):
    """Real plants with roots spread over decades around a random frequency, random gain."""
    n = draw(st.integers(1, 5))
    m = draw(st.integers(0, n))
    w = 10.0 ** draw(st.floats(-6, 6))
    spread = draw(st.floats(0.0, 6.0))

    def roots(k):
        out = []
        while len(out) < k:
            mag = w * 10.0 ** draw(st.floats(-spread / 2, spread / 2))
            kind = draw(st.integers(0, 9))
            if kind <= 2 and len(out) <= k - 2:
                ang = draw(st.floats(0.05, math.pi / 2 - 0.05))
                z = mag * complex(-math.cos(ang) if kind < 2 else math.cos(ang), math.sin(ang))
                out += [z, z.conjugate()]
            elif kind == 3:
                out.append(0.0)  # an exact integrator (or differentiator)
            else:
                out.append(-mag if kind < 8 else mag)
        return out

    gain = 10.0 ** draw(st.floats(-15, 15)) * draw(st.sampled_from([1.0, -1.0]))
    num = gain * np.atleast_1d(np.real(np.poly(roots(m))))
    return num, np.real(np.poly(roots(n)))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_spread_plants())
def test_gain_intervals_against_exact_arithmetic(plant):
    num, den = plant
    ref = exact_stable_intervals(num, den)
    got = stable_gain_intervals(num, den)
    if marginal_intervals(ref, 1e-6):
        return  # narrower than double precision resolves: only flagged, not compared
    _same_intervals(got, ref, rtol=1e-8)


def test_exact_hurwitz_against_sympy_determinants():
    from exact import _is_hurwitz, _rat

    rng = np.random.default_rng(3)
    for _ in range(60):
        p = np.real(np.poly(rng.normal(-0.3, 1.0, rng.integers(1, 7)) * 10.0 ** rng.uniform(-8, 8)))
        assert hurwitz_exact(p) == _is_hurwitz([_rat(x) for x in p])


# -- one axis-crossing routine: explain and trace agree -----------------------------------------

_FOUR = {
    # Routh by hand (common practice) for each: only (s-1)/(s(s+2)) has a crossing at a
    # non-zero gain, s^2 + (2 + K) s - K at K = -2, w = sqrt(2); the others have their
    # axis roots at K = 0 only (open-loop poles), which neither command lists as crossings
    "1/s^2": ([1.0], [1.0, 0.0, 0.0], []),
    "s(s^2+4)": ([1.0], [1.0, 0.0, 4.0, 0.0], []),
    "(s+1)/(s(s^2+4))": ([1.0, 1.0], [1.0, 0.0, 4.0, 0.0], []),
    "(s-1)/(s(s+2))": ([1.0, -1.0], [1.0, 2.0, 0.0], [(-2.0, math.sqrt(2.0))]),
}


@pytest.mark.parametrize("name", list(_FOUR))
def test_explain_and_trace_list_the_same_crossings(name):
    num, den, expected = _FOUR[name]
    tr = trace_locus(num, den)
    from_trace = sorted((c.gain, c.frequency) for c in tr.positive_points.crossings
                        + tr.negative_points.crossings)
    prob = problem_from_text(f"[plant]\nnumerator = {num}\ndenominator = {den}\n")
    e = explain_problem(prob)
    from_explain = sorted((c["gain"], c["frequency"])
                          for c in e.to_json()["proportional"]["imaginary_axis_crossings"])
    assert from_trace == from_explain
    assert len(from_trace) == len(expected)
    for (k, w), (k0, w0) in zip(from_trace, expected, strict=True):
        assert k == pytest.approx(k0, rel=1e-12) and w == pytest.approx(w0, rel=1e-12)


def test_crossings_of_a_fast_plant_scale_with_it():
    # 1/(s(s+1)(s+2)) crosses at K = 6, w = sqrt(2) (Routh by hand); in time units a
    # thousand times faster, s -> s/1000, the crossing is at w = 1000 sqrt(2), same K
    a = 1e3
    num, den = [a ** 3], np.poly([0.0, -a, -2 * a])
    (cr,) = locus_facts(num, den).positive.crossings
    assert cr.gain == pytest.approx(6.0, rel=1e-12)
    assert cr.frequency == pytest.approx(a * math.sqrt(2.0), rel=1e-12)


def test_asymptote_centroid_of_a_scaled_plant_against_fractions():
    # 1e15 (s + 3e4) / ((s + 1e5)^3 (s + 2e5)): coefficients up to 2e20
    num = 1e15 * np.array([1.0, 3e4])
    den = np.real(np.poly([-1e5, -1e5, -1e5, -2e5]))
    n = [Fraction(float(x)) for x in num]
    d = [Fraction(float(x)) for x in den]
    centroid = (-d[1] / d[0] + n[1] / n[0]) / (len(d) - len(n))
    a = trace_locus(num, den).asymptotes
    assert a.centroid == pytest.approx(float(centroid), rel=1e-12)
    assert a.angles_deg == pytest.approx((60.0, 180.0, 300.0))


def test_one_gain_at():
    # K = -D(s)/N(s) (Evans 1950, magnitude condition) by numpy.polyval; complex infinity
    # at a zero of N only, nan where N and D share a root
    num, den = [1.0, 2.0], [1.0, 2.0, 3.0, 0.0]
    s = np.array([-1 + 2j, -0.5, 0.5j])
    assert special_gain_at is gain_at  # one implementation
    for f in (gain_at, special_gain_at):
        assert f(num, den, s) == pytest.approx(-np.polyval(den, s) / np.polyval(num, s))
        assert f(num, den, -2.0) == complex(np.inf)
        assert np.isnan(f([1.0, 2.0], np.poly([-2.0, -1.0]), -2.0))
    # a fast loop neither overflows nor loses digits: s = 1e5 j on 1e15/(s+1e5)^3
    k = gain_at([1e15], np.poly([-1e5] * 3), 1e5j)
    assert k == pytest.approx(-((1e5j + 1e5) ** 3) / 1e15, rel=1e-14)


def test_closed_loop_roots_of_a_slow_loop_against_mpmath():
    num, den = [2e-13], np.poly([-1e-4, -3e-4 + 2e-4j, -3e-4 - 2e-4j, -7e-4])
    for k in (0.5, 30.0, 400.0):
        got = closed_loop_roots(num, den, [k])[0]
        ref = mp_roots(np.polyadd(den, k * np.asarray(num)))
        for r in ref:
            assert np.min(np.abs(got - r)) <= 1e-10 * abs(r)


# -- near-cancelled right-half-plane pairs --------------------------------------------------------

@pytest.mark.parametrize("delta", [1e-5, 3e-6, 1e-6, -3e-6, -1e-5])
def test_near_cancelled_rhp_pair_is_flagged_not_flipped_silently(delta):
    # (s-1)/((s-1-delta)^3 (s+3)): three real poles at 1 + delta; between the RHP zeros 1
    # and infinity there are 3 of them when delta > 0 (parity interlacing fails), 0 when
    # delta < 0 (it holds) -- D. C. Youla, J. J. Bongiorno and C. N. Lu, Automatica 10, 1974.
    # Rounding splits a triple root by about eps^(1/3) ~ 6e-6, so some of these cannot be
    # decided in double precision: the verdict must then say it is uncertain.
    den = np.polymul(np.poly([1.0 + delta] * 3), [1.0, 3.0])
    par = parity_interlacing([1.0, -1.0], den)
    truth = delta < 0
    assert par.holds == truth or par.uncertain
    assert par.uncertain  # every case here is within the rounding of the triple root


def test_well_separated_rhp_pair_is_certain():
    # (s-1)/((s-2)(s+3)): pole 2 between the zeros 1 and infinity, far from either
    par = parity_interlacing([1.0, -1.0], np.poly([2.0, -3.0]))
    assert not par.holds and not par.uncertain


def test_explain_json_says_when_strong_stabilizability_is_uncertain():
    den = [float(x) for x in np.polymul(np.poly([1.0 + 3e-6] * 3), [1.0, 3.0])]
    e = explain_problem(problem_from_text(f"[plant]\nnumerator = [1.0, -1.0]\ndenominator = {den}\n"))
    doc = e.to_json()
    assert doc["strongly_stabilizable_uncertain"] is True
    assert doc["facts"]["parity_interlacing"]["numerically_uncertain"] is True
    assert any("Numerically uncertain" in s for s in doc["fact_sentences"])


def test_common_roots_relative_to_their_own_size():
    # a stable cancellation at 1e-7 rad/s is found; distinct roots 1e-7 and 2e-7 are not merged
    a, b = np.poly([-1e-7, -5.0]), np.poly([-1e-7, -3.0])
    assert common_roots(a, b) == [pytest.approx(-1e-7, rel=1e-9)]
    assert common_roots(np.poly([-1e-7]), np.poly([-2e-7])) == []


# -- the design pipeline at 1e5 and 1e-4 rad/s ---------------------------------------------------

def _scaled_problem(w: float):
    # 10/((s+1)(s+2)(s+5)) in time units 1/w: every frequency times w, every time over w
    num = [float(10.0 * w ** 3)]
    den = [float(x) for x in np.poly([-w, -2 * w, -5 * w])]
    return problem_from_text(
        f"[plant]\nnumerator = {num}\ndenominator = {den}\n[requirements]\n"
        f"max_overshoot_percent = 10.0\nmax_settling_time = {3.0 / w!r}\n"
        f"min_phase_margin_deg = 45.0\nmax_steady_state_error = 0.0\n"
        f'[search]\nstructures = ["PI"]\ntime_budget = 3.0\nkeep = 3\nseed = 2\n'
        f"max_frequency = {1000.0 * w!r}\n")


@pytest.mark.parametrize("w", [1e5, 1e-4])
def test_design_of_a_fast_and_a_slow_plant(w):
    from synth.design import run_design

    prob = _scaled_problem(w)
    doc = run_design(prob).to_json()
    feasible = [d for d in doc["designs"] if d["feasible"]]
    assert feasible
    for d in feasible:
        nc = np.asarray(d["compensator"]["numerator"], float)
        dc = np.asarray(d["compensator"]["denominator"], float)
        char = np.polyadd(np.polymul(dc, prob.plant.den), np.polymul(nc, prob.plant.num))
        # the characteristic polynomial in z = s / w: coefficient i times w^-(n - i)
        deg = char.size - 1
        scaled = char / w ** np.arange(deg, -1, -1, dtype=float)
        r = np.roots(scaled / scaled[0])
        assert np.max(r.real) < 0
        # the settling time scales with the plant: of the order of 3 / w
        assert d["metrics"]["settling_time"] <= 3.0 / w


@pytest.mark.parametrize("w", [1e5, 1.0, 1e-4])
def test_batch_screen_of_a_scaled_plant(w):
    # 10/((s+1)(s+2)(s+5)) under gain k: s^3 + 8 s^2 + 17 s + 10 (1 + k), stable for
    # -1 < k < 12.6 (Routh by hand: 8 * 17 > 10 (1 + k)); the same at every time scale
    from synth.verify.screening import screen_batch

    prob = _scaled_problem(w)
    ks = np.array([-1.5, -0.9, 0.5, 5.0, 12.5, 12.7, 40.0])
    res = screen_batch(prob, ks[:, None], np.ones((ks.size, 1)))
    assert res.stable.tolist() == [bool(-1 < k < 12.6) for k in ks]


def test_fifth_order_plant_keeps_its_high_gain_band():
    # found by a random search against exact arithmetic: the engine before scaling
    # reported only (-0.8726, 44.40) and missed the band K > 1155.85 entirely
    num = [42212.93572648483, 425625912.3169803, 1583087545237.7056, 45843122838931.24]
    den = [1.0, 13172.063486303005, 37456215.200767875, 7723046669.9187765,
           1827511777537.6611, 125773969066360.05]
    ref = exact_stable_intervals(num, den)
    assert len(ref) == 2 and ref[1][1] is None
    _same_intervals(stable_gain_intervals(num, den), ref, rtol=1e-9)
