"""Tests of convex synthesis on an affine closed-loop parametrisation.

External references used here:

* numpy.roots (closed-loop poles of every certified design) and the region
  inequalities Re s < -sigma, -Re s > zeta |s| (definition of damping,
  common practice);
* numpy.polyval (the positivity function Re[c~(jw) conj(d~(jw))] evaluated
  directly on a dense frequency grid, independently of the certificate
  polynomial the code returns) and numpy.linalg.eigvalsh (Gram matrices);
* scipy.optimize.lsq_linear (bounded least squares, the reference for the
  QP of place_poles_ls);
* the Routh-Hurwitz conditions for a quartic a0 s^4 + ... + a4 with positive
  coefficients: a1 a2 > a0 a3 and a1 a2 a3 > a0 a3^2 + a1^2 a4 (common
  practice);
* the necessary condition that a Hurwitz polynomial has positive
  coefficients (common practice), used to build a provably infeasible case.

The random plants below are invented test data.
"""

from __future__ import annotations

import math
import subprocess
import sys
from dataclasses import dataclass

import numpy as np
import pytest
from scipy.optimize import lsq_linear

from synth.errors import InputError
from synth.numerics.sos import (
    certified_region_design,
    place_poles_ls,
    spr_polynomial,
    target_polynomial,
)


@dataclass(frozen=True)
class Reg:
    sigma: float = 0.0
    zeta: float = 0.0


def in_region_by_roots(poly, sigma, zeta) -> bool:
    r = np.roots(poly)
    return bool(np.all(r.real < -sigma) and np.all(-r.real > zeta * np.abs(r)))


def affine_loop(num_g, den_g, den_c, num_deg):
    """c(s; x) = den_c den_g + (sum_k x_k s^k) num_g as (c0, M) (contract loop convention)."""
    c0 = np.polymul(den_c, den_g)
    n = c0.size - 1
    cols = []
    for k in range(num_deg, -1, -1):
        mono = np.zeros(num_deg + 1)
        mono[num_deg - k] = 1.0
        col = np.polymul(mono, num_g)
        cols.append(np.concatenate([np.zeros(n + 1 - col.size), col]))
    return c0, np.stack(cols, axis=1)


def random_problem(rng, kind):
    """A random plant and a lead (fixed pole) or PID (fixed derivative filter) loop.

    A random parameter x_true with a stable loop is drawn, and the region is
    set inside its closed-loop poles (numpy.roots), so a certified design
    exists for sure.
    """
    while True:
        def rand_poly(deg, allow_unstable):
            roots = []
            while len(roots) < deg:
                if deg - len(roots) >= 2 and rng.random() < 0.5:
                    s = complex(-rng.uniform(-0.5 if allow_unstable else 0.1, 3.0), rng.uniform(0.2, 3.0))
                    roots += [s, s.conjugate()]
                else:
                    roots.append(-rng.uniform(-1.0 if allow_unstable else 0.1, 4.0))
            return np.atleast_1d(np.poly(roots).real)

        den_g = rand_poly(int(rng.integers(1, 4)), True)
        num_g = rand_poly(int(rng.integers(0, 2)), False) * rng.uniform(0.5, 5.0)
        if kind == "lead":
            den_c, num_deg = np.array([1.0, rng.uniform(5.0, 20.0)]), 1
        else:
            den_c, num_deg = np.array([rng.uniform(0.02, 0.2), 1.0, 0.0]), 2
        if num_g.size + num_deg > den_g.size + den_c.size - 1:
            continue  # keep the loop proper
        c0, M = affine_loop(num_g, den_g, den_c, num_deg)
        x_true = rng.uniform(0.2, 20.0, M.shape[1])
        r = np.roots(c0 + M @ x_true)
        if np.all(r.real < 0):
            sigma = 0.7 * float(np.min(-r.real)) * float(rng.integers(0, 2))
            zeta = 0.7 * float(np.min(-r.real / np.abs(r))) * float(rng.integers(0, 2))
            lo, hi = x_true - 10 * np.abs(x_true), x_true + 10 * np.abs(x_true)
            return c0, M, Reg(sigma, zeta), lo, hi


def direct_positivity(cert, c, w):
    """Re[c~(jw) conj(d~(jw))] by numpy.polyval, from the definition of the transform."""
    d = cert.central
    if cert.kind == "decay":
        s = 1j * w - cert.sigma
    else:
        beta = 0.5 * math.pi - math.acos(cert.zeta)
        s = 1j * w * np.exp(1j * beta)
    return np.real(np.polyval(c, s) * np.conj(np.polyval(d, s)))


# ----------------------------------------------------------------------------
# certified region design
# ----------------------------------------------------------------------------


@pytest.fixture(scope="module")
def random_designs():
    rng = np.random.default_rng(20240605)
    out = []
    for i in range(16):
        c0, M, region, lo, hi = random_problem(rng, "lead" if i % 2 else "pid")
        out.append((c0, M, region, lo, hi, certified_region_design(c0, M, region, lo, hi, seed=i)))
    return out


def test_certified_designs_have_roots_in_region(random_designs):
    """Every certified design's closed-loop poles lie in the region (numpy.roots)."""
    certified = 0
    for c0, M, region, lo, hi, res in random_designs:
        if not res.certified:
            continue
        certified += 1
        assert np.all(res.x >= lo) and np.all(res.x <= hi)
        assert np.allclose(res.char_poly, c0 + M @ res.x)
        assert in_region_by_roots(res.char_poly, region.sigma, region.zeta)
    # each problem has a feasible point by construction: nearly all must certify
    assert certified >= 14


def test_certificates_positive_on_dense_grid(random_designs):
    """The positivity function, evaluated directly (numpy.polyval), is > 0 on a dense grid."""
    for *_, res in random_designs:
        if not res.certified:
            continue
        c = res.char_poly * np.sign(res.char_poly[0])
        assert res.certificates
        for cert in res.certificates:
            scale = cert.omega0
            half = scale * np.logspace(-5, 5, 20001)
            w = np.concatenate([-half[::-1], [0.0], half])
            direct = direct_positivity(cert, c, w)
            assert np.all(direct > 0.0), cert.kind
            # the returned certificate polynomial is the same function
            assert np.allclose(np.polyval(cert.poly, w), direct, rtol=1e-7, atol=1e-9 * np.abs(direct).max())
            # the certified region lies inside the requested one
            assert cert.sigma >= 0.0 and 0.0 <= cert.zeta < 1.0
            assert np.all(np.roots(cert.central).real < -cert.sigma)


def test_gram_matrices_are_psd_and_match(random_designs):
    """Q is PSD (numpy.linalg.eigvalsh) and p_n(v) - eps (1+v^2)^n = v'Qv at sample points."""
    for *_, res in random_designs:
        if not res.certified:
            continue
        c = res.char_poly * np.sign(res.char_poly[0])
        n = c.size - 1
        for cert in res.certificates:
            q = cert.gram
            lam = np.linalg.eigvalsh(0.5 * (q + q.T))
            assert lam.min() >= -1e-6 * max(1.0, lam.max())
            v = np.linspace(-3.0, 3.0, 13)
            basis = np.vander(v, n + 1, increasing=True)
            quad = np.einsum("ki,ij,kj->k", basis, q, basis)
            p_n = direct_positivity(cert, c, cert.omega0 * v) / cert.scale
            lhs = p_n - cert.eps * (1.0 + v**2) ** n
            assert np.allclose(lhs, quad, rtol=1e-4, atol=1e-5 * (1.0 + v**2) ** n)


def test_quartic_routh_conditions():
    """Double integrator with a lag, lead with a fixed pole (invented numbers).

    c(s) = (s + 20) s^2 (s + 5) + b1 s + b0. Every certified design must
    satisfy the quartic Routh-Hurwitz inequalities (common practice) for the
    polynomial shifted by the decay rate, c(w - sigma).
    """
    c0, M = affine_loop(np.array([1.0]), np.poly([0.0, 0.0, -5.0]), np.array([1.0, 20.0]), 1)
    for region in (Reg(0.0, 0.0), Reg(0.5, 0.5), Reg(1.0, 0.6), Reg(0.0, 0.7)):
        res = certified_region_design(c0, M, region, lo=[0.0, 0.0], hi=[1e4, 1e4])
        assert res.certified, region
        # coefficients of c(w - sigma) by numpy.polynomial composition
        p = np.polynomial.polynomial.Polynomial(res.char_poly[::-1])
        a4, a3, a2, a1, a0 = p(np.polynomial.polynomial.Polynomial([-region.sigma, 1.0])).coef
        assert min(a0, a1, a2, a3, a4) > 0
        assert a1 * a2 > a0 * a3
        assert a1 * a2 * a3 > a0 * a3**2 + a1**2 * a4
        assert in_region_by_roots(res.char_poly, region.sigma, region.zeta)


def test_provably_infeasible_region():
    """Decay rate 2 is impossible for c = s^4 + 25 s^3 + 100 s^2 + b1 s + b0.

    The s^2 coefficient of c(w - 2) is 6*4 - 3*25*2 + 100 = -26 whatever b1,
    b0 are, so c(w - 2) is never Hurwitz (positive coefficients are
    necessary, common practice). No certificate may be claimed.
    """
    c0, M = affine_loop(np.array([1.0]), np.poly([0.0, 0.0, -5.0]), np.array([1.0, 20.0]), 1)
    res = certified_region_design(c0, M, Reg(2.0, 0.5), lo=[0.0, 0.0], hi=[1e4, 1e4])
    assert not res.certified
    assert res.status in ("infeasible", "unverified")


def test_centre_objective_and_given_central():
    """A user-given central polynomial inside R: the 'centre' design is certified (numpy.roots)."""
    c0, M = affine_loop(np.array([2.0]), np.poly([0.0, -1.0]), np.array([1.0, 10.0]), 1)
    x_true = np.array([12.0, 10.0])
    d = c0 + M @ x_true
    region = Reg(0.3, 0.4)
    assert in_region_by_roots(d, region.sigma, region.zeta)
    res = certified_region_design(c0, M, region, lo=[0, 0], hi=[100, 100], central=d, objective="centre")
    assert res.certified
    assert in_region_by_roots(res.char_poly, region.sigma, region.zeta)
    # the nearest certified point to an achievable centre is the centre itself
    assert np.allclose(res.x, x_true, rtol=1e-3, atol=1e-3)


def test_same_seed_same_design():
    rng = np.random.default_rng(3)
    c0, M, region, lo, hi = random_problem(rng, "pid")
    a = certified_region_design(c0, M, region, lo, hi, seed=5)
    b = certified_region_design(c0, M, region, lo, hi, seed=5)
    assert a.status == b.status
    if a.x is not None:
        assert np.array_equal(a.x, b.x)


def test_negative_leading_convention():
    """Multiplying c0 and M by -1 leaves the roots and the verdict unchanged (numpy.roots)."""
    c0, M = affine_loop(np.array([1.0]), np.poly([0.0, 0.0, -5.0]), np.array([1.0, 20.0]), 1)
    res = certified_region_design(-c0, -M, Reg(0.5, 0.5), lo=[0.0, 0.0], hi=[1e4, 1e4])
    assert res.certified
    assert in_region_by_roots(res.char_poly, 0.5, 0.5)


# ----------------------------------------------------------------------------
# least-squares placement and the target
# ----------------------------------------------------------------------------


def test_place_poles_ls_matches_lsq_linear():
    """The cvxpy QP equals scipy.optimize.lsq_linear on the same weighted problem."""
    rng = np.random.default_rng(1)
    for _ in range(5):
        c0, M, region, lo, hi = random_problem(rng, "pid")
        target = target_polynomial(region, c0.size - 1, natural_frequency=2.0)
        lo_b, hi_b = np.zeros(M.shape[1]), np.full(M.shape[1], 5.0)
        x = place_poles_ls(c0, M, target, lo_b, hi_b)
        # documented scaling: the closed-loop leading coefficient, at the box
        # centre when it depends on x (a biproper plant with this PID)
        lead = c0[0] + M[0] @ (0.5 * (lo_b + hi_b))
        t = target * (lead / target[0])
        w = 1.0 / np.maximum(np.abs(t), 1e-8 * np.abs(t).max())
        ref = lsq_linear(w[:, None] * M, w * (t - c0), bounds=(lo_b, hi_b), tol=1e-12).x
        cost_x = np.sum((w * (c0 + M @ x - t)) ** 2)
        cost_ref = np.sum((w * (c0 + M @ ref - t)) ** 2)
        assert cost_x <= cost_ref * (1 + 1e-5) + 1e-10
        assert np.allclose(x, ref, rtol=1e-3, atol=1e-4 * max(1.0, np.abs(ref).max()))


def test_place_poles_ls_exact_when_achievable():
    """An achievable target is matched exactly: the roots are the target's (numpy.roots)."""
    c0, M = affine_loop(np.array([1.0, 3.0]), np.poly([0.0, 1.0, -4.0]), np.array([1.0, 0.0]), 2)
    x_true = np.array([9.0, 30.0, 20.0])
    target = c0 + M @ x_true
    x = place_poles_ls(c0, M, 2.5 * target)  # any scaling of the target
    assert np.allclose(x, x_true, rtol=1e-5)
    assert np.allclose(np.sort_complex(np.roots(c0 + M @ x)), np.sort_complex(np.roots(target)), atol=1e-5)


def test_place_poles_ls_respects_bounds():
    c0, M = affine_loop(np.array([1.0]), np.poly([0.0, -1.0]), np.array([1.0]), 1)
    x = place_poles_ls(c0, M, np.poly([-5.0, -6.0]), lo=[0.0, 0.0], hi=[2.0, 2.0])
    assert x is not None and np.all(x <= 2.0 + 1e-9) and np.all(x >= -1e-9)


@pytest.mark.parametrize("region", [Reg(0.0, 0.0), Reg(0.5, 0.0), Reg(0.0, 0.6), Reg(2.0, 0.8), Reg(0.1, 0.95)])
@pytest.mark.parametrize("degree", [1, 2, 3, 6])
def test_target_polynomial_inside_region(region, degree):
    """Target roots (numpy.roots) lie strictly inside R; the slowest pair/root is dominant."""
    t = target_polynomial(region, degree)
    assert t.size == degree + 1 and t[0] == 1.0
    assert in_region_by_roots(t, region.sigma, region.zeta)
    r = np.roots(t)
    if degree >= 2:
        slow = r[np.argmax(r.real)]
        assert abs(slow.imag) > 0  # the dominant pair is complex


def test_spr_polynomial_of_itself_is_squared_modulus():
    """p(w) = Re[d~(jw) conj(d~(jw))] = |d~(jw)|^2 (numpy.polyval, numpy.abs)."""
    d = np.poly([-1.0, -2.0 + 1.0j, -2.0 - 1.0j])
    w = np.linspace(-5.0, 5.0, 41)
    for kind in ("decay", "damping"):
        p = spr_polynomial(d, d, kind, sigma=0.5, zeta=0.4)
        if kind == "decay":
            s = 1j * w - 0.5
        else:
            s = 1j * w * np.exp(1j * (0.5 * math.pi - math.acos(0.4)))
        assert np.allclose(np.polyval(p, w), np.abs(np.polyval(d, s)) ** 2)


# ----------------------------------------------------------------------------
# input checks and import hygiene
# ----------------------------------------------------------------------------


def test_bad_arguments_raise_value_error():
    c0 = np.array([1.0, 2.0, 1.0])
    M = np.array([[0.0], [0.0], [1.0]])
    with pytest.raises(ValueError):
        certified_region_design(c0, M, Reg(), lo=[2.0], hi=[1.0])
    with pytest.raises(ValueError):
        certified_region_design(c0, np.ones((2, 1)), Reg())
    with pytest.raises(InputError):  # the region check is the screening kernel's
        certified_region_design(c0, M, Reg(-1.0, 0.0))
    with pytest.raises(ValueError):
        certified_region_design(c0, M, Reg(), objective="fastest")
    with pytest.raises(ValueError):
        certified_region_design(c0, M, Reg(), central=[1.0, -1.0, 1.0])
    with pytest.raises(ValueError):
        place_poles_ls(c0, M, [1.0, 2.0, 3.0, 4.0])
    with pytest.raises(ValueError):
        target_polynomial(Reg(), 0)


def test_cvxpy_not_imported_at_module_import():
    code = "import sys, synth.numerics.screening, synth.numerics.sos; print('cvxpy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
