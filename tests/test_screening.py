"""Tests of the eigenvalue-free screening kernel (synth.numerics.screening).

External references used here:

* numpy.linalg.eigvals of the companion matrix (the eigenvalue verdict that
  the kernel must reproduce away from the boundary band);
* numpy.polyval, numpy.polymul (polynomial arithmetic for the shift and the
  rotation);
* worked Routh examples from K. Ogata, "Modern Control Engineering"
  (the chapter on Routh's stability criterion), from memory;
* facts of the trade (common practice): a Hurwitz polynomial has all
  coefficients of one sign; a cubic a0 s^3 + a1 s^2 + a2 s + a3 with positive
  coefficients is Hurwitz iff a1 a2 > a0 a3.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from synth.errors import InputError
from synth.numerics.screening import (
    hurwitz_batch,
    in_region_batch,
    rotate_batch,
    rotated_product_batch,
    taylor_shift_batch,
)

# Boundary band used by the agreement tests: a sample is skipped when some
# eigenvalue lies closer to the region boundary than BAND * (|s| + sigma).
# The module docstring of synth.numerics.screening documents the kernel's tolerance;
# agreement was measured down to about 1e-5 for degrees up to 12.
BAND = 1e-4


@dataclass(frozen=True)
class Reg:
    """Stand-in with the two attributes the kernel reads (duck typing)."""

    sigma: float = 0.0
    zeta: float = 0.0


def companion_eigs(p: np.ndarray) -> np.ndarray:
    """Roots of p as eigenvalues of its companion matrix (numpy.linalg.eigvals)."""
    p = np.trim_zeros(np.asarray(p, dtype=float), "f")
    n = p.size - 1
    if n == 0:
        return np.zeros(0, dtype=complex)
    comp = np.zeros((n, n))
    comp[0, :] = -p[1:] / p[0]
    comp[1:, :-1] = np.eye(n - 1)
    return np.linalg.eigvals(comp)


def signed_margin(roots: np.ndarray, sigma: float, zeta: float) -> np.ndarray:
    """Signed distance of each root to the region boundary (> 0 inside)."""
    d1 = -roots.real - sigma
    if zeta > 0.0:
        phi = math.acos(zeta)
        d2 = -roots.real * math.sin(phi) - np.abs(roots.imag) * math.cos(phi)
    else:
        d2 = -roots.real
    return np.minimum(d1, d2)


def eig_verdict(p: np.ndarray, sigma: float, zeta: float) -> tuple[bool, bool]:
    """(in region by eigenvalues, inside the boundary band)."""
    r = companion_eigs(p)
    if r.size == 0:
        return True, False
    m = signed_margin(r, sigma, zeta)
    near = bool(np.any(np.abs(m) <= BAND * (np.abs(r) + sigma)))
    return bool(np.all(m > 0.0)), near


# ----------------------------------------------------------------------------
# hypothesis strategies: polynomials built from roots spread over two decades
# ----------------------------------------------------------------------------

magnitudes = st.floats(min_value=0.1, max_value=10.0)
angles = st.floats(min_value=0.0, max_value=math.pi)


@st.composite
def root_sets(draw, max_degree: int = 12):
    degree = draw(st.integers(min_value=1, max_value=max_degree))
    roots: list[complex] = []
    while len(roots) < degree:
        mag = draw(magnitudes)
        if len(roots) <= degree - 2 and draw(st.booleans()):
            s = mag * complex(math.cos(draw(angles)), math.sin(draw(angles)))
            roots += [s, s.conjugate()]
        else:
            roots.append(mag * draw(st.sampled_from([-1.0, -1.0, -1.0, 1.0])))
    return roots


@st.composite
def padded_batches(draw):
    """A batch of 1..6 polynomials of mixed degree, left-padded, with a region."""
    sets = draw(st.lists(root_sets(), min_size=1, max_size=6))
    polys = []
    for rs in sets:
        gain = draw(st.floats(min_value=0.05, max_value=20.0)) * draw(st.sampled_from([-1, 1]))
        polys.append(gain * np.poly(rs).real)
    width = max(p.size for p in polys) + draw(st.integers(min_value=0, max_value=2))
    batch = np.zeros((len(polys), width))
    for i, p in enumerate(polys):
        batch[i, width - p.size :] = p
    sigma = draw(st.sampled_from([0.0, 0.0, 0.05, 0.3, 1.0, 2.5]))
    zeta = draw(st.sampled_from([0.0, 0.0, 0.2, 0.5, 0.707, 0.9]))
    return batch, sigma, zeta


FAST = settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@FAST
@given(padded_batches())
def test_agrees_with_eigvals_away_from_band(data):
    """Kernel verdict == numpy.linalg.eigvals verdict outside the boundary band."""
    batch, sigma, zeta = data
    expected, near = zip(*(eig_verdict(p, sigma, zeta) for p in batch), strict=True)
    assume(not any(near))
    got = in_region_batch(batch, Reg(sigma, zeta))
    assert got.tolist() == list(expected)


@FAST
@given(padded_batches())
def test_hurwitz_agrees_with_eigvals(data):
    """hurwitz_batch == 'all eigenvalues in the open left half plane' (numpy.linalg.eigvals)."""
    batch, _, _ = data
    expected, near = zip(*(eig_verdict(p, 0.0, 0.0) for p in batch), strict=True)
    assume(not any(near))
    assert hurwitz_batch(batch).tolist() == list(expected)


def test_boundary_pairs_near_the_edge():
    """A root pair placed just inside / just outside each edge is classified right.

    The truth comes from the constructed roots themselves (numpy.poly builds
    the polynomial); relative offsets of 1e-3 lie well outside the band.
    """
    rng = np.random.default_rng(7)
    rows, truth, regions = [], [], []
    for _ in range(400):
        degree = int(rng.integers(2, 11))
        sigma = float(rng.choice([0.0, 0.5, 1.5]))
        zeta = float(rng.choice([0.0, 0.3, 0.7]))
        phi = math.acos(zeta)
        roots = []
        while len(roots) < degree - 2:
            mag = math.exp(rng.uniform(math.log(0.2), math.log(8.0)))
            ang = rng.uniform(0.0, 0.85 * phi)
            roots.append(complex(-(sigma + mag * math.cos(ang)), 0.0))
        side = float(rng.choice([-1.0, 1.0]))
        mag = math.exp(rng.uniform(math.log(0.3), math.log(5.0)))
        if zeta == 0.0 or rng.random() < 0.5:
            y = mag if zeta == 0.0 else min(mag, 0.8 * sigma * math.tan(phi))
            s = complex(-sigma, y)
            s -= side * 1e-3 * abs(s) if abs(s) > 0 else side * 1e-3
        else:
            r0 = max(mag, 1.3 * sigma / math.cos(phi))
            s = r0 * complex(math.cos(math.pi - phi), math.sin(math.pi - phi))
            inward = complex(math.cos(math.pi / 2 - phi), math.sin(math.pi / 2 - phi))
            s += side * 1e-3 * abs(s) * inward
        roots += [s, s.conjugate()]
        roots = np.array(roots)
        rows.append(np.poly(roots).real)
        truth.append(bool(np.all(signed_margin(roots, sigma, zeta) > 0)))
        regions.append((sigma, zeta))
    for p, t, (sigma, zeta) in zip(rows, truth, regions, strict=True):
        assert bool(in_region_batch(p, Reg(sigma, zeta))) == t


# ----------------------------------------------------------------------------
# worked examples and facts of the trade
# ----------------------------------------------------------------------------


def test_routh_worked_examples():
    """Ogata, Modern Control Engineering, Routh examples (from memory).

    s^4 + 2s^3 + 3s^2 + 4s + 5: the first column 1, 2, 1, -6, 5 changes sign
    twice, so not stable. s^3 + 6s^2 + 11s + 6 = (s+1)(s+2)(s+3) is stable.
    """
    polys = np.array([[1, 2, 3, 4, 5], [0, 1, 6, 11, 6]], dtype=float)
    assert hurwitz_batch(polys).tolist() == [False, True]


def test_cubic_criterion_common_practice():
    """Cubic with positive coefficients is Hurwitz iff a1 a2 > a0 a3 (common practice)."""
    rng = np.random.default_rng(3)
    coeffs = rng.uniform(0.1, 5.0, size=(5000, 4))
    product_gap = coeffs[:, 1] * coeffs[:, 2] - coeffs[:, 0] * coeffs[:, 3]
    keep = np.abs(product_gap) > 1e-6 * np.abs(coeffs).max(axis=1) ** 2
    expected = product_gap[keep] > 0
    assert np.array_equal(hurwitz_batch(coeffs[keep]), expected)
    assert expected.any() and not expected.all()


def test_sign_pattern_necessary_condition():
    """A missing or sign-changed coefficient rules out Hurwitz (common practice)."""
    polys = np.array(
        [[1, 0, 2, 1], [1, 2, -1, 1], [1, 3, 3, 0], [-1, -3, -3, -1], [2, 6, 6, 2]],
        dtype=float,
    )
    assert hurwitz_batch(polys).tolist() == [False, False, False, True, True]


def test_sign_and_scale_do_not_matter():
    """p, -p and 1e-3 p have the same roots (numpy.roots fact) and the same verdict."""
    rng = np.random.default_rng(11)
    batch = rng.normal(size=(2000, 7))
    batch[:, 0] = np.abs(batch[:, 0]) + 0.1
    base = in_region_batch(batch, Reg(0.1, 0.2))
    assert np.array_equal(in_region_batch(-batch, Reg(0.1, 0.2)), base)
    assert np.array_equal(in_region_batch(1e-3 * batch, Reg(0.1, 0.2)), base)


def test_padding_equals_lower_degree():
    """Leading zeros are padding: [0, 0, 1, 3, 2] is s^2 + 3s + 2 (roots -1, -2)."""
    rows = np.array([[0, 0, 1, 3, 2], [0, 1, 0, 1, 0], [0, 0, 0, 0, 5], [0, 0, 0, 0, 0]], float)
    assert hurwitz_batch(rows).tolist() == [True, False, True, False]
    assert in_region_batch(rows, Reg(1.5, 0.0)).tolist() == [False, False, True, False]
    assert in_region_batch(rows, Reg(0.5, 0.0)).tolist() == [True, False, True, False]


def test_degenerate_rows():
    """Non-finite rows fail; a root at the origin is on the boundary (fails)."""
    rows = np.array([[1, 2, np.nan], [1, np.inf, 1], [1, 2, 0], [1, 2, 1]], float)
    assert hurwitz_batch(rows).tolist() == [False, False, False, True]
    # (s+1)^2 has damping exactly 1 and decay exactly 1: on the decay boundary
    assert in_region_batch(rows[3], Reg(1.0, 0.0)) == np.False_
    assert in_region_batch(rows[3], Reg(0.9, 0.99)) == np.True_


def test_imaginary_axis_pair_is_boundary():
    """s^2 + 1 (roots +-j, numpy.roots) sits on the imaginary axis: not Hurwitz."""
    assert not hurwitz_batch(np.array([1.0, 0.0, 1.0]))
    # (s^2 + 1)(s + 1): Routh row of zeros
    assert not hurwitz_batch(np.polymul([1.0, 0.0, 1.0], [1.0, 1.0]))


def test_nd_input_shape_preserved():
    batch = np.ones((3, 4, 3))
    assert hurwitz_batch(batch).shape == (3, 4)
    assert in_region_batch(batch, Reg()).shape == (3, 4)


def test_bad_input_raises_input_error():
    with pytest.raises(InputError):
        in_region_batch(np.ones((2, 3)), Reg(-1.0, 0.0))
    with pytest.raises(InputError):
        in_region_batch(np.ones((2, 3)), Reg(0.0, 1.0))
    with pytest.raises(InputError):
        in_region_batch(np.ones((2, 3)), object())
    with pytest.raises(InputError):
        in_region_batch(np.ones((2, 3)) * 1j, Reg())
    with pytest.raises(InputError):
        hurwitz_batch(np.zeros((2, 0)))
    with pytest.raises(InputError):
        hurwitz_batch([["a", "b"]])


# ----------------------------------------------------------------------------
# the two maps of the s-plane
# ----------------------------------------------------------------------------


@settings(max_examples=100, deadline=None)
@given(root_sets(max_degree=9), st.floats(min_value=-3.0, max_value=3.0))
def test_taylor_shift_matches_polyval(roots, a):
    """p(s + a) from the shift equals numpy.polyval(p, s + a) at sample points."""
    p = np.poly(roots).real
    shifted = taylor_shift_batch(p[None, :], a)[0]
    s = np.array([-1.3, 0.2, 0.7 + 0.4j, 2.0j])
    ref = np.polyval(p, s + a)
    scale = np.polyval(np.abs(p), np.abs(s) + abs(a)) + 1.0
    assert np.all(np.abs(np.polyval(shifted, s) - ref) <= 1e-9 * scale)


def test_taylor_shift_per_row_and_padding():
    """Per-row shifts; leading zeros stay zero (numpy.polyval check)."""
    batch = np.array([[0.0, 1.0, 3.0, 2.0], [1.0, -2.0, 0.5, 4.0]])
    a = np.array([0.5, -1.5])
    out = taylor_shift_batch(batch, a)
    assert out[0, 0] == 0.0
    for row, shifted, ai in zip(batch, out, a, strict=True):
        s = np.linspace(-2, 2, 7)
        assert np.allclose(np.polyval(shifted, s), np.polyval(row, s + ai))


@settings(max_examples=100, deadline=None)
@given(root_sets(max_degree=9), st.floats(min_value=0.0, max_value=1.4))
def test_rotation_and_product_match_numpy(roots, beta):
    """q(w) = p(w e^{j beta}) (numpy.polyval) and q * conj(q) (numpy.polymul)."""
    p = np.poly(roots).real
    q = rotate_batch(p, beta)
    w = np.array([0.3, -1.1 + 0.5j, 2.0j])
    ref = np.polyval(p, w * np.exp(1j * beta))
    scale = np.polyval(np.abs(p), np.abs(w)) + 1.0
    assert np.all(np.abs(np.polyval(q, w) - ref) <= 1e-10 * scale)
    prod = np.polymul(q, np.conj(q))
    assert np.allclose(rotated_product_batch(p, beta), prod.real, rtol=1e-10, atol=1e-10 * np.abs(prod).max())
    assert np.allclose(prod.imag, 0.0, atol=1e-9 * np.abs(prod).max())


def test_complex_hurwitz_via_conjugate_product():
    """Complex input: (w + 1 - 2j) is Hurwitz, (w - 0.5 + 3j) is not (roots by inspection)."""
    rows = np.array([[1.0, 1.0 - 2.0j], [1.0, -0.5 + 3.0j]])
    assert hurwitz_batch(rows).tolist() == [True, False]


def test_damping_sector_second_order_common_practice():
    """s^2 + 2 zeta wn s + wn^2 has damping zeta (common practice).

    With zeta = 0.6 the pair passes a 0.55 requirement and fails a 0.65 one.
    """
    p = np.array([1.0, 2 * 0.6 * 3.0, 9.0])
    assert in_region_batch(p, Reg(0.0, 0.55))
    assert not in_region_batch(p, Reg(0.0, 0.65))
    # decay rate zeta * wn = 1.8
    assert in_region_batch(p, Reg(1.7, 0.0))
    assert not in_region_batch(p, Reg(1.9, 0.0))
