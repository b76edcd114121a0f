"""The requirement catalogue (synth.problem.catalogue) and the Requirements built from it.

External references, named beside each check: the public contract's list of
``[requirements]`` keys and metric keys (format 1, copied below from
/work/shared/contract.md); docs/requirements-file.md for the allowed values;
shortfalls and texts worked by hand with exact arithmetic (fractions.Fraction,
math.log); facts of the trade marked "common practice"; the standard
library's pickle protocol.
"""

from __future__ import annotations

import math
import pickle
import re
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from synth.errors import InputError
from synth.problem.catalogue import METRICS, REQUIREMENTS, Metric, requirement, requirement_for
from synth.problem.requirements import Requirements, problem_from_text

#: The contract's [requirements] keys (format 1), in the contract's order.
CONTRACT_KEYS = ("max_overshoot_percent", "max_settling_time", "settling_band_percent",
                 "min_damping_ratio", "max_rise_time", "max_steady_state_error",
                 "plant_gain_range", "gain_range", "min_phase_margin_deg", "min_gain_margin_db",
                 "max_peak_sensitivity", "max_control_effort",
                 # second round ("Extensions, second round", new keys)
                 "max_peak_complementary_sensitivity", "max_noise_gain", "max_load_iae",
                 "max_load_peak")
#: The contract's design-JSON metric keys (format 1, then the second round's additions).
CONTRACT_METRICS = ("overshoot_percent", "settling_time", "rise_time", "steady_state_error",
                    "min_damping_ratio", "phase_margin_deg", "gain_margin_db",
                    "peak_sensitivity", "peak_control_effort", "stable_plant_gain_range",
                    "load_iae", "load_peak", "peak_complementary_sensitivity", "noise_gain")

PLANT = "[plant]\nnumerator = [1.0]\ndenominator = [1.0, 3.0, 2.0]\n"


def test_catalogue_holds_exactly_the_contract_keys_and_metrics():
    assert set(REQUIREMENTS) == set(CONTRACT_KEYS)
    assert tuple(k for k, m in METRICS.items() if m.contract) == CONTRACT_METRICS
    for entry in REQUIREMENTS.values():
        if entry.kind == "setting":
            assert entry.metric is None and entry.setting_of in REQUIREMENTS
        else:
            # every limit is on a metric the catalogue knows, and each metric has one limit
            assert entry.metric in METRICS
            assert requirement_for(entry.metric) is entry


def test_allowed_values_match_the_requirements_file_reference():
    # docs/requirements-file.md states the allowed values; the catalogue's specs say the same
    text = (Path(__file__).resolve().parents[1] / "docs" / "requirements-file.md").read_text()
    rows = dict(re.findall(r"^\| `([a-z_]+)` \| ([^|]+) \|", text, flags=re.M))
    for key, entry in REQUIREMENTS.items():
        assert key in rows, key
        cell = rows[key].replace("`", "")
        assert entry.value.describe() in cell, (key, entry.value.describe(), cell)


@pytest.mark.parametrize("key, bad", [
    ("max_overshoot_percent", 100.0), ("max_settling_time", 0.0),
    ("settling_band_percent", 60.0), ("min_damping_ratio", 1.0), ("max_rise_time", -1.0),
    ("max_steady_state_error", 1.5), ("plant_gain_range", [0.0, 2.0]), ("gain_range", [3, 1]),
    ("min_phase_margin_deg", 180.0), ("min_gain_margin_db", 0.0),
    ("max_peak_sensitivity", 0.9), ("max_control_effort", 0.0),
    ("max_peak_complementary_sensitivity", 0.5), ("max_noise_gain", 0.0),
    ("max_load_iae", -1.0), ("max_load_peak", 0.0),
])
def test_out_of_range_values_are_one_line_errors_naming_the_key(key, bad):
    value = repr(bad).lower() if not isinstance(bad, list) else str(bad)
    with pytest.raises(InputError) as err:
        problem_from_text(PLANT + f"[requirements]\n{key} = {value}\n", "req.toml")
    msg = str(err.value)
    assert msg.startswith(f"req.toml: requirements.{key}: ") and "\n" not in msg


def test_upper_limit_shortfall_and_text_worked_by_hand():
    os_ = requirement("max_overshoot_percent")
    short, text = os_.assess(12.0, 10.0)
    assert Fraction(short).limit_denominator(1000) == Fraction(1, 5)   # (12 - 10) / 10
    assert text == "overshoot 12 % exceeds 10 %"
    assert os_.assess(10.0, 10.0) is None                                # at the limit: met
    # a zero limit ("no overshoot") normalises by the 1 % floor: (0.5 - 0) / 1
    assert os_.assess(0.5, 0.0)[0] == pytest.approx(0.5, rel=1e-15)
    # an undefined overshoot (final value zero) fails with a shortfall of 1
    assert os_.assess(None, 10.0) == (1.0, "overshoot undefined: the final value is zero")


def test_settling_text_carries_its_band():
    ts = requirement("max_settling_time")
    short, text = ts.assess(3.0, 2.0, {"settling_band_percent": 5.0})
    assert short == pytest.approx(0.5, rel=1e-15)                        # (3 - 2) / 2
    assert text == "settling time 3 s exceeds 2 s (5 % band)"


def test_lower_limits_and_unbounded_values():
    pm = requirement("min_phase_margin_deg")
    short, text = pm.assess(30.0, 45.0)
    assert short == pytest.approx(1.0 / 3.0, rel=1e-15)                  # (45 - 30) / 45
    assert text == "phase margin 30 deg is below 45 deg"
    # common practice: no gain crossover / no phase crossover means an unbounded margin,
    # which meets any lower limit
    assert pm.assess(None, 45.0) is None
    assert requirement("min_gain_margin_db").assess(None, 6.0) is None
    # ... while an upper limit is never met by an unbounded value
    assert requirement("max_settling_time").assess(None, 2.0, {"settling_band_percent": 2.0})


def test_plant_gain_range_is_an_open_interval_that_must_contain_the_required_one():
    pgr = requirement("plant_gain_range")
    # stable for factors in (0.8, 1.5): short of [0.5, 2] by ln(0.8/0.5) + ln(2/1.5)
    short, text = pgr.assess([0.8, 1.5], (0.5, 2.0))
    assert short == pytest.approx(math.log(0.8 / 0.5) + math.log(2.0 / 1.5), rel=1e-14)
    assert text == "stable only for plant-gain factors in (0.8, 1.5); required [0.5, 2]"
    assert pgr.assess([0.2, None], (0.5, 2.0)) is None                   # unbounded above
    assert pgr.assess([None, None], (0.5, 2.0)) is None
    # open ends: stable exactly up to the required end does not contain it
    short, _ = pgr.assess([0.5, 3.0], (0.5, 2.0))
    assert short > 0


def test_gain_range_is_closed_and_judged_by_distance_over_the_largest_end():
    gr = requirement("gain_range")
    assert gr.assess(0.0, (0.0, 50.0)) is None and gr.assess(50.0, (0.0, 50.0)) is None
    short, text = gr.assess(60.0, (0.0, 50.0))
    assert Fraction(short).limit_denominator(100) == Fraction(1, 5)      # (60 - 50) / 50
    assert text == "gain 60 is outside the allowed gain range [0, 50]"


def test_room_says_how_close_a_met_limit_is():
    assert requirement("max_overshoot_percent").room(9.0, 10.0) == pytest.approx(0.1)
    assert requirement("min_phase_margin_deg").room(50.0, 40.0) == pytest.approx(0.25)
    assert requirement("min_gain_margin_db").room(None, 6.0) == math.inf
    assert requirement("gain_range").room(45.0, (0.0, 50.0)) == pytest.approx(0.1)
    assert requirement("plant_gain_range").room([0.4, 2.2], (0.5, 2.0)) == \
        pytest.approx(min(0.1 / 0.5, 0.2 / 2.0))


def test_search_limits_leave_room_towards_the_natural_bound():
    # a sensitivity peak is at least 1 (common practice): the search aims between 1 and the limit
    ms = requirement("max_peak_sensitivity")
    assert ms.search_limit(2.0, 0.95, 1.02) == pytest.approx(1.95)
    assert requirement("max_overshoot_percent").search_limit(10.0, 0.95, 1.02) == \
        pytest.approx(9.5)
    assert requirement("min_damping_ratio").search_limit(0.99, 0.95, 1.02) == 0.9999
    assert requirement("plant_gain_range").search_limit((0.5, 2.0), 0.95, 1.02) == \
        pytest.approx((0.5 / 1.02, 2.0 * 1.02))


def test_worse_orders_values_the_engineer_way():
    # common practice: a larger overshoot is worse; a larger phase margin is better; an
    # unbounded settling time is the worst, an unbounded gain margin the best
    assert METRICS["overshoot_percent"].worse(12.0, 10.0)
    assert METRICS["phase_margin_deg"].worse(30.0, 45.0)
    assert METRICS["settling_time"].worse(None, 1e9)
    assert not METRICS["gain_margin_db"].worse(None, 60.0)
    with pytest.raises(ValueError):
        METRICS["stable_plant_gain_range"].worse([0.5, 2.0], [0.4, 3.0])
    assert isinstance(METRICS["gain"], Metric)


def test_requirements_by_key_and_by_metric_and_the_settling_band_default():
    req = Requirements(max_settling_time=2.0, gain_range=(0.0, 5.0))
    assert req.max_settling_time == 2.0 and req.limit("settling_time") == 2.0
    assert req.limit("gain") == (0.0, 5.0) and req.max_overshoot_percent is None
    # the band defaults to 2 % (the contract) and appears with the settling time it belongs to
    assert req.settling_band == 2.0
    assert req.given() == {"max_settling_time": 2.0, "settling_band_percent": 2.0,
                           "gain_range": [0.0, 5.0]}
    assert Requirements(settling_band_percent=5.0).given() == {}
    with pytest.raises(TypeError):
        Requirements(max_overshoot=10.0)


def test_requirements_survive_pickling_for_parallel_runs():
    # batch runs send problems to worker processes: the standard library's pickle protocol
    p = problem_from_text(PLANT + "[requirements]\nmax_overshoot_percent = 10.0\n"
                          "plant_gain_range = [0.5, 2.0]\n", "x.toml")
    q = pickle.loads(pickle.dumps(p))
    assert q == p and q.requirements.plant_gain_range == (0.5, 2.0)
    assert q.region == p.region


def test_region_takes_the_tighter_damping_limit():
    # 4.6 % overshoot is a damping of 0.7 (second-order relation, common practice)
    req = Requirements(max_overshoot_percent=4.6, min_damping_ratio=0.5)
    assert req.region().zeta == pytest.approx(0.7, abs=2e-3)
    req = Requirements(max_overshoot_percent=40.0, min_damping_ratio=0.5)
    assert req.region().zeta == 0.5


def test_shortfall_is_vectorised_for_the_search():
    os_ = requirement("max_overshoot_percent")
    got = os_.shortfall(np.array([5.0, 12.0, np.nan]), 10.0)
    assert got[0] == 0.0 and got[1] == pytest.approx(0.2) and np.isnan(got[2])
    lo, hi = np.array([0.0, 0.8]), np.array([np.inf, 1.5])
    got = requirement("plant_gain_range").shortfall((lo, hi), (0.5, 2.0))
    assert got[0] == 0.0 and got[1] == pytest.approx(math.log(1.6) + math.log(4.0 / 3.0))


def test_the_entry_shape_holds_the_next_requirements():
    # the coming load-disturbance limit as one entry: judged, penalised and shown by the same
    # machinery (shortfall worked by hand: (0.6 - 0.5) / 0.5)
    from synth.problem.catalogue import NumberSpec, Requirement

    entry = Requirement("max_load_peak", "load_peak", "upper", "load", "",
                        "load peak", "peak |y| at most {} after a unit load step",
                        "ypk<={:g}", NumberSpec(lo=0, lo_open=True),
                        violation="load peak {value:.3g} exceeds {limit:g} (model {where})",
                        undefined="the load response does not settle")
    short, text = entry.assess(0.6, 0.5, {"where": "low flow"})
    assert short == pytest.approx(0.2, rel=1e-15)
    assert text == "load peak 0.6 exceeds 0.5 (model low flow)"
    assert entry.column(0.5) == "ypk<=0.5" and entry.search_limit(0.5, 0.95, 1.02) == 0.475
    assert entry.assess(None, 0.5) == (1.0, "the load response does not settle")
