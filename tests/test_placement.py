"""Root-locus placement strategy: textbook lead design, poles at the target, lag for the error.

External references used here:

* K. Ogata, *Modern Control Engineering*, 4th ed., Prentice Hall, 2002,
  sec. 6-8, lead compensation of G(s) = 4 / (s (s + 2)) so that the dominant
  closed-loop poles are -2 +- j 2 sqrt(3): angle deficiency 30 deg, and by the
  bisector method C(s) = 4.68 (s + 2.9) / (s + 5.4) (from memory).
* numpy.roots for the closed-loop poles of every design, numpy.polyval and
  numpy.angle for the angle condition, scipy.signal.step for the final value.
* Common practice: a type-0 loop's step error is 1 / (1 + Kp).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal

from synth.families import FAMILIES, family_for
from synth.problem.requirements import problem_from_text
from synth.strategies import SearchContext, family_work
from synth.strategies.placement import (
    ORIGIN,
    STRATEGY,
    angle_deficiency,
    lead_bisector,
    magnitude_gain,
    placements,
    target_points,
)

STRUCTURES = tuple(FAMILIES)


def _problem(num, den, req="", search=""):
    text = f"""
[plant]
numerator = {[float(v) for v in num]}
denominator = {[float(v) for v in den]}
[requirements]
{req}
[search]
{search}
"""
    return problem_from_text(text)


def _char(num_c, den_c, problem):
    return np.polyadd(np.polymul(den_c, problem.plant.den), np.polymul(num_c, problem.plant.num))


# a few plants of different kinds, with requirements that ask for something
PLANTS = [
    ((4.0,), (1.0, 2.0, 0.0), "max_overshoot_percent = 16.3\nmax_settling_time = 2.0"),
    ((10.0,), (1.0, 6.0, 5.0),
     "max_overshoot_percent = 20\nmax_settling_time = 4.0\nmax_steady_state_error = 0.05"),
    ((1.0,), (1.0, 0.0, 0.0), "max_overshoot_percent = 25\nmax_settling_time = 4.0"),
    ((150.0,), tuple(np.poly([5.0, -5.0, -20.0]).real),
     "max_overshoot_percent = 25\nmax_settling_time = 1.5"),
    ((2.0, 2.0), (1.0, 3.0, 0.0, 0.0), "max_overshoot_percent = 30\nmax_settling_time = 8.0"),
    ((1.0,), (1.0, 3.0, 2.0, 0.0), "min_damping_ratio = 0.5\nmax_settling_time = 10.0"),
]


def test_ogata_lead_by_the_bisector_method():
    """Ogata 4th ed. sec. 6-8 (from memory): deficiency 30 deg, 4.68 (s + 2.9)/(s + 5.4)."""
    num, den = [4.0], [1.0, 2.0, 0.0]
    s_d = complex(-2.0, 2.0 * math.sqrt(3.0))
    assert angle_deficiency(num, den, s_d) == pytest.approx(30.0, abs=1e-9)
    z, p = lead_bisector(s_d, 30.0)
    assert z == pytest.approx(2.9, abs=0.05)
    assert p == pytest.approx(5.4, abs=0.1)
    k = magnitude_gain([1.0, z], [1.0, p], num, den, s_d)
    assert k == pytest.approx(4.68, rel=0.02)  # the book rounds the zero and pole first
    # and the closed loop really has its poles at -2 +- j 2 sqrt(3) (numpy.roots)
    char = np.polyadd(np.polymul([1.0, p], den), np.polymul([k, k * z], num))
    roots = np.roots(char)
    assert np.min(np.abs(roots - s_d)) < 1e-9 * abs(s_d)
    assert np.min(np.abs(roots - s_d.conjugate())) < 1e-9 * abs(s_d)


def test_magnitude_gain_refuses_points_off_the_locus():
    """-1 + j is not on the locus of 4/(s(s+2)) with no compensation (angle -225 deg, numpy.angle)."""
    s = complex(-2.0, 1.0)
    g = np.polyval([4.0], s) / np.polyval([1.0, 2.0, 0.0], s)
    assert abs(abs(math.degrees(np.angle(g))) - 180.0) > 1.0
    assert magnitude_gain([1.0], [1.0], [4.0], [1.0, 2.0, 0.0], s) is None


@pytest.mark.parametrize("case", range(len(PLANTS)))
def test_every_design_puts_a_closed_loop_pole_at_its_target(case):
    """numpy.roots of den_C den_G + num_C num_G contains the recorded target, for every design."""
    num, den, req = PLANTS[case]
    problem = _problem(num, den, req)
    total = 0
    for structure in STRUCTURES:
        designs, _ = placements(problem, structure)
        for d in designs:
            total += 1
            s_d = complex(*d.info["target"])
            roots = np.roots(_char(d.num, d.den, problem))
            assert np.min(np.abs(roots - s_d)) <= 1e-6 * abs(s_d), (structure, d.construction)
            # the angle condition (numpy.angle): C G at the target is real, of the gain's sign
            cg = (np.polyval(d.num, s_d) / np.polyval(d.den, s_d)
                  * np.polyval(problem.plant.num, s_d) / np.polyval(problem.plant.den, s_d))
            assert abs(cg + 1.0) < 1e-6, (structure, d.construction)
    assert total >= 5  # the strategy did propose something for this plant


def test_lead_lag_meets_the_step_error_limit():
    """Common practice e = 1/(1 + Kp); the final value is checked with scipy.signal.step."""
    problem = _problem((10.0,), (1.0, 6.0, 5.0),
                       "max_overshoot_percent = 20\nmax_settling_time = 4.0\n"
                       "max_steady_state_error = 0.05")
    for structure in ("lead-lag", "lag"):
        designs, _ = placements(problem, structure)
        lag_designs = [d for d in designs if "static_gain_increase" in d.info]
        assert lag_designs, structure
        for d in lag_designs:
            num_l = np.polymul(d.num, problem.plant.num)
            den_l = np.polymul(d.den, problem.plant.den)
            kp = np.polyval(num_l, 0.0) / np.polyval(den_l, 0.0)
            assert 1.0 / (1.0 + kp) <= 0.05
            char = _char(d.num, d.den, problem)
            if np.all(np.roots(char).real < 0):
                sys = scipy.signal.lti(num_l, char)
                t, y = scipy.signal.step(sys, T=np.linspace(0, 400.0, 20001))
                assert abs(1.0 - y[-1]) <= 0.05 + 1e-3
            # the lag zero sits well below the target (a quarter or a decade of |s|)
            s_d = complex(*d.info["target"])
            zeros = np.sort(np.abs(np.roots(d.num)))
            assert zeros[0] <= abs(s_d) / 3.0


def test_large_deficiency_is_split_not_forced_into_one_lead():
    """A double integrator needs 2 arg(s_d) - 180 deg of lead, over 65 deg for damping <= 0.57."""
    problem = _problem((1.0,), (1.0, 0.0, 0.0),
                       "min_damping_ratio = 0.5\nmax_settling_time = 8.0",
                       "general_order = 2")
    for t in target_points(problem):
        g = 1.0 / t.point**2
        assert (180.0 - math.degrees(np.angle(g))) % 360.0 > 65.0  # numpy.angle
    designs, skipped = placements(problem, "lead")
    assert designs == []
    assert any("too large for one lead section" in s for s in skipped)
    general, _ = placements(problem, "general")
    assert general
    for d in general:
        s_d = complex(*d.info["target"])
        assert np.min(np.abs(np.roots(_char(d.num, d.den, problem)) - s_d)) <= 1e-6 * abs(s_d)
        assert d.info["section_angle_deg"] <= 65.0


def test_propose_records_target_and_angle_in_the_provenance():
    problem = _problem((4.0,), (1.0, 2.0, 0.0), "max_overshoot_percent = 16.3\nmax_settling_time = 2.0")
    fam = family_for("lead", problem)
    ctx = SearchContext(seed=0, work=int(STRATEGY.share * family_work(fam)))
    cands = STRATEGY.propose(problem, fam, ctx)
    assert cands
    for c in cands:
        assert c.origin == ORIGIN == "placement"
        assert c.structure == "lead"
        s_d = complex(*c.provenance["target"])
        # the angle supplied equals the deficiency, measured with numpy.angle
        cs = np.polyval(c.num, s_d) / np.polyval(c.den, s_d)
        assert c.provenance["angle_supplied_deg"] == pytest.approx(
            math.degrees(np.angle(cs)), abs=1e-6)
        assert c.provenance["angle_supplied_deg"] == pytest.approx(
            c.provenance["deficiency_deg"], abs=1e-6)
        assert c.params  # maps into the lead family's search space


def test_reverse_acting_plant_gets_a_negative_gain():
    """An unstable plant with a negative numerator needs K < 0 (Routh: constant term positive)."""
    problem = problem_from_text("""
[plant]
expression = "-2/((50*s-1)*(10*s+1))"
[requirements]
max_overshoot_percent = 30.0
max_settling_time = 150.0
gain_range = [-20.0, 20.0]
""")
    designs, _ = placements(problem, "lead")
    assert designs
    for d in designs:
        assert d.gain < 0
        assert np.all(np.roots(_char(d.num, d.den, problem)).real < 0)
