"""synth frontier: the best objective per structure as the Ms limit moves, and relaxations.

External references:

* the PI frontier against the independent MIGO-type optimum of the peers'
  benchmark (tests/benchmarks/peers.py: ``best_pi_load_iae``, which maximises
  load rejection under the Ms circle with its own simulator and
  scipy.optimize; Astrom, Panagopoulos and Hagglund, Automatica 34(5), 1998),
  and every design's Ms against ``peers.loop_figures`` (scipy.signal.freqresp,
  exact delay);
* the shape of the PID trade-off: Garpinger, Hagglund and Astrom, "Performance
  and robustness trade-offs in PID control", J. Process Control 24 (2014),
  qualitative facts from memory (the load IAE falls as the Ms limit rises;
  derivative action buys most on lag-dominated plants, least on
  delay-dominated ones);
* a slack constraint has no price (complementary slackness, Boyd and
  Vandenberghe, Convex Optimization, 2004, sec. 5.5), with "Ms bounds the gain
  margin: GM >= Ms/(Ms - 1)" (common practice; Astrom and Murray, Feedback
  Systems, 2008, sec. 9.3) making a gain-margin limit slack;
* the peak-sensitivity lower bound of a plant with a right-half-plane pole p
  and zero z, Ms >= |p + z| / |p - z| (common practice; Astrom and Murray 2008,
  sec. 11.5, from memory): no design can meet a smaller Ms limit;
* every point of every bundled case re-verified without synth
  (tests/independent.py: numpy.roots, scipy.signal.step, scipy.signal.freqresp);
* the relaxed limits against the contract's own example (Ms 1.4 becomes 1.54).
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest
from benchmarks import peers
from independent import independent_check

from synth.cli import main
from synth.errors import InputError, OptionError
from synth.frontier import (
    MEASURE_KEY,
    SCHEMA,
    binding_requirements,
    frontier_point,
    load_frontier,
    parse_levels,
    relax,
    relaxed_limit,
    run_frontier,
    with_limit,
)
from synth.problem.requirements import load_problem, problem_from_text

ROOT = Path(__file__).resolve().parents[1]
CASES = sorted((ROOT / "cases").glob("*.toml"))


def _plant(name):
    return next(p for p in peers.BATCH if p.name == name)


def _toml(p, structures, extra="", effort=1.0) -> str:
    lines = ["[plant]", f"numerator = {list(p.num)}", f"denominator = {list(p.den)}"]
    if p.dead_time:
        lines.append(f"dead_time = {p.dead_time}")
    lines += ["", "[requirements]", "max_peak_sensitivity = 1.4",
              "max_steady_state_error = 0.0", extra, "", "[search]",
              f"structures = {json.dumps(list(structures))}", 'objective = "disturbance"',
              f"effort = {effort}"]
    return "\n".join(lines) + "\n"


# ----------------------------------------------------------------------------------------------
# PI on a lag with dead time: against the independent optimum
# ----------------------------------------------------------------------------------------------

PI_PLANT = "fopdt-T1"
PI_LEVELS = (1.3, 1.4, 1.7)


@pytest.fixture(scope="module")
def pi_frontier():
    # the gain-margin limit is slack at every Ms <= 1.7: GM >= Ms/(Ms-1) is 7.7 dB there
    problem = problem_from_text(_toml(_plant(PI_PLANT), ["PI"], "min_gain_margin_db = 3.0"),
                                "pi.toml")
    return problem, run_frontier(problem, levels=PI_LEVELS, effort=0.5)


def test_pi_frontier_is_non_increasing_and_meets_each_level(pi_frontier):
    _, result = pi_frontier
    p = _plant(PI_PLANT)
    points = result.structures["PI"]
    assert [pt.level for pt in points] == list(PI_LEVELS)
    # the searched values themselves (not the envelope) fall as the limit is relaxed
    found = [pt.searched for pt in points]
    assert all(v is not None for v in found)
    assert all(b <= a * (1 + 1e-3) for a, b in zip(found, found[1:], strict=False)), found
    for pt in points:
        c = pt.design["compensator"]
        f = peers.loop_figures(p, c["numerator"], c["denominator"])
        assert f.stable and f.ms <= pt.level * (1 + 2e-3), (pt.level, f.ms)


@pytest.mark.parametrize("level", [1.3, 1.7])
def test_pi_frontier_matches_the_independent_optimum(pi_frontier, level):
    _, result = pi_frontier
    point = next(pt for pt in result.structures["PI"] if pt.level == level)
    ref = peers.best_pi_load_iae(_plant(PI_PLANT), level)
    # the value is the load IAE (no noise preference bites on a PI): within 2 %
    assert point.value == pytest.approx(ref.iae, rel=0.02)
    assert point.design["metrics"]["load_iae"] == pytest.approx(ref.iae, rel=0.02)


def test_binding_ms_relaxed_by_ten_percent_matches_the_optimum_there(pi_frontier):
    _, result = pi_frontier
    binding = {r.requirement: r for r in result.relaxations}
    assert "max_peak_sensitivity" in binding
    r = binding["max_peak_sensitivity"]
    assert (r.limit_from, r.limit_to) == (1.4, 1.54)
    assert r.objective_to == pytest.approx(peers.best_pi_load_iae(_plant(PI_PLANT), 1.54).iae,
                                           rel=0.02)


def test_relaxing_a_slack_requirement_changes_nothing(pi_frontier):
    problem, result = pi_frontier
    assert "min_gain_margin_db" in dict(result.slack)
    assert "min_gain_margin_db" not in {r.requirement for r in result.relaxations}
    r = relax(problem, "min_gain_margin_db", "PI", result.best.value, effort=0.5)
    assert r.limit_to == pytest.approx(2.7)
    assert r.searched == pytest.approx(result.best.value, rel=0.005)


def test_binding_split_follows_the_room_rule():
    problem = problem_from_text(_toml(_plant(PI_PLANT), ["PI"], "min_gain_margin_db = 3.0"))
    metrics = {"peak_sensitivity": 1.39, "steady_state_error": 0.0, "gain_margin_db": 9.0}
    binding, slack = binding_requirements(problem, metrics)
    assert [e.key for e, _, _ in binding] == ["max_steady_state_error", "max_peak_sensitivity"]
    assert [e.key for e, _, _ in slack] == ["min_gain_margin_db"]


# ----------------------------------------------------------------------------------------------
# PID: the published shape of the trade-off
# ----------------------------------------------------------------------------------------------


def _value(name, structure, level):
    p = _plant(name)
    problem = problem_from_text(_toml(p, [structure]))
    eff = 0.5 if structure == "PI" else 1.0  # PI's optimum holds at half effort (docs/frontier.md)
    return frontier_point(with_limit(problem, MEASURE_KEY, level, structure=structure,
                                     effort=eff), structure, level).value


def test_pid_trade_off_shape_after_garpinger_hagglund_astrom():
    # Garpinger, Hagglund and Astrom (2014), from memory: the PID's load IAE falls as the
    # robustness limit is relaxed, and the derivative's gain over a PI is largest for a
    # lag-dominated plant and smallest for a delay-dominated one
    assert _value("lags-n4", "PID", 2.0) < _value("lags-n4", "PID", 1.4)
    ratio = {name: _value(name, "PID", 1.4) / _value(name, "PI", 1.4)
             for name in ("sopdt-T3", "lags-n4", "fopdt-T0.1")}
    assert ratio["sopdt-T3"] < ratio["lags-n4"] < ratio["fopdt-T0.1"] < 1.0, ratio


# ----------------------------------------------------------------------------------------------
# every bundled case
# ----------------------------------------------------------------------------------------------


def _checkable(design: dict) -> dict:
    """The design with a pole-free controller's set-point weight b written as the prefilter F = b.

    For C = K (a P controller) the weighted reference path b K equals F C with F = b;
    tests/independent.py takes the weights apart by partial fractions, which need a pole.
    """
    shaping = design.get("reference_filter") or {}
    if "setpoint_weights" in shaping and len(design["compensator"]["denominator"]) == 1:
        b = shaping["setpoint_weights"]["b"]
        return {**design, "reference_filter": {"numerator": [b], "denominator": [1.0]}}
    return design


@pytest.mark.parametrize("case", CASES, ids=[c.stem for c in CASES])
def test_frontier_on_every_bundled_case(case):
    problem = load_problem(case)
    levels = (1.6,)
    result = run_frontier(problem, levels=levels, effort=0.05)
    doc = json.loads(json.dumps(result.to_json(), allow_nan=False))
    assert doc["schema"] == SCHEMA and doc["measure"] == "peak_sensitivity"
    assert doc["objective"] == problem.search.objective
    assert list(doc["structures"]) == list(problem.search.structures)
    for rows in doc["structures"].values():
        assert [r["level"] for r in rows] == list(levels)
        for r in rows:
            if r["design"] is None:
                assert r["value"] is None
                continue
            assert r["design"]["feasible"]
            independent_check(with_limit(problem, MEASURE_KEY, r["level"]), _checkable(r["design"]))
    for r in doc["relaxations"]:
        assert set(r) >= {"requirement", "from", "to", "objective_from", "objective_to"}
        assert r["objective_to"] <= r["objective_from"]


# ----------------------------------------------------------------------------------------------
# limits, levels, the command
# ----------------------------------------------------------------------------------------------


def test_relaxed_limits():
    assert relaxed_limit("max_peak_sensitivity", 1.4) == 1.54       # the contract's example
    assert relaxed_limit("max_settling_time", 3.0) == 3.3
    assert relaxed_limit("min_phase_margin_deg", 45.0) == 40.5
    assert relaxed_limit("max_overshoot_percent", 0.0) == 0.1       # 10 % of the 1 % floor
    lo, hi = relaxed_limit("plant_gain_range", (0.5, 2.0))
    assert (lo, hi) == (0.55, pytest.approx(2.0 / 1.1))
    assert relaxed_limit("gain_range", (0.0, 50.0)) == (-2.5, 52.5)


@pytest.mark.parametrize("text, words", [
    ("1.4,1.2", "increasing"), ("1.2,1.2", "twice"), ("0.9", "between 1 and"),
    ("1.2,,1.4", "comma-separated"), ("abc", "not a number"), ("nan", "between 1 and"),
    (",".join(str(1 + k / 100) for k in range(30)), "at most"),
])
def test_bad_levels_are_one_clear_error(text, words):
    with pytest.raises(OptionError, match=words):
        parse_levels(text)


def test_levels_parse():
    assert parse_levels("1.2, 1.5,2") == (1.2, 1.5, 2.0)
    assert parse_levels("1") == (1.0,)


def _cli(args, capsys):
    with pytest.raises(SystemExit) as ex:
        main(args)
    out = capsys.readouterr()
    return ex.value.code, out.out, out.err


def test_cli_bad_levels_exit_2_one_line(tmp_path, capsys):
    code, out, err = _cli(["frontier", str(CASES[0]), "--levels", "2,1.5"], capsys)
    assert code == 2 and len(err.strip().splitlines()) == 1 and "--levels" in err
    assert "Traceback" not in err + out


def test_cli_checks_output_paths_before_work(tmp_path, capsys, monkeypatch):
    import synth.frontier

    def never(*a, **k):
        raise AssertionError("the frontier ran before the output paths were checked")

    monkeypatch.setattr(synth.frontier, "run_frontier", never)
    code, _, err = _cli(["frontier", str(CASES[0]), "--json",
                         str(tmp_path / "missing" / "f.json")], capsys)
    assert code == 2 and "--json" in err
    code, _, err = _cli(["frontier", str(CASES[0]), "--plot", str(tmp_path / "f.pdf")], capsys)
    assert code == 2 and "--plot" in err


def test_cli_exit_3_when_no_level_is_feasible(tmp_path, capsys):
    # unstable pole p = 2.3 and zero z = 2: Ms >= (2.3 + 2)/(2.3 - 2) = 14.3 for every design
    f = tmp_path / "hard.toml"
    f.write_text('[plant]\nexpression = "(s - 2)/((s - 2.3)*(s + 5))"\n\n[requirements]\n'
                 'max_peak_sensitivity = 1.5\n\n[search]\nstructures = ["PI"]\neffort = 0.05\n')
    code, out, _ = _cli(["frontier", str(f), "--levels", "1.2,2", "--json",
                         str(tmp_path / "f.json"), "--plot", str(tmp_path / "f.png")], capsys)
    assert code == 3
    doc = json.loads((tmp_path / "f.json").read_text())
    assert all(r["value"] is None for r in doc["structures"]["PI"])
    assert (tmp_path / "f.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "linear model" in out             # the caution travels with the table


def test_cli_json_svg_and_same_json_when_run_twice_at_once(tmp_path):
    # two processes at once (under load): the same file and seed give the same JSON
    f = tmp_path / "quick.toml"
    f.write_text(_toml(_plant("fopdt-T1"), ["PI", "PID"], effort=0.05))
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    procs = [subprocess.Popen([sys.executable, "-m", "synth.cli", "frontier", str(f),
                               "--levels", "1.4,1.8", "--json", str(tmp_path / f"{i}.json"),
                               "--plot", str(tmp_path / f"{i}.svg")],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, cwd=ROOT)
             for i in range(2)]
    for p in procs:
        _, err = p.communicate(timeout=600)
        assert p.returncode == 0, err.decode()
    a, b = ((tmp_path / f"{i}.json").read_bytes() for i in range(2))
    assert a == b
    import xml.etree.ElementTree as ET

    ET.fromstring((tmp_path / "0.svg").read_bytes())      # a well-formed vector picture
    doc = json.loads(a)
    assert doc["relaxations"] and doc["relaxations"][0]["from"] is not None
    assert math.isfinite(doc["structures"]["PI"][0]["value"])
    assert load_frontier(tmp_path / "0.json") == doc
    doc["structures"]["PI"][0]["level"] = "high"
    (tmp_path / "bad.json").write_text(json.dumps(doc))
    with pytest.raises(InputError, match=r"structures\.PI\[0\]"):
        load_frontier(tmp_path / "bad.json")
