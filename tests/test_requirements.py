"""Requirements file parsing, validation and the s-plane region."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from synth.errors import InputError
from synth.problem.region import (
    Region,
    damping_from_overshoot,
    decay_rate_from_settling,
    overshoot_from_damping,
)
from synth.problem.requirements import load_problem, problem_from_text

PLANT = "[plant]\nnumerator = [1.0]\ndenominator = [1.0, 3.0, 2.0]\n"


# Percent overshoot of a second-order pair against damping ratio, as tabulated in
# N. S. Nise, Control Systems Engineering (Table 4.1 and Fig. 4.17), and K. Ogata,
# Modern Control Engineering, Fig. 5-8 (both from memory).
@pytest.mark.parametrize(
    "zeta, percent",
    [(0.1, 72.9), (0.2, 52.7), (0.3, 37.2), (0.4, 25.4), (0.5, 16.3), (0.6, 9.5),
     (0.7, 4.6), (0.8, 1.5), (0.9, 0.2)],
)
def test_overshoot_damping_handbook_table(zeta, percent):
    assert overshoot_from_damping(zeta) == pytest.approx(percent, abs=0.06)
    assert damping_from_overshoot(percent) == pytest.approx(zeta, abs=0.01)


def test_settling_rule_of_thumb():
    # Common practice: a 2 % band settles in about 4 time constants, a 5 % band in about 3.
    assert decay_rate_from_settling(2.0, 2.0) == pytest.approx(4.0 / 2.0, rel=0.03)
    assert decay_rate_from_settling(2.0, 5.0) == pytest.approx(3.0 / 2.0, rel=0.01)


def test_region_from_requirements():
    p = problem_from_text(PLANT + "[requirements]\nmax_overshoot_percent = 16.3\n"
                          "max_settling_time = 4.0\nmin_damping_ratio = 0.3\n")
    reg = p.region
    assert reg.zeta == pytest.approx(0.5, abs=2e-3)  # the overshoot limit is tighter than 0.3
    assert reg.sigma == pytest.approx(math.log(50) / 4.0)


@given(st.floats(-10, 10), st.floats(-10, 10), st.floats(0, 3), st.floats(0, 0.95))
def test_region_membership_matches_damping_definition(x, y, sigma, zeta):
    # Damping of a pole s is -Re(s)/|s| (common practice); membership is strict.
    s = complex(x, y)
    reg = Region(sigma, zeta)
    if abs(s) < 1e-6:
        return
    damping = -s.real / abs(s)
    expected = (s.real < -sigma) and (damping > zeta)
    margin = float(reg.margin(np.array([s]))[0])
    if abs(margin) < 1e-6:
        return  # on the boundary within rounding
    assert bool(reg.contains(np.array([s]))) == expected


def test_full_file_round_trip(write_toml):
    path = write_toml(
        'format = 1\n[plant]\nlabel = "rig"\nzeros = [-2.0]\npoles = [0.0, "-1+3j"]\ngain = 4.0\n'
        "dead_time = 0.05\ndead_time_order = 2\n"
        "[requirements]\nmax_overshoot_percent = 15.0\nmax_settling_time = 3.0\n"
        "settling_band_percent = 5.0\nmin_damping_ratio = 0.5\nmax_rise_time = 1.0\n"
        "max_steady_state_error = 0.0\nplant_gain_range = [0.5, 2.0]\ngain_range = [0.0, 500.0]\n"
        "min_phase_margin_deg = 40.0\nmin_gain_margin_db = 6.0\nmax_peak_sensitivity = 2.0\n"
        "max_control_effort = 50.0\n"
        '[search]\nstructures = ["PID", "lead"]\ngeneral_order = 3\nmax_frequency = 100.0\n'
        "seed = 7\nkeep = 4\ntime_budget = 5.0\n")
    p = load_problem(path)
    # 4 (s+2) / (s (s^2 + 2 s + 10)), expanded with numpy.poly
    assert np.allclose(p.plant.rational_num, 4 * np.poly([-2.0]))
    assert np.allclose(p.plant.rational_den, np.real(np.poly([0, -1 + 3j, -1 - 3j])))
    assert p.requirements.plant_gain_range == (0.5, 2.0)
    assert p.search.structures == ("PID", "lead")
    assert p.search.seed == 7
    assert p.plant.pade_order == 2


BROKEN = [
    ("[plant]\nnumerator = [1]\n", "plant.denominator"),
    ("[plant]\nnumerator = [1]\ndenominator = [1, 2]\nexpression = '1/s'\n", "plant"),
    ("[plant]\nnumerator = [1, 2, 3]\ndenominator = [1, 2]\n", "improper"),
    ("[plant]\nnumerator = [0, 0]\ndenominator = [1, 2]\n", "plant.numerator"),
    ("[plant]\nnumerator = [1]\ndenominator = []\n", "plant.denominator"),
    ("[plant]\nnumerator = [1]\ndenominator = [1, nan]\n", "plant.denominator"),
    ("[plant]\nnumerator = ['a']\ndenominator = [1, 2]\n", "plant.numerator"),
    ("[plant]\nexpression = '1/(s+'\n", "plant.expression"),
    ("[plant]\nexpression = '__import__(\"os\")'\n", "plant.expression"),
    ("[plant]\npoles = ['-1+x']\n", "plant.poles"),
    ("[plant]\nzeros = [1]\n", "plant.poles"),
    ("[plant]\nnumerator = [1]\ndenominator = [1, 2]\ndead_time = -1\n", "plant.dead_time"),
    (PLANT + "[requirements]\nmin_damping_ratio = 1.2\n", "requirements.min_damping_ratio"),
    (PLANT + "[requirements]\nmin_damping_ratio = 0\n", "requirements.min_damping_ratio"),
    (PLANT + "[requirements]\nmax_settling_time = -3\n", "requirements.max_settling_time"),
    (PLANT + "[requirements]\nmax_settling_time = inf\n", "requirements.max_settling_time"),
    (PLANT + "[requirements]\nmax_settling_time = '3'\n", "requirements.max_settling_time"),
    (PLANT + "[requirements]\nplant_gain_range = [2.0, 0.5]\n", "requirements.plant_gain_range"),
    (PLANT + "[requirements]\ngain_range = [1.0]\n", "requirements.gain_range"),
    (PLANT + "[requirements]\nmax_overshot_percent = 5\n", "requirements.max_overshot_percent"),
    (PLANT + "[search]\nstructures = ['PIDF']\n", "search.structures"),
    (PLANT + "[search]\ngeneral_order = 4\n", "search.general_order"),
    (PLANT + "[search]\nseed = 1.5\n", "search.seed"),
    (PLANT + "[search]\ntime_budget = 0\n", "search.time_budget"),
    (PLANT + "[extra]\nx = 1\n", "extra"),
    ("format = 2\n" + PLANT, "format"),
    ("[plant\nnumerator = [1]\n", "not valid TOML"),
]


@pytest.mark.parametrize("text, needle", BROKEN)
def test_broken_files_name_file_and_key(write_toml, text, needle):
    path = write_toml(text)
    with pytest.raises(InputError) as info:
        load_problem(path)
    msg = str(info.value)
    assert msg.startswith(str(path)), msg
    assert needle in msg, msg
    assert "\n" not in msg
