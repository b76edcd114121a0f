"""Step-test fitting (synth.problem.fit) checked against outside references.

References used here:
* scipy.signal.lti.output (linear interpolation of the input between samples) for
  the simulation of every model, with the dead time as an exact shift by a
  whole number of steps of a fine grid;
* the two-point methods of Smith (1972) and Sundaresan and Krishnaswamy
  (1978) as given in Seborg, Edgar and Mellichamp, *Process Dynamics and
  Control*, 2nd ed., 2004, section 7.2 (from memory), against exact
  first-order-plus-dead-time curves (math.exp);
* Skogestad's half rule (J. Process Control 13, 2003), exact arithmetic;
* the statistical meaning of a standard error: with white noise about 95 %
  of estimates lie within two standard errors of the truth (common practice).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys

import numpy as np
import pytest
from scipy import signal

from synth.errors import InputError
from synth.problem.fit import (
    StepData,
    fit_step_test,
    half_rule,
    read_step_csv,
    simulate,
    smith_two_point,
    sundaresan_krishnaswamy,
)
from synth.problem.requirements import load_problem, problem_from_text


def run_synth(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "synth.cli", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=300)


# ---------------------------------------------------------------------------
# reference data: scipy.signal.lti.output on a fine grid, exact delay by shifting
# ---------------------------------------------------------------------------

def _den(lags, integrating):
    den = np.array([1.0])
    for tc in lags:
        den = np.polymul(den, [tc, 1.0])
    return np.polymul(den, [1.0, 0.0]) if integrating else den


def reference_test(gain, lags, dead_time, integrating, *, rng, samples=500, t_scale=1.0,
                   noise=0.01, uneven=True, duration=None, y_rest=40.0, u_rest=20.0):
    """A bump test simulated by scipy.signal.lti.output; the times are multiplied by t_scale."""
    tc = max([*lags, dead_time, 1.0])
    duration = duration or 8.0 * (sum(lags) + dead_time + (4.0 if integrating else 0.0)) + tc
    fine = 20_000
    if dead_time > 0:  # a grid step that divides the dead time: the delay is an exact shift
        duration = dead_time / math.ceil(dead_time * fine / duration) * fine
    tf = np.linspace(0.0, duration, fine + 1)
    dt = tf[1] - tf[0]
    t_step = 0.1 * duration
    du = np.where(tf >= t_step, 2.0, 0.0)
    _, y, _ = signal.lti([gain], _den(lags, integrating)).output(du, tf)
    shift = int(round(dead_time / dt))
    y = np.concatenate([np.zeros(shift), y[: y.size - shift]])
    if uneven:
        idx = np.sort(rng.choice(np.arange(1, fine), samples - 2, replace=False))
        idx = np.concatenate([[0], idx, [fine]])
    else:
        idx = np.round(np.linspace(0, fine, samples)).astype(int)
    k = int(np.flatnonzero(np.diff(du))[0])
    idx = np.unique(np.concatenate([idx, [k, k + 1]]))
    size = float(np.max(np.abs(y)))
    out = y_rest + y[idx] + noise * size * rng.standard_normal(idx.size)
    truth_shift = dead_time - shift * dt  # zero by construction
    assert abs(truth_shift) < 1e-9 * duration
    return StepData(tf[idx] * t_scale, u_rest + du[idx], out, "reference")


# ---------------------------------------------------------------------------
# simulation
# ---------------------------------------------------------------------------

CASES = [
    ("lag", (1.3,), False),
    ("lag2", (1.3, 0.4), False),
    ("lag2", (0.7, 0.7), False),            # equal time constants
    ("lag2", (0.7, 0.7 * (1 + 1e-7)), False),
    ("lag2", (5.0, 0.001), False),          # a lag far shorter than the sampling interval
    ("int", (), True),
    ("lagint", (0.5,), True),
]


@pytest.mark.parametrize("kind,lags,integrating", CASES)
def test_simulation_matches_scipy_lti_output(kind, lags, integrating):
    t = np.linspace(0.0, 10.0, 2001)
    u = np.where(t >= 1.0, 1.0, 0.0) + 0.3 * np.sin(t) * (t > 3.0)
    _, ref, _ = signal.lti([1.0], _den(lags, integrating)).output(u, t)
    scale = np.max(np.abs(ref))
    assert np.max(np.abs(simulate(kind, lags, 0.0, t, u) - ref)) <= 1e-11 * scale
    # a dead time of 100 grid steps is an exact shift of the reference
    delayed = np.concatenate([np.zeros(100), ref[:-100]])
    assert np.max(np.abs(simulate(kind, lags, 0.5, t, u) - delayed)) <= 1e-11 * scale


def test_simulation_on_uneven_samples_matches_scipy_on_a_fine_grid():
    rng = np.random.default_rng(4)
    tf = np.linspace(0.0, 20.0, 40_001)
    u = np.where(tf >= 2.0, 1.0, 0.0)
    _, ref, _ = signal.lti([1.0], np.polymul([3.0, 1.0], [0.8, 1.0])).output(u, tf)
    idx = np.unique(np.concatenate([[0, 40_000, 3999, 4000],
                                    rng.choice(np.arange(1, 40_000), 300, replace=False)]))
    got = simulate("lag2", (3.0, 0.8), 0.0, tf[idx], u[idx])
    assert np.max(np.abs(got - ref[idx])) <= 1e-10


# ---------------------------------------------------------------------------
# graphical methods
# ---------------------------------------------------------------------------

def _fopdt_time(fraction, tau, theta):
    return theta - tau * math.log(1.0 - fraction)


@pytest.mark.parametrize("tau,theta", [(5.0, 1.0), (0.02, 0.003), (600.0, 90.0)])
def test_smith_two_point_recovers_an_exact_first_order_curve(tau, theta):
    # Smith (1972): 28.3 % and 63.2 % points; exact for a first-order-plus-dead-time curve
    t28 = _fopdt_time(1.0 - math.exp(-1.0 / 3.0), tau, theta)
    t63 = _fopdt_time(1.0 - math.exp(-1.0), tau, theta)
    got_tau, got_theta = smith_two_point(t28, t63)
    assert got_tau == pytest.approx(tau, rel=1e-12)
    assert got_theta == pytest.approx(theta, rel=1e-9, abs=1e-12 * tau)


@pytest.mark.parametrize("tau,theta", [(5.0, 1.0), (0.02, 0.003), (600.0, 90.0)])
def test_sundaresan_krishnaswamy_within_the_rounding_of_its_constants(tau, theta):
    # Sundaresan and Krishnaswamy (1978), constants 0.67, 1.3, 0.29 (Seborg et al. 2004,
    # section 7.2, from memory): on an exact curve they are right to about 1 % of tau
    t35 = _fopdt_time(0.353, tau, theta)
    t85 = _fopdt_time(0.853, tau, theta)
    got_tau, got_theta = sundaresan_krishnaswamy(t35, t85)
    assert abs(got_tau - tau) <= 0.01 * tau
    assert abs(got_theta - theta) <= 0.015 * tau


def test_half_rule_as_published():
    # Skogestad (2003): the largest neglected lag is split half to the smallest kept lag and
    # half to the dead time; smaller neglected lags go to the dead time (exact arithmetic)
    assert half_rule((10.0, 4.0, 1.0), 0.5, keep=1) == ((12.0,), 0.5 + 2.0 + 1.0)
    assert half_rule((10.0, 4.0, 1.0), 0.5, keep=2) == ((10.0, 4.5), 1.0)


# ---------------------------------------------------------------------------
# fits recover known parameters within their standard errors
# ---------------------------------------------------------------------------

COVERAGE = [
    ("first-order", 1.5, (8.0,), 3.0, False),
    ("second-order", -0.7, (9.0, 2.5), 1.5, False),
    ("integrating", 0.2, (2.0,), 4.0, True),
]

SCALES = (1.0, 1e-3, 1e3)  # a drive in milliseconds and a process in kiloseconds are ordinary


@pytest.mark.parametrize("model,gain,lags,theta,integrating", COVERAGE)
def test_fit_recovers_parameters_within_standard_errors(model, gain, lags, theta, integrating):
    inside2 = 0
    total = 0
    worst = 0.0
    for seed in range(9):
        rng = np.random.default_rng(1000 + seed)
        s = SCALES[seed % 3]
        data = reference_test(gain, lags, theta, integrating, rng=rng, t_scale=s,
                              uneven=seed % 2 == 0)
        fit = fit_step_test(data, model)
        g_unit = 1.0 / s if integrating else 1.0
        pairs = [(fit.gain, fit.se_gain, gain * g_unit),
                 (fit.dead_time, fit.se_dead_time, theta * s)]
        assert len(fit.time_constants) == len(lags)
        pairs += [(a, b, c * s) for a, b, c in zip(fit.time_constants, fit.se_time_constants,
                                                     sorted(lags, reverse=True), strict=True)]
        for est, se, true in pairs:
            assert math.isfinite(se) and se > 0
            z = abs(est - true) / se
            worst = max(worst, z)
            inside2 += z <= 2.0
            total += 1
    # about 95 % within two standard errors; ask for 80 % and none beyond 4.5
    assert inside2 >= 0.8 * total, (inside2, total)
    assert worst <= 4.5, worst


def test_integrating_without_lag_drops_the_lag():
    rng = np.random.default_rng(7)
    data = reference_test(0.05, (), 2.0, True, rng=rng, duration=60.0)
    fit = fit_step_test(data, "integrating")
    assert fit.time_constants == ()
    assert abs(fit.gain - 0.05) <= 3 * fit.se_gain
    assert abs(fit.dead_time - 2.0) <= 3 * fit.se_dead_time


def test_offset_and_data_before_the_step():
    rng = np.random.default_rng(8)
    data = reference_test(2.0, (5.0,), 1.0, False, rng=rng, y_rest=-300.0, u_rest=65.0)
    fit = fit_step_test(data, "first-order")
    assert abs(fit.offset - (-300.0)) <= 3 * fit.residual_rms
    assert abs(fit.gain - 2.0) <= 3 * fit.se_gain


# ---------------------------------------------------------------------------
# bad data: one line naming the file, the line and the problem
# ---------------------------------------------------------------------------

def _rows(n=40, step_at=10):
    return ["time,input,output"] + [
        f"{i * 0.5},{1.0 if i >= step_at else 0.0},{(1 - math.exp(-max(0, i - step_at) / 6)):.6f}"
        for i in range(n)]


BAD = {
    "missing-column": (["time,input,value", "0,0,0"] + _rows()[2:], "line 1", "missing column output"),
    "not-monotonic": (_rows()[:6] + ["1.0,0,0"] + _rows()[6:], "line 7", "does not increase"),
    "nan": (_rows()[:5] + ["2.0,0,nan"] + _rows()[6:], "line 6", "finite"),
    "not-a-number": (_rows()[:5] + ["2.0,0,abc"] + _rows()[6:], "line 6", "not a number"),
    "few-samples": (_rows(12, 3), None, "at least 20"),
    "no-input-change": ([r.replace(",1.0,", ",0.0,") for r in _rows()], None,
                        "input never changes"),
    "semicolons": ([r.replace(",", ";") for r in _rows()], "line 1", "commas"),
    "empty": ([], None, "no header"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_bad_data_names_file_line_and_problem(tmp_path, name):
    rows, where, what = BAD[name]
    p = tmp_path / f"{name}.csv"
    p.write_text("\n".join(rows) + "\n")
    with pytest.raises(InputError) as info:
        fit_step_test(read_step_csv(p), "first-order")
    msg = str(info.value)
    assert str(p) in msg and what in msg
    if where:
        assert where in msg
    assert "\n" not in msg


def test_no_visible_response_is_refused(tmp_path):
    rng = np.random.default_rng(3)
    t = np.arange(200) * 0.1
    u = np.where(t >= 2.0, 1.0, 0.0)
    y = 5.0 + 0.01 * rng.standard_normal(t.size)   # the output does not react
    p = tmp_path / "flat.csv"
    p.write_text("time,input,output\n" + "".join(f"{a},{b},{c}\n" for a, b, c in zip(t, u, y, strict=True)))
    with pytest.raises(InputError, match="no visible response"):
        fit_step_test(p, "first-order")


def test_not_utf8_and_cli_exit_2(tmp_path):
    p = tmp_path / "binary.csv"
    p.write_bytes(b"\xff\xfe\x00time")
    res = run_synth("fit", str(p), "--model", "first-order")
    assert res.returncode == 2
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and str(p) in lines[0] and "UTF-8" in lines[0]
    assert "Traceback" not in res.stderr


# ---------------------------------------------------------------------------
# the [plant.step_test] form and the fit command
# ---------------------------------------------------------------------------

def _write_reference_csv(path, data: StepData):
    path.write_text("time,input,output\n" + "".join(
        f"{a!r},{b!r},{c!r}\n" for a, b, c in zip(data.time.tolist(), data.input.tolist(),
                                                  data.output.tolist(), strict=True)))


def test_step_test_plant_in_a_requirements_file(tmp_path):
    rng = np.random.default_rng(11)
    _write_reference_csv(tmp_path / "bump.csv",
                         reference_test(1.5, (9.0, 2.5), 1.5, False, rng=rng))
    text = ('[plant]\nlabel = "mixer"\n[plant.step_test]\ndata = "bump.csv"\n'
            'model = "second-order"\n')
    toml = tmp_path / "loop.toml"
    toml.write_text(text)
    problem = load_problem(toml)
    fit = fit_step_test(tmp_path / "bump.csv", "second-order")
    assert problem.plant.label == "mixer"
    assert problem.plant.dead_time == fit.dead_time
    np.testing.assert_array_equal(problem.plant.denominator, fit.denominator)
    # the fitted model is the one the reference simulated, within three standard errors
    assert abs(fit.gain - 1.5) <= 3 * fit.se_gain


@pytest.mark.parametrize("extra,key,what", [
    ("ranges_from_fit = -2.0\n", "plant.step_test.ranges_from_fit", "positive number"),
    ('model = "third-order"\n', "plant.step_test.model", "unknown model"),
    ("window = 3\n", "plant.step_test.window", "unknown key"),
])
def test_step_test_table_errors(tmp_path, extra, key, what):
    rng = np.random.default_rng(12)
    _write_reference_csv(tmp_path / "bump.csv", reference_test(1.0, (4.0,), 1.0, False, rng=rng))
    body = 'data = "bump.csv"\n' + ('' if "model" in extra else 'model = "first-order"\n') + extra
    toml = tmp_path / "loop.toml"
    toml.write_text("[plant]\n[plant.step_test]\n" + body)
    with pytest.raises(InputError) as info:
        load_problem(toml)
    assert key in str(info.value) and what in str(info.value)
    assert str(toml) in str(info.value)


def test_ranges_from_fit_give_the_parametric_plant(tmp_path):
    # the box is the fit's own estimate +- n standard errors (FitResult.ranges, computed
    # from the covariance of scipy.optimize.least_squares), and its centre is the fitted plant
    rng = np.random.default_rng(12)
    _write_reference_csv(tmp_path / "bump.csv", reference_test(1.0, (4.0,), 1.0, False, rng=rng))
    toml = tmp_path / "loop.toml"
    toml.write_text('[plant]\n[plant.step_test]\ndata = "bump.csv"\nmodel = "first-order"\n'
                    'ranges_from_fit = 2.0\n')
    problem = load_problem(toml)
    fit = fit_step_test(tmp_path / "bump.csv", "first-order")
    models = problem.models
    assert models.expression == "k/(T*s + 1)"
    expected = fit.ranges(2.0)
    assert {r.name: (r.lo, r.hi) for r in models.ranges} == expected
    assert dict(models.parameters) == {"k": fit.gain, "T": fit.time_constants[0]}
    # the nominal plant is the fitted model: gain k and pole -1/T
    assert problem.plant.dc_gain() == pytest.approx(fit.gain, rel=1e-12)
    assert np.roots(problem.plant.rational_den) == pytest.approx([-1 / fit.time_constants[0]])
    assert problem.plant.dead_time == fit.dead_time
    # a corner of the box is the model at the range ends
    corner = models.plant_at({"k": expected["k"][1], "T": expected["T"][0]})
    assert corner.dc_gain() == pytest.approx(expected["k"][1], rel=1e-12)


def test_template_without_data_is_refused_by_design():
    with pytest.raises(InputError, match="plant.step_test.data: missing"):
        problem_from_text('[plant]\n[plant.step_test]\nmodel = "first-order"\n', "t.toml")


def test_dead_time_beside_a_step_test_is_refused(tmp_path):
    with pytest.raises(InputError, match="plant.dead_time"):
        problem_from_text('[plant]\ndead_time = 1.0\n[plant.step_test]\ndata = "x.csv"\n'
                          'model = "first-order"\n', str(tmp_path / "t.toml"))


def test_ranges_and_plant_table():
    rng = np.random.default_rng(13)
    fit = fit_step_test(reference_test(1.5, (9.0, 2.5), 1.5, False, rng=rng), "second-order")
    table = fit.plant_table(n_sigma=2.0)
    assert table["expression"] == "k/((T1*s + 1)*(T2*s + 1))"
    assert set(table["parameters"]) == {"k", "T1", "T2"}
    for name in ("k", "T1", "T2", "dead_time"):
        lo, hi = table["ranges"][name]
        assert lo < hi
    k_lo, k_hi = table["ranges"]["k"]
    assert k_lo == pytest.approx(fit.gain - 2 * fit.se_gain)
    assert k_hi == pytest.approx(fit.gain + 2 * fit.se_gain)
    assert "ranges" not in fit.plant_table()


def test_fit_command_outputs(tmp_path):
    rng = np.random.default_rng(14)
    _write_reference_csv(tmp_path / "bump.csv", reference_test(0.8, (30.0,), 6.0, False, rng=rng))
    out = tmp_path / "fit.json"
    req = tmp_path / "loop.toml"
    png = tmp_path / "fit.png"
    res = run_synth("fit", str(tmp_path / "bump.csv"), "--model", "first-order", "--json",
                    str(out), "--write-requirements", str(req), "--plot", str(png))
    assert res.returncode == 0, res.stderr
    doc = json.loads(out.read_text())
    assert doc["schema"] == "synth.fit/1" and doc["model"] == "first-order"
    assert set(doc["parameters"]) == {"gain", "time_constants", "dead_time"}
    assert len(doc["parameters"]["time_constants"]) == 1
    assert doc["samples"] > 20 and doc["residual_rms"] > 0
    assert "standard_errors" in doc and "plant" in doc
    # the written requirements file is valid, carries the caution and the fitted plant
    text = req.read_text()
    assert "CAUTION" in text and "functional-safety" in text
    problem = load_problem(req)
    assert problem.plant.dead_time == pytest.approx(doc["parameters"]["dead_time"], rel=1e-5)
    assert problem.plant.dc_gain() == pytest.approx(doc["parameters"]["gain"], rel=1e-5)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "Caution" in res.stdout
