"""Exact special points of the root locus (synth.locus.special).

External references used here:

* worked examples of K. Ogata, *Modern Control Engineering* (root-locus
  chapter), quoted from memory, each re-checked numerically in the test:
  - K/(s(s+1)(s+2)): imaginary-axis crossing at w = sqrt(2) with K = 6,
    breakaway at s = -0.4226 with K = 0.3849;
  - K/(s(s+3)(s^2+2s+2)): crossing at w = 1.095 with K = 8.16, breakaway near
    s = -2.3, departure angle -71.6 deg at the pole -1+j;
  - K/(s(s+4)(s^2+4s+20)): breakaway points s = -2 and s = -2 +/- j2.45,
    crossing at w = sqrt(10) with K = 260;
  - K(s+2)/(s^2+2s+3): departure angle about 145 deg at -1+j sqrt(2),
    break-in point s = -3.732;
* numpy.roots and numpy.linalg.eigvals (closed-loop roots at the reported
  gains), numpy.polyval (the magnitude condition);
* facts of the trade (common practice): the asymptote rules
  (centroid = (sum of poles - sum of zeros)/(n - m), angles (180 + 360 q)/(n - m)
  for K > 0 and 360 q/(n - m) for K < 0), the real-axis rule (a real point is on
  the K > 0 locus when an odd number of real poles and zeros lie to its right),
  a real-axis segment between two poles holds a breakaway point, a triple pole
  under positive gain leaves at 60, 180 and -60 degrees.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from synth.errors import InputError
from synth.locus.special import (
    arrival_angles,
    asymptotes,
    axis_crossings,
    breakaway_points,
    departure_angles,
    gain_at,
    locus_facts,
    real_axis_segments,
)

SETTINGS = settings(max_examples=40, deadline=None, derandomize=True)


def np_roots(num, den, k):
    """Closed-loop roots of den + k num from numpy.roots (the reference)."""
    return np.roots(np.polyadd(np.asarray(den, float), k * np.asarray(num, float)))


def nearest(values, target):
    values = np.asarray(values)
    return float(np.min(np.abs(values - target)))


# ---------------------------------------------------------------------------
# published worked examples
# ---------------------------------------------------------------------------


def test_third_order_textbook_example():
    # Ogata, Modern Control Engineering (from memory): K/(s(s+1)(s+2))
    num, den = [1.0], np.poly([0, -1, -2])
    cr = axis_crossings(num, den)
    assert len(cr) == 1
    assert cr[0].frequency == pytest.approx(math.sqrt(2), rel=1e-9)
    assert cr[0].gain == pytest.approx(6.0, rel=1e-9)
    assert cr[0].toward_right is True
    # numpy.roots: at K = 6 two roots sit on the axis at +/- j sqrt(2)
    assert nearest(np_roots(num, den, 6.0), 1j * math.sqrt(2)) < 1e-7
    bp = breakaway_points(num, den)
    assert len(bp) == 1
    assert bp[0].s.real == pytest.approx(-0.4226, abs=5e-5)
    assert bp[0].s.imag == 0.0
    assert bp[0].gain == pytest.approx(0.3849, abs=5e-5)
    assert bp[0].kind == "breakaway"
    # numpy.roots: a double root there (two roots within sqrt(eps)-ish of s)
    r = np_roots(num, den, bp[0].gain)
    assert np.sort(np.abs(r - bp[0].s))[1] < 1e-6
    a = asymptotes(num, den)
    assert a.centroid == pytest.approx(-1.0)
    assert a.angles_deg == pytest.approx((60.0, 180.0, 300.0))


def test_fourth_order_textbook_example():
    # Ogata, Modern Control Engineering (from memory): K/(s(s+3)(s^2+2s+2))
    num, den = [1.0], np.poly([0, -3, -1 + 1j, -1 - 1j])
    cr = axis_crossings(num, den)
    assert len(cr) == 1
    assert cr[0].frequency == pytest.approx(1.095, abs=1e-3)
    assert cr[0].gain == pytest.approx(8.16, abs=1e-3)
    # independent check with numpy: Routh gives K = 8.16 and w^2 = 6/5
    assert cr[0].frequency == pytest.approx(math.sqrt(1.2), rel=1e-9)
    assert nearest(np_roots(num, den, cr[0].gain), 1j * cr[0].frequency) < 1e-7
    bp = breakaway_points(num, den)
    assert len(bp) == 1
    assert bp[0].s.real == pytest.approx(-2.29, abs=0.01)
    r = np_roots(num, den, bp[0].gain)
    assert np.sort(np.abs(r - bp[0].s))[1] < 1e-6
    dep = {round(a.point.imag): a.angles_deg for a in departure_angles(num, den)
           if a.point.imag != 0}
    assert dep[1] == pytest.approx((-71.6,), abs=0.05)
    assert dep[-1] == pytest.approx((71.6,), abs=0.05)


def test_complex_breakaway_textbook_example():
    # Ogata, Modern Control Engineering (from memory): K/(s(s+4)(s^2+4s+20))
    num, den = [1.0], np.poly([0, -4, -2 + 4j, -2 - 4j])
    bp = breakaway_points(num, den)
    pts = sorted(bp, key=lambda b: b.s.imag)
    assert [b.kind for b in pts] == ["complex", "breakaway", "complex"]
    assert pts[1].s == pytest.approx(-2.0, abs=1e-9)
    assert pts[1].gain == pytest.approx(64.0, rel=1e-9)
    assert pts[2].s == pytest.approx(-2 + 2.4495j, abs=1e-4)
    assert pts[2].gain == pytest.approx(100.0, rel=1e-9)
    for b in pts:  # numpy.roots: double roots at each reported point
        r = np_roots(num, den, b.gain)
        assert np.sort(np.abs(r - b.s))[1] < 1e-6
    cr = axis_crossings(num, den)
    assert len(cr) == 1
    assert cr[0].frequency == pytest.approx(math.sqrt(10), rel=1e-9)
    assert cr[0].gain == pytest.approx(260.0, rel=1e-9)


def test_departure_angle_textbook_example():
    # Ogata, Modern Control Engineering (from memory): K(s+2)/(s^2+2s+3)
    num, den = [1.0, 2.0], [1.0, 2.0, 3.0]
    dep = [a for a in departure_angles(num, den) if a.point.imag > 0][0]
    assert dep.point == pytest.approx(-1 + 1j * math.sqrt(2))
    assert dep.angles_deg[0] == pytest.approx(145.0, abs=0.5)
    # follow the locus with numpy.roots for a small gain: the direction of motion
    k = 1e-6
    r = np_roots(num, den, k)
    moved = r[np.argmin(np.abs(r - dep.point))] - dep.point
    assert math.degrees(np.angle(moved)) == pytest.approx(dep.angles_deg[0], abs=0.01)
    bp = breakaway_points(num, den)
    assert len(bp) == 1 and bp[0].kind == "break-in"
    assert bp[0].s.real == pytest.approx(-3.732, abs=1e-3)
    arr = arrival_angles(num, den)
    assert arr[0].angles_deg == (180.0,)


# ---------------------------------------------------------------------------
# robustness cases, each checked with numpy
# ---------------------------------------------------------------------------


def test_triple_pole():
    # fact of the trade: a triple pole leaves at 60, 180, -60 deg under K > 0;
    # (s+1)^3 + K crosses the axis at w = sqrt(3), K = 8 (Routh, common practice)
    num, den = [1.0], np.poly([-1, -1, -1])
    f = locus_facts(num, den)
    assert f.pole_mult.tolist() == [3]
    assert f.poles[0] == pytest.approx(-1.0, abs=1e-12)
    assert sorted(f.positive.departures[0].angles_deg) == pytest.approx([-60.0, 60.0, 180.0])
    assert sorted(f.negative.departures[0].angles_deg) == pytest.approx([-120.0, 0.0, 120.0])
    cr = f.positive.crossings
    assert len(cr) == 1 and cr[0].gain == pytest.approx(8.0) and cr[0].frequency == pytest.approx(3**0.5)
    assert f.positive.breakaways == ()  # the roots meet only at K = 0


def test_double_pole_at_origin_and_four_way_meeting():
    # K/(s^2 (s+8)): the K > 0 locus never crosses into the left half-plane
    num, den = [4.0], [1.0, 8.0, 0.0, 0.0]
    f = locus_facts(num, den)
    assert f.pole_mult[np.argmin(np.abs(f.poles))] == 2
    assert f.positive.crossings == ()
    assert sorted(a for p in f.positive.departures if p.point == 0 for a in p.angles_deg) == \
        pytest.approx([-90.0, 90.0])
    # K/((s+1)^2 - 1)((s+1)^2 + 1)): four roots meet at s = -1 at K = 1
    den2 = np.poly([0, -2, -1 + 1j, -1 - 1j])
    bp = breakaway_points([1.0], den2)
    assert len(bp) == 1
    assert bp[0].s == pytest.approx(-1.0, abs=1e-6) and bp[0].gain == pytest.approx(1.0, rel=1e-9)
    assert bp[0].roots_meeting == 4
    r = np_roots([1.0], den2, 1.0)
    assert np.max(np.abs(r + 1.0)) < 1e-3  # numpy.roots: a fourfold root (perturbed)


def test_equal_degrees_and_near_cancellation():
    # m == n: no asymptotes; check the special points with numpy.roots
    num, den = np.poly([-1, -3]), np.poly([-2, -4])
    a = asymptotes(num, den)
    assert a.centroid is None and a.angles_deg == ()
    for b in breakaway_points(num, den) + breakaway_points(num, den, negative=True):
        r = np_roots(num, den, b.gain)
        assert np.sort(np.abs(r - b.s))[1] < 1e-6
    # a near pole-zero pair: (s + 1.001)/((s+1)(s+5)(s+10))
    num, den = [1.0, 1.001], np.poly([-1, -5, -10])
    f = locus_facts(num, den)
    assert f.poles.size == 3 and f.zeros.size == 1
    for b in f.positive.breakaways:
        r = np_roots(num, den, b.gain)
        assert np.sort(np.abs(r - b.s))[1] < 1e-6 * max(1, abs(b.s))
    for c in f.positive.crossings:
        assert nearest(np_roots(num, den, c.gain), 1j * c.frequency) < 1e-6 * max(1, c.frequency)


def test_poles_over_many_decades():
    num, den = [1.0], np.poly([-0.01, -1.0, -100.0, -1e4])
    f = locus_facts(num, den)
    assert np.sort(f.poles.real) == pytest.approx([-1e4, -100, -1, -0.01], rel=1e-9)
    bp = f.positive.breakaways
    assert len(bp) >= 2
    for b in bp:
        r = np_roots(num, den, b.gain)
        # relative double-root check with numpy.roots
        assert np.sort(np.abs(r - b.s))[1] < 1e-5 * abs(b.s)
    for c in f.positive.crossings:
        r = np_roots(num, den, c.gain)
        assert nearest(r, 1j * c.frequency) < 1e-6 * c.frequency


def test_gain_at_matches_magnitude_condition():
    num, den = [1.0, 2.0], [1.0, 2.0, 3.0, 0.0]
    s = np.array([-1 + 2j, -0.5, 0.5j])
    k = gain_at(num, den, s)
    assert k == pytest.approx(-np.polyval(den, s) / np.polyval(num, s))
    # numpy.roots: with K = gain_at(s) real, s is a closed-loop root
    assert nearest(np_roots(num, den, k[1].real), -0.5) < 1e-9
    assert gain_at(num, den, -2.0) == complex(np.inf)


@pytest.mark.parametrize("num,den", [
    ([1.0, 0.0, 0.0], [1.0, 1.0]),  # improper
    ([0.0], [1.0, 1.0]),            # zero numerator
    ([1.0], [float("nan"), 1.0]),   # not finite
    ([1.0], [2.0]),                 # no poles
    ([], [1.0, 1.0]),               # empty
])
def test_bad_loops_raise_input_error(num, den):
    with pytest.raises(InputError):
        locus_facts(num, den)


# ---------------------------------------------------------------------------
# property tests on random plants (facts of the trade, checked with numpy)
# ---------------------------------------------------------------------------


@st.composite
def plants(draw, min_excess=1):
    """Random monic plants with well separated poles and zeros (steps of 0.25)."""
    grid = st.integers(-40, 8).map(lambda k: k / 4)
    imag = st.integers(1, 24).map(lambda k: k / 4)
    n_real = draw(st.integers(0, 4))
    n_pair = draw(st.integers(0, 2))
    assume(n_real + 2 * n_pair >= 1)
    poles = [draw(grid) + 0j for _ in range(n_real)]
    for _ in range(n_pair):
        c = complex(draw(grid), draw(imag))
        poles += [c, c.conjugate()]
    n = len(poles)
    m = draw(st.integers(0, max(n - min_excess, 0)))
    zeros: list[complex] = []
    while len(zeros) < m:
        if m - len(zeros) >= 2 and draw(st.booleans()):
            c = complex(draw(grid), draw(imag))
            zeros += [c, c.conjugate()]
        else:
            zeros.append(draw(grid) + 0j)
    pts = np.asarray(poles + zeros)
    gaps = np.abs(pts[:, None] - pts[None, :]) + np.eye(pts.size) * 10
    assume(np.min(gaps) >= 0.2)
    gain = draw(st.sampled_from([0.5, 1.0, 3.0]))
    num = gain * np.real(np.poly(zeros)) if zeros else np.array([gain])
    den = np.real(np.poly(poles))
    return num, den, np.asarray(poles), np.asarray(zeros, dtype=complex)


@SETTINGS
@given(plants())
def test_asymptote_rules(plant):
    num, den, poles, zeros = plant
    excess = poles.size - zeros.size
    for negative in (False, True):
        a = asymptotes(num, den, negative=negative)
        # fact of the trade: centroid and angles, with sums from numpy.roots
        centroid = (np.sum(np.roots(den)).real - (np.sum(np.roots(num)).real if zeros.size else 0)) / excess
        assert a.centroid == pytest.approx(centroid, abs=1e-8 * (1 + abs(centroid)))
        q = np.arange(excess)
        want = (360.0 * q / excess) if negative else (180.0 + 360.0 * q) / excess
        assert a.angles_deg == pytest.approx(tuple(np.sort(want)))
        # numpy.roots at a huge gain: the far roots head along the asymptotes
        radius = 1e3 * (1 + np.max(np.abs(np.concatenate([poles, zeros]))))
        k = (-1 if negative else 1) * radius**excess / num[0]
        r = np_roots(num, den, k)
        far = r[np.argsort(-np.abs(r))[:excess]]
        ang = np.degrees(np.angle(far - a.centroid)) % 360.0
        for x in ang:
            d = np.min(np.abs((np.asarray(a.angles_deg) - x + 180.0) % 360.0 - 180.0))
            assert d < 0.5


@SETTINGS
@given(plants(), st.lists(st.integers(-480, 120), min_size=5, max_size=10))
def test_real_axis_rule(plant, xs):
    num, den, poles, zeros = plant
    real_pts = np.concatenate([poles, zeros])
    real_pts = real_pts[np.abs(real_pts.imag) < 1e-12].real
    pos = real_axis_segments(num, den)
    neg = real_axis_segments(num, den, negative=True)
    for x in np.asarray(xs) / 40.0 + 0.0123:  # test points off the grid of poles and zeros
        odd = int(np.sum(real_pts > x)) % 2 == 1  # fact of the trade (monic, K > 0)
        k = -np.polyval(den, x) / np.polyval(num, x)  # numpy.polyval: K(x) > 0 on the locus
        on_pos = any(s.contains(x) for s in pos)
        on_neg = any(s.contains(x) for s in neg)
        assert on_pos == odd == (k > 0)
        assert on_neg == (not odd)


@SETTINGS
@given(plants())
def test_breakaways_are_multiple_roots_and_fill_pole_pairs(plant):
    num, den, poles, zeros = plant
    for negative in (False, True):
        pts = breakaway_points(num, den, negative=negative)
        for b in pts:
            assert (b.gain > 0) != negative
            r = np_roots(num, den, b.gain)  # numpy.roots: >= 2 roots at s
            assert np.sort(np.abs(r - b.s))[1] < 1e-5 * (1 + abs(b.s))
    # common practice: a locus segment between two real poles holds a breakaway point
    real_poles = np.sort(poles[np.abs(poles.imag) < 1e-12].real)
    real_zeros = zeros[np.abs(zeros.imag) < 1e-12].real
    pts = breakaway_points(num, den)
    for seg in real_axis_segments(num, den):
        if np.isfinite(seg.left) and np.isfinite(seg.right) and \
                np.min(np.abs(real_poles - seg.left)) < 1e-9 and \
                np.min(np.abs(real_poles - seg.right)) < 1e-9 and \
                not np.any((real_zeros > seg.left) & (real_zeros < seg.right)) and \
                not np.any((real_poles > seg.left + 1e-9) & (real_poles < seg.right - 1e-9)):
            assert any(b.s.imag == 0 and seg.left < b.s.real < seg.right for b in pts)


@SETTINGS
@given(plants(min_excess=0))
def test_axis_crossings_against_eigenvalues(plant):
    num, den, poles, zeros = plant
    for negative in (False, True):
        crs = axis_crossings(num, den, negative=negative)
        gains = []
        for c in crs:
            assert c.frequency >= 0 and (c.gain > 0) != negative
            r = np_roots(num, den, c.gain)
            assert nearest(r, 1j * c.frequency) < 1e-6 * (1 + c.frequency)
            gains.append(abs(c.gain))
        # numpy.linalg.eigvals at dense gains: the count of right-half-plane roots
        # changes only across a reported crossing gain (or where the degree drops)
        sign = -1.0 if negative else 1.0
        ks = sign * np.geomspace(1e-3, 1e4, 400)
        npad = np.concatenate([np.zeros(den.size - num.size), num])
        polys = den[None, :] + ks[:, None] * npad[None, :]
        keep = np.abs(polys[:, 0]) > 1e-6 * np.max(np.abs(polys), axis=1)
        counts = []
        for p in polys:
            q = np.trim_zeros(np.where(np.abs(p) > 1e-12 * np.max(np.abs(p)), p, 0.0), "f")
            comp = np.zeros((q.size - 1, q.size - 1))
            comp[0] = -q[1:] / q[0]
            comp[np.arange(1, q.size - 1), np.arange(q.size - 2)] = 1.0
            counts.append(int(np.sum(np.linalg.eigvals(comp).real > 0)) if q.size > 1 else 0)
        counts = np.asarray(counts)
        drop = abs(den[0] / num[0]) if num.size == den.size else None
        marks = np.asarray(gains + ([drop] if drop is not None else []))
        for i in np.flatnonzero(np.diff(counts) != 0):
            if not (keep[i] and keep[i + 1]):
                continue
            lo, hi = abs(ks[i]), abs(ks[i + 1])
            assert np.any((marks >= lo * (1 - 1e-9)) & (marks <= hi * (1 + 1e-9))), (lo, hi, marks)


@SETTINGS
@given(plants())
def test_departure_angles_follow_the_locus(plant):
    num, den, poles, zeros = plant
    f = locus_facts(num, den)
    spread = 1e-5
    for d in f.positive.departures:
        if d.multiplicity != 1:
            continue
        # numpy.roots: the root leaving this pole for a small gain moves along the angle
        k = spread / max(abs(np.polyval(num, d.point) / np.polyval(np.polyder(den), d.point)), 1e-12)
        r = np_roots(num, den, k)
        moved = r[np.argmin(np.abs(r - d.point))] - d.point
        got = math.degrees(np.angle(moved))
        diff = (got - d.angles_deg[0] + 180.0) % 360.0 - 180.0
        assert abs(diff) < 0.2
