"""Convex strategy: certified designs keep every closed-loop pole in the region.

External references used here:

* numpy.roots for the closed-loop poles of every certified design (the
  region test is written out with numpy here, not taken from synth);
* the certificate of D. Henrion, M. Sebek and V. Kucera, "Positive
  polynomials and robust stabilization with fixed-order controllers", IEEE
  Trans. Automatic Control 48(7), 2003: p(w) = Re[c~(jw) conj(d~(jw))] > 0
  for all real w, re-evaluated here on a dense grid directly with
  numpy.polyval at the shifted point jw - sigma and the rotated point
  jw e^{j beta}, beta = pi/2 - arccos(zeta) (not with synth's own
  coefficient transforms);
* numpy.polymul for the affine closed-loop map, scipy.signal.step for the
  final value, and common practice e = 1 / (1 + Kp) for a type-0 loop.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal

from synth.families import family_for
from synth.problem.requirements import problem_from_text
from synth.strategies import SearchContext, family_work
from synth.strategies.certified import ORIGIN, STRATEGY, affine_loop

GRID = np.concatenate([-np.logspace(-4, 4, 3000)[::-1], [0.0], np.logspace(-4, 4, 3000)])


def propose(problem, family, seed=0):
    """The convex strategy with the work a design run gives it."""
    ctx = SearchContext(seed=seed, work=int(STRATEGY.share * family_work(family)))
    return STRATEGY.propose(problem, family, ctx)


def _problem(num, den, req, search=""):
    n = ", ".join(repr(float(v)) for v in num)
    d = ", ".join(repr(float(v)) for v in den)
    return problem_from_text(f"[plant]\nnumerator = [{n}]\ndenominator = [{d}]\n"
                             f"[requirements]\n{req}\n[search]\n{search}\n")


def _char(cand, problem):
    c = np.polyadd(np.polymul(cand.den, problem.plant.den), np.polymul(cand.num, problem.plant.num))
    c = np.trim_zeros(c, "f")
    return c / c[0]


def _in_region(roots, sigma, zeta, rel=1e-9):
    """Every root strictly left of -sigma with damping >= zeta (written out with numpy)."""
    scale = max(1.0, float(np.max(np.abs(roots))))
    damping = -roots.real / np.abs(roots)
    return bool(np.all(roots.real < -sigma - rel * scale) and np.all(damping >= zeta - rel))


def _certificate_holds(c, cert) -> bool:
    """p(w) = Re[c~(jw) conj(d~(jw))] > 0 on a dense grid, by direct evaluation."""
    d = np.asarray(cert["central_polynomial"], dtype=float)
    scale = float(np.abs(d[-1] / d[0]) ** (1.0 / (d.size - 1)))   # frequency scale of d
    w = scale * GRID
    if cert["kind"] == "decay":
        pts = 1j * w - cert["sigma"]
    else:
        beta = 0.5 * math.pi - math.acos(cert["zeta"])
        pts = 1j * w * np.exp(1j * beta)
    p = np.real(np.polyval(c, pts) * np.conj(np.polyval(d, pts)))
    return bool(np.all(p > 0.0))


def _random_plants(n, seed):
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n):
        if rng.random() < 0.5:
            poles = list(rng.uniform(-4.0, 1.0, 2))
        else:
            re, im = rng.uniform(-2.0, 0.5), rng.uniform(0.5, 3.0)
            poles = [complex(re, im), complex(re, -im)]
        if rng.random() < 0.5:
            poles.append(rng.uniform(-8.0, -1.0))
        den = np.poly(poles).real
        num = [float(rng.uniform(0.5, 5.0))]
        ts = float(rng.uniform(4.0, 15.0))
        os_ = float(rng.uniform(10.0, 40.0))
        out.append((num, den, f"max_settling_time = {ts}\nmax_overshoot_percent = {os_}"))
    return out


@pytest.mark.parametrize("structure", ["lead", "PID"])
def test_certified_designs_lie_in_the_region_for_random_plants(structure):
    """numpy.roots inside the region and the certificate positive, for every certified design."""
    plants = _random_plants(14, seed=2024 if structure == "lead" else 77)
    certified = 0
    for num, den, req in plants:
        problem = _problem(num, den, req)
        region = problem.region
        for cand in propose(problem, family_for(structure, problem)):
            assert cand.origin == ORIGIN == "convex"
            prov = cand.provenance
            if not prov.get("certificates"):
                continue
            c = _char(cand, problem)
            reg = prov["certificate_region"]
            roots = np.roots(c)
            assert _in_region(roots, reg["sigma"], reg["zeta"]), (num, den, cand)
            for cert in prov["certificates"]:
                # each certificate is written for a region inside the certified one
                assert cert["sigma"] >= reg["sigma"] - 1e-12
                assert cert["zeta"] >= reg["zeta"] - 1e-12
                assert _certificate_holds(c, cert), (num, den, cand, cert["kind"])
            if prov["certified"]:
                certified += 1
                assert _in_region(roots, region.sigma, region.zeta)
    # not vacuous: most random plants get a design certified for the full region
    assert certified >= len(plants) // 2


def test_affine_loop_matches_numpy_polymul_and_keeps_the_lead_shape():
    """c0 + M x equals den_C den_G + num_C(x) num_G (numpy.polymul); x >= 0 gives a lead."""
    problem = _problem([4.0], [1.0, 2.0, 0.0], "max_settling_time = 2.0")
    fam = family_for("lead", problem)
    p = 9.0
    loop = affine_loop(problem, fam, (p,))
    rng = np.random.default_rng(5)
    for x in rng.uniform(0.0, 3.0, (20, loop.M.shape[1])):
        num_c = loop.numerator(x)
        ref = np.polyadd(np.polymul(loop.den, problem.plant.den), np.polymul(num_c, problem.plant.num))
        got = loop.c0 + loop.M @ x
        np.testing.assert_allclose(got, np.pad(ref, (got.size - ref.size, 0)), rtol=1e-12,
                                   atol=1e-12 * np.abs(ref).max())
        z = -np.roots(np.trim_zeros(num_c, "f"))[0].real
        assert 0.0 <= z <= p + 1e-9  # numpy.roots: zero between the origin and the pole


def test_convex_lead_meets_the_step_error_limit():
    """The static-gain floor: e = 1/(1 + Kp) <= limit (common practice; scipy.signal.step)."""
    problem = _problem([10.0], [1.0, 6.0, 5.0],
                       "max_overshoot_percent = 20\nmax_settling_time = 4.0\n"
                       "max_steady_state_error = 0.05")
    cands = propose(problem, family_for("lead", problem))
    assert cands
    for cand in cands:
        num_l = np.polymul(cand.num, problem.plant.num)
        den_l = np.polymul(cand.den, problem.plant.den)
        kp = np.polyval(num_l, 0.0) / np.polyval(den_l, 0.0)
        assert 1.0 / (1.0 + kp) <= 0.05 + 1e-9
        char = np.polyadd(den_l, num_l)
        if np.all(np.roots(char).real < 0):
            _, y = scipy.signal.step(scipy.signal.lti(num_l, char), T=np.linspace(0, 60, 6001))
            assert abs(1.0 - y[-1]) <= 0.05 + 1e-3


def test_unmovable_resonance_falls_back_to_a_decay_certificate():
    """A PI cannot damp a resonance at damping 0.07 (numpy.roots of the plant) up to damping 0.59.

    The plant is a boost stage's averaged model of our own: -4800 (s - 5000) /
    (s^2 + 100 s + 499525).  The design is then certified for the decay rate
    only, and says so.
    """
    problem = _problem([-4800.0, 24e6], [1.0, 100.0, 499525.0],
                       "max_overshoot_percent = 10.0\nmax_settling_time = 0.2\n"
                       "gain_range = [0.0, 0.1]")
    pr = np.roots(problem.plant.den)
    assert np.max(-pr.real / np.abs(pr)) < 0.1
    cands = propose(problem, family_for("PI", problem))
    relaxed = [c for c in cands if c.provenance.get("relaxed")]
    assert relaxed
    for cand in relaxed:
        assert cand.provenance["certified"] is False
        reg = cand.provenance["certificate_region"]
        assert reg["zeta"] == 0.0 and reg["sigma"] == pytest.approx(problem.region.sigma)
        c = _char(cand, problem)
        assert _in_region(np.roots(c), reg["sigma"], 0.0)
        assert all(_certificate_holds(c, cert) for cert in cand.provenance["certificates"])
