"""The design pipeline, re-checked by computations outside synth (numpy, scipy.signal).

Every design the pipeline marks feasible is re-verified here with numpy.roots
(closed-loop poles of the unreduced characteristic polynomial),
scipy.signal.step (output and control effort of the closed loop) and
scipy.signal.freqresp (margins and peak sensitivity), never with synth's own
verifier (tests/independent.py).  Search effort is small and structure lists
short to keep the file fast.
"""

import json

import numpy as np
import pytest
from independent import independent_check

from synth.design import SCHEMA, run_design
from synth.problem.requirements import problem_from_text
from synth.verify.verdict import verify


def _problem(plant: str, req: str, search: str) -> object:
    return problem_from_text(f"[plant]\n{plant}\n[requirements]\n{req}\n[search]\n{search}\n")


STABLE = _problem(
    "numerator = [10.0]\ndenominator = [1.0, 8.0, 17.0, 10.0]",  # 10/((s+1)(s+2)(s+5))
    "max_overshoot_percent = 10.0\nmax_settling_time = 3.0\nmin_phase_margin_deg = 45.0\n"
    "max_steady_state_error = 0.0",
    'structures = ["PI", "PID"]\neffort = 0.3\nkeep = 4')
UNSTABLE = _problem(
    "zeros = []\npoles = [1.0, -4.0]\ngain = 4.0",  # 4/((s-1)(s+4))
    "max_overshoot_percent = 20.0\nmax_settling_time = 4.0\nmin_phase_margin_deg = 30.0\n"
    "plant_gain_range = [0.8, 1.25]",
    'structures = ["PD", "lead"]\neffort = 0.3\nkeep = 4')
RHP_ZERO = _problem(
    "numerator = [-1.0, 2.0]\ndenominator = [1.0, 4.0, 3.0]",  # (2-s)/((s+1)(s+3))
    "max_overshoot_percent = 15.0\nmax_steady_state_error = 0.0\nmax_peak_sensitivity = 2.0\n"
    "max_settling_time = 12.0",
    'structures = ["PI", "PID"]\neffort = 0.3\nkeep = 4')
DEAD_TIME = _problem(
    "numerator = [1.0]\ndenominator = [1.0, 2.0, 1.0]\ndead_time = 0.5",  # e^-0.5s/(s+1)^2
    "max_overshoot_percent = 10.0\nmin_phase_margin_deg = 45.0\nmin_gain_margin_db = 6.0\n"
    "max_steady_state_error = 0.0\nmax_settling_time = 12.0",
    'structures = ["PI", "PID"]\neffort = 0.3\nkeep = 4')
# (s-1)/((s-2)(s+3)): one real plant pole (at 2) between the real RHP zeros at 1 and at
# infinity, so parity interlacing fails and no stable compensator stabilises it
# (D. C. Youla, J. J. Bongiorno and C. N. Lu, "Single-loop feedback stabilization of linear
# multivariable dynamical plants", Automatica 10, 1974)
PARITY = _problem(
    'expression = "(s-1)/((s-2)*(s+3))"',
    "max_settling_time = 10.0\nplant_gain_range = [0.9, 1.1]",
    'structures = ["lead", "general"]\ngeneral_order = 1\nmax_frequency = 50.0\n'
    "effort = 0.3\nkeep = 6\nseed = 1")


@pytest.fixture(scope="module")
def runs():
    return {name: run_design(p) for name, p in
            (("stable", STABLE), ("unstable", UNSTABLE), ("rhp_zero", RHP_ZERO),
             ("dead_time", DEAD_TIME), ("parity", PARITY))}


@pytest.mark.parametrize("name", ["stable", "unstable", "rhp_zero", "dead_time"])
def test_every_feasible_design_passes_an_independent_check(runs, name):
    run = runs[name]
    problem = {"stable": STABLE, "unstable": UNSTABLE, "rhp_zero": RHP_ZERO,
               "dead_time": DEAD_TIME}[name]
    doc = run.to_json()
    json.dumps(doc, allow_nan=False)  # no NaN or infinity in the JSON
    assert doc["schema"] == SCHEMA
    feasible = [d for d in doc["designs"] if d["feasible"]]
    assert feasible, f"no feasible design for the {name} plant"
    assert run.any_feasible
    for d in feasible:
        independent_check(problem, d)
    # feasible designs first, ranks 1..n
    flags = [d["feasible"] for d in doc["designs"]]
    assert flags == sorted(flags, reverse=True)
    assert [d["rank"] for d in doc["designs"]] == list(range(1, len(flags) + 1))


def test_parity_interlacing_failure_needs_an_unstable_compensator_pole(runs):
    doc = runs["parity"].to_json()
    feasible = [d for d in doc["designs"] if d["feasible"]]
    assert feasible, "a general first-order compensator can stabilise this plant"
    for d in feasible:
        poles = np.roots(d["compensator"]["denominator"])  # numpy.roots
        assert np.any(poles.real > 0), "a stable compensator cannot stabilise this plant"
        independent_check(PARITY, d)
    # every lead (stable) candidate fails
    assert all(not d["feasible"] for d in doc["designs"] if d["structure"] == "lead")


def test_reverse_acting_plant_gets_only_negative_proportional_gains():
    # -2/((50 s - 1)(10 s + 1)): the closed loop 500 s^2 + 40 s - 1 - 2 K is stable exactly
    # when -1 - 2 K > 0, i.e. K < -0.5 (Routh-Hurwitz for a quadratic; common practice)
    problem = _problem('expression = "-2/((50*s-1)*(10*s+1))"',
                       "max_overshoot_percent = 30.0\nmax_settling_time = 150.0\n"
                       "gain_range = [-20.0, 20.0]",
                       'structures = ["P", "lead"]\neffort = 0.3\nkeep = 30')
    doc = run_design(problem).to_json()
    ps = [d for d in doc["designs"] if d["feasible"] and d["structure"] == "P"]
    assert ps, "a negative proportional gain meets these limits"
    for d in ps:
        assert d["compensator"]["gain"] < -0.5
        independent_check(problem, d)


def test_peak_sensitivity_respects_the_interpolation_bound(runs):
    # real RHP zero z = 1 and pole p = 2: every stabilising design has
    # Ms >= |z + p| / |z - p| = 3 (S. Skogestad and I. Postlethwaite, Multivariable
    # Feedback Control, 2nd ed., 2005, ch. 5; from memory)
    stable = [d for d in runs["parity"].designs if d.verdict.stable]
    assert stable
    for d in stable:
        assert d.verdict.metrics["peak_sensitivity"] >= 3.0 * (1 - 1e-6)


def test_json_carries_the_contract_fields(runs):
    doc = runs["stable"].to_json()
    assert {"schema", "plant", "designs", "requirements", "region", "proportional",
            "caution"} <= set(doc)
    d = doc["designs"][0]
    assert {"rank", "structure", "origin", "feasible", "compensator", "closed_loop_poles",
            "metrics", "violations"} <= set(d)
    assert {"numerator", "denominator", "zeros", "poles", "gain"} <= set(d["compensator"])
    assert {"overshoot_percent", "settling_time", "rise_time", "steady_state_error",
            "min_damping_ratio", "phase_margin_deg", "gain_margin_db", "peak_sensitivity",
            "peak_control_effort", "stable_plant_gain_range"} <= set(d["metrics"])
    assert d["origin"] in ("placement", "convex", "search")
    comp = d["compensator"]
    # the contract's gain: ratio of leading coefficients (monic convention)
    assert comp["gain"] == pytest.approx(comp["numerator"][0] / comp["denominator"][0])
    lines = runs["stable"].table_lines()
    assert any("OS%<=10" in line for line in lines)
    assert any(line.startswith("Caution") for line in lines)


def test_same_seed_same_ranking():
    problem = _problem("numerator = [1.0]\ndenominator = [1.0, 3.0, 2.0, 0.0]",
                       "max_overshoot_percent = 10.0\nmax_settling_time = 6.0",
                       'structures = ["P", "lead"]\ntime_budget = 20.0\nkeep = 5\nseed = 7')
    a = run_design(problem)
    b = run_design(problem)
    assert not a.stats["time_capped"] and not b.stats["time_capped"]

    def key(run):
        return [(d.candidate.structure, d.candidate.origin, d.candidate.num, d.candidate.den)
                for d in run.designs]

    assert key(a) == key(b)


def test_passing_a_tighter_specification_implies_passing_a_looser_one(runs):
    # monotonicity of every limit (common practice): re-judge the feasible designs of the
    # stable case under looser limits
    looser = _problem("numerator = [10.0]\ndenominator = [1.0, 8.0, 17.0, 10.0]",
                      "max_overshoot_percent = 20.0\nmax_settling_time = 5.0\n"
                      "min_phase_margin_deg = 30.0\nmax_steady_state_error = 0.05",
                      'structures = ["PI", "PID"]')
    feasible = [d for d in runs["stable"].designs if d.verdict.feasible]
    assert feasible
    for d in feasible:
        # the whole design: the loop and its reference shaping
        assert verify(looser, d.candidate.controller).feasible


def test_nothing_feasible_reports_the_nearest_designs_with_reasons():
    # 1/s^2 with P alone: never asymptotically stable (common practice)
    problem = _problem("numerator = [1.0]\ndenominator = [1.0, 0.0, 0.0]",
                       "max_overshoot_percent = 10.0",
                       'structures = ["P"]\neffort = 0.2\nkeep = 3')
    run = run_design(problem)
    assert not run.any_feasible
    assert run.designs and all(d.verdict.violations for d in run.designs)
    assert any("Proportional" in line for line in run.table_lines())


def test_progress_is_reported():
    calls = []
    problem = _problem("numerator = [1.0]\ndenominator = [1.0, 1.0]", "",
                       'structures = ["P"]\neffort = 0.2\nkeep = 2')
    run_design(problem, progress=lambda done, total, label: calls.append((done, total, label)))
    assert calls and calls[-1][0] == calls[-1][1]
    assert all(0 <= d <= t for d, t, _ in calls)
