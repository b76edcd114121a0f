"""Actuator limits and anti-windup against independent simulations and textbook facts.

The saturated responses synth judges are checked against
``scipy.integrate.solve_ivp`` integrating the same control law written
independently, in the textbook's own state form (the back-calculation PI and
PID of Astrom and Hagglund; the observer form of Astrom and Wittenmark with
its gain from ``scipy.signal.place_poles``; a dead time by the method of
steps), against ``scipy.signal.step`` where the actuator never reaches a
limit, and against equilibria worked by hand.  The textbook fact that
back-calculation curbs the overshoot of a saturated PI step is checked on a
plant where it holds.
"""

from __future__ import annotations

import dataclasses
import json
import subprocess
import sys
from fractions import Fraction

import numpy as np
import pytest
from scipy import signal
from scipy.integrate import solve_ivp

from synth.errors import InputError
from synth.problem.actuator import Actuator
from synth.problem.plant import Plant
from synth.problem.requirements import problem_from_text
from synth.verify.controller import AntiWindup, Controller, ReferenceShaping
from synth.verify.saturated import response_metrics, simulate_saturated
from synth.verify.verdict import verify

PLANT_TEXT = """
[plant]
numerator = [1.0]
denominator = [1.0, 2.0, 1.0]
"""


def _sat(v, lo, hi):
    return min(max(v, lo), hi)


def _simulate(plant, controller, actuator):
    (loop,), info = simulate_saturated(plant, [controller], actuator)
    return loop, info


def _rel_err(a, b):
    return float(np.max(np.abs(a - b)) / np.max(np.abs(b)))


# ----------------------------------------------------------------------------------------------
# [actuator] parsing: one line naming the file and the key
# ----------------------------------------------------------------------------------------------

BAD_TABLES = [
    ("limits = [1.0, -1.0]", "actuator.limits", "empty range"),
    ("limits = [-1.0]", "actuator.limits", "two numbers"),
    ('limits = ["low", 1.0]', "actuator.limits", "number"),
    ("limits = [20.0, 100.0]", "actuator.limits", "operating_point"),
    ("limits = [0.0, 100.0]\noperating_point = 120.0", "actuator.operating_point", "outside"),
    ("max_rate = 0.0", "actuator.max_rate", "> 0"),
    ("max_rate = -3.0", "actuator.max_rate", "> 0"),
    ("limits = [-1.0, 1.0]\nreference_step = 0.0", "actuator.reference_step", "not be 0"),
    ("limits = [-1.0, 1.0]\nload_step = 0", "actuator.load_step", "not be 0"),
    ("limits = [-1.0, 1.0]\nmax_rte = 2.0", "actuator.max_rte", "max_rate"),
    ("reference_step = 2.0", "actuator", "limits"),
    ("operating_point = 3.0\nmax_rate = 1.0", "actuator.operating_point", "limits"),
    ("limits = [-1.0, inf]", "actuator.limits", "finite"),
]


@pytest.mark.parametrize("table,key,words", BAD_TABLES)
def test_bad_actuator_tables_are_one_line_errors_naming_the_key(table, key, words):
    # the contract: bad input is one clear line naming the file, the key and the problem
    with pytest.raises(InputError) as err:
        problem_from_text(PLANT_TEXT + "[actuator]\n" + table, "pump.toml")
    text = str(err.value)
    assert "\n" not in text and text.startswith(f"pump.toml: {key}:"), text
    assert words in text


def test_actuator_table_as_written():
    p = problem_from_text(PLANT_TEXT + "[actuator]\nlimits = [0, 100]\noperating_point = 40\n"
                          "max_rate = 5\nreference_step = -20\nload_step = 2\n")
    act = p.actuator
    assert act.limits == (0.0, 100.0) and act.max_rate == 5.0
    # the model speaks in deviations from the operating point (common practice)
    assert act.deviation_limits == (-40.0, 60.0)
    assert (act.reference_step, act.load_step) == (-20.0, 2.0)
    assert problem_from_text(PLANT_TEXT).actuator is None


def test_bad_actuator_file_exits_2_with_one_line(tmp_path):
    f = tmp_path / "bad.toml"
    f.write_text(PLANT_TEXT + "[actuator]\nlimits = [5.0, 1.0]\n")
    res = subprocess.run([sys.executable, "-m", "synth.cli", "design", str(f)],
                         capture_output=True, text=True, timeout=120)
    assert res.returncode == 2
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "actuator.limits" in lines[0] and "Traceback" not in res.stderr


# ----------------------------------------------------------------------------------------------
# saturated responses against scipy.integrate.solve_ivp
# ----------------------------------------------------------------------------------------------

def _pi_ode(kp, ki, tt, lo, hi, r, d, rate=None, eps=None):
    """PI with back-calculation around 1/(s+1)^2 in Astrom and Hagglund's state form.

    ``v = Kp e + I``, ``dI/dt = Ki e + (u - v)/Tt`` (``Tt = None``: no
    anti-windup), ``u = sat(v)``; with a rate limit the actuator is the fast
    tracking loop ``du/dt = clip((sat(v) - u)/eps, -rate, rate)``.
    """
    def f(t, x):
        x1, x2, i_state = x[:3]
        e = r - x2
        v = kp * e + i_state
        if rate is None:
            u = _sat(v, lo, hi)
            du = []
        else:
            u = x[3]
            du = [float(np.clip((_sat(v, lo, hi) - u) / eps, -rate, rate))]
        di = ki * e + ((u - v) / tt if tt else 0.0)
        return [-x1 + u + d, x1 - x2, di, *du]
    return f


@pytest.mark.parametrize("tt", [0.8, None])
def test_saturated_pi_matches_solve_ivp(tt):
    kp, ki, lo, hi = 2.0, 1.5, -1.2, 1.3
    aw = None if tt is None else AntiWindup("back-calculation", {"tracking_time": tt})
    plant = Plant.from_coefficients([1.0], [1.0, 2.0, 1.0])
    loop, _ = _simulate(plant, Controller((kp, ki), (1.0, 0.0), anti_windup=aw),
                        Actuator(limits=(lo, hi), reference_step=1.0, load_step=1.0))
    for resp, r, d in ((loop.reference, 1.0, 0.0), (loop.load, 0.0, 1.0)):
        sol = solve_ivp(_pi_ode(kp, ki, tt, lo, hi, r, d), (0.0, resp.t[-1]), [0.0, 0.0, 0.0],
                        rtol=1e-10, atol=1e-12, dense_output=True, max_step=0.05)
        y = sol.sol(resp.t)[1]
        assert _rel_err(resp.y, y / (r or d)) < 1e-4
    assert loop.reference.limited_time > 0      # the case does saturate


def test_rate_limited_pi_matches_solve_ivp():
    # the ideal rate limiter is the limit of a fast tracking loop (eps -> 0)
    kp, ki, tt, lo, hi, rate = 2.0, 1.5, 0.8, -5.0, 5.0, 0.6
    plant = Plant.from_coefficients([1.0], [1.0, 2.0, 1.0])
    loop, info = _simulate(plant, Controller((kp, ki), (1.0, 0.0), anti_windup=AntiWindup(
        "back-calculation", {"tracking_time": tt})), Actuator(limits=(lo, hi), max_rate=rate))
    resp = loop.reference
    eps = 1e-4
    sol = solve_ivp(_pi_ode(kp, ki, tt, lo, hi, 1.0, 0.0, rate, eps), (0.0, resp.t[-1]),
                    [0.0] * 4, method="LSODA", rtol=1e-9, atol=1e-11, dense_output=True)
    x = sol.sol(resp.t)
    assert _rel_err(resp.y, x[1]) < 2e-4
    assert _rel_err(resp.u, x[3]) < 2e-4
    # the actuator starts at rest and climbs at the rate limit: u = rate t (exact)
    early = resp.t < 0.5
    assert resp.u[early] == pytest.approx(rate * resp.t[early], rel=1e-9, abs=1e-12)


def test_pid_with_setpoint_weights_matches_the_parallel_form():
    # Astrom and Hagglund's PID with back-calculation, set-point weights b and c = 0,
    # derivative filter Tf:  v = Kp (b r - y) + I + D,  dI/dt = Ki (r - y) + (u - v)/Tt,
    # Tf dD/dt = -D - Kd dy/dt.  synth implements the same law in polynomial form.
    kp, ki, kd, tf, b, tt = 3.0, 2.0, 0.8, 0.1, 0.5, 0.6
    lo, hi = -1.5, 1.5
    N = 1.0 / tf
    num = (kp + kd * N, kp * N + ki, ki * N)
    c = Controller(num, (1.0, N, 0.0), shaping=ReferenceShaping(setpoint_weights=(b, 0.0)),
                   anti_windup=AntiWindup("back-calculation", {"tracking_time": tt}))
    plant = Plant.from_coefficients([1.0], [1.0, 2.0, 1.0])
    loop, _ = _simulate(plant, c, Actuator(limits=(lo, hi)))

    def f(t, x):
        x1, x2, i_state, w = x          # D = -(Kd/Tf) (y - w), w' = (y - w)/Tf
        y = x2
        dterm = -kd / tf * (y - w)
        v = kp * (b * 1.0 - y) + i_state + dterm
        u = _sat(v, lo, hi)
        return [-x1 + u, x1 - x2, ki * (1.0 - y) + (u - v) / tt, (y - w) / tf]

    resp = loop.reference
    sol = solve_ivp(f, (0.0, resp.t[-1]), [0.0] * 4, rtol=1e-10, atol=1e-12, dense_output=True,
                    max_step=0.02)
    assert _rel_err(resp.y, sol.sol(resp.t)[1]) < 1e-4
    assert resp.u[0] == pytest.approx(b * kp)   # the proportional kick on b r only


def test_observer_form_matches_place_poles_state_form():
    # a compensator with an unstable pole, C = 4 (s + 1)(s + 3) / ((s - 0.5)(s + 8)), in the
    # observer form of Astrom and Wittenmark: x' = F x + G e + K (u - v), v = H x + J e,
    # K from scipy.signal.place_poles so that F - K H has the observer poles synth uses
    # (the unstable pole moved to -1/Tt, the stable one kept)
    tt, lo, hi = 0.5, -3.0, 3.0
    num = 4.0 * np.polymul([1.0, 1.0], [1.0, 3.0])
    den = np.polymul([1.0, -0.5], [1.0, 8.0])
    plant = Plant.from_coefficients([2.0], [1.0, 3.0, 2.0])
    c = Controller(tuple(num), tuple(den), anti_windup=AntiWindup("observer",
                                                                  {"tracking_time": tt}))
    assert verify(problem_from_text("[plant]\nnumerator=[2.0]\ndenominator=[1.0,3.0,2.0]"),
                  c).stable
    loop, _ = _simulate(plant, c, Actuator(limits=(lo, hi)))
    F, G, H, J = signal.tf2ss(num, den)
    K = signal.place_poles(F.T, H.T, [-1.0 / tt, -8.0]).gain_matrix.T
    Ag, Bg, Cg, _ = signal.tf2ss([2.0], [1.0, 3.0, 2.0])

    def f(t, x):
        xg, xc = x[:2], x[2:]
        y = float((Cg @ xg)[0])
        e = 1.0 - y
        v = float((H @ xc)[0] + J[0, 0] * e)
        u = _sat(v, lo, hi)
        return [*(Ag @ xg + Bg[:, 0] * u), *(F @ xc + G[:, 0] * e + K[:, 0] * (u - v))]

    resp = loop.reference
    assert resp.limited_time > 0
    sol = solve_ivp(f, (0.0, resp.t[-1]), [0.0] * 4, rtol=1e-10, atol=1e-12, dense_output=True,
                    max_step=0.02)
    assert _rel_err(resp.y, (Cg @ sol.sol(resp.t)[:2])[0]) < 1e-4


def test_dead_time_matches_solve_ivp_by_the_method_of_steps():
    # G = exp(-0.7 s) / (s + 1)^2, PI with back-calculation; the delay-differential equation
    # integrated interval by interval (method of steps), the delayed actuator output read
    # from the previous interval's dense output
    kp, ki, tt, lo, hi, T = 0.9, 0.5, 1.5, -0.6, 1.4, 0.7
    plant = Plant.from_coefficients([1.0], [1.0, 2.0, 1.0], dead_time=T)
    loop, info = _simulate(plant, Controller((kp, ki), (1.0, 0.0), anti_windup=AntiWindup(
        "back-calculation", {"tracking_time": tt})), Actuator(limits=(lo, hi)))
    resp = loop.reference
    assert resp.exact_delay and resp.limited_time > 0
    t_end = resp.t[-1]
    pieces = []

    def u_of(sol, t):
        x1, x2, i_state = sol.sol(t)
        v = kp * (1.0 - x2) + i_state
        return _sat(v, lo, hi)

    x0 = [0.0, 0.0, 0.0]
    k = 0
    while k * T < t_end:
        prev = pieces[-1] if pieces else None

        def f(t, x, prev=prev):
            x1, x2, i_state = x
            e = 1.0 - x2
            v = kp * e + i_state
            u = _sat(v, lo, hi)
            p = 0.0 if prev is None else u_of(prev, t - T)
            return [-x1 + p, x1 - x2, ki * e + (u - v) / tt]

        sol = solve_ivp(f, (k * T, (k + 1) * T), x0, rtol=1e-10, atol=1e-12, dense_output=True,
                        max_step=0.01)
        pieces.append(sol)
        x0 = sol.y[:, -1]
        k += 1
    y = np.array([pieces[min(int(t // T), len(pieces) - 1)].sol(t)[1] for t in resp.t])
    assert _rel_err(resp.y, y) < 1e-4


def test_unsaturated_loop_matches_scipy_step():
    # limits far beyond anything the loop asks for: the response is the linear one
    kp, ki = 2.0, 1.5
    plant = Plant.from_coefficients([1.0], [1.0, 2.0, 1.0])
    loop, _ = _simulate(plant, Controller((kp, ki), (1.0, 0.0), anti_windup=AntiWindup(
        "back-calculation", {"tracking_time": 0.5})), Actuator(limits=(-1e6, 1e6)))
    resp = loop.reference
    char = np.polyadd(np.polymul([1.0, 0.0], [1.0, 2.0, 1.0]), [kp, ki])
    _, y = signal.step(signal.TransferFunction([kp, ki], char), T=resp.t)
    assert resp.limited_time == 0
    # the one approximation: u linear between samples, error O(h^2)
    assert _rel_err(resp.y, y) < 1e-4


def test_rest_outside_the_range_is_the_static_gain_times_the_limit():
    # G = 2/(s+1), a reference step of 4 needs u = 2 at rest but the actuator stops at 1.5:
    # the output rests at 2 * 1.5 = 3, three quarters of the step (worked by hand)
    p = problem_from_text("[plant]\nnumerator=[2.0]\ndenominator=[1.0,1.0]\n[actuator]\n"
                          "limits=[-1.0,1.5]\nreference_step=4.0\n")
    c = Controller((1.0, 1.0), (1.0, 0.0), anti_windup=AntiWindup(
        "back-calculation", {"tracking_time": 1.0}))
    v = verify(p, c)
    rest = Fraction(2) * Fraction(3, 2) / 4
    assert v.saturated_metrics["final_value"] == pytest.approx(float(rest), rel=1e-12)
    assert v.metrics["steady_state_error"] == pytest.approx(float(1 - rest), rel=1e-12)
    (loop,), _ = simulate_saturated(p.plant, [c], p.actuator)
    assert loop.reference.y[-1] == pytest.approx(float(rest), rel=1e-6)


def test_time_scale_moves_settling_and_keeps_overshoot():
    # a loop a times faster in every time constant answers a times faster (common practice):
    # overshoot unchanged, settling time divided by a, at 1e-4 and 1e5 rad/s alike
    base = None
    for a in (1.0, 1e-4, 1e5):
        plant = Plant.from_coefficients([a * a], [1.0, 2.0 * a, a * a])
        c = Controller((2.0, 1.5 * a), (1.0, 0.0), anti_windup=AntiWindup(
            "back-calculation", {"tracking_time": 0.8 / a}))
        loop, _ = _simulate(plant, c, Actuator(limits=(-1.2, 1.3), max_rate=0.9 * a))
        m = response_metrics(loop, 2.0)
        if base is None:
            base = m
            continue
        assert m["overshoot_percent"] == pytest.approx(base["overshoot_percent"], rel=1e-6)
        assert m["settling_time"] * a == pytest.approx(base["settling_time"], rel=1e-6)
        assert m["load_iae"] * a == pytest.approx(base["load_iae"], rel=1e-6)


# ----------------------------------------------------------------------------------------------
# the textbook fact
# ----------------------------------------------------------------------------------------------

def test_back_calculation_curbs_the_overshoot_of_a_saturated_pi():
    # K. J. Astrom and T. Hagglund, Advanced PID Control, 2006, sec. 3.5 (from memory): a PI
    # whose actuator saturates on a set-point step winds up and overshoots; back-calculation
    # with a tracking time below Ti stops the windup.  Plant 1/(s+1)^2, Ti = Kp/Ki = 1.33 s.
    p = problem_from_text(PLANT_TEXT + "[actuator]\nlimits = [-1.2, 1.3]\n")
    c = Controller((2.0, 1.5), (1.0, 0.0))
    naive = verify(p, c).saturated_metrics
    cured = verify(p, dataclasses.replace(c, anti_windup=AntiWindup(
        "back-calculation", {"tracking_time": 0.8}))).saturated_metrics
    linear = verify(p, c, actuator=False).metrics
    assert naive["overshoot_percent"] > linear["overshoot_percent"]   # windup adds overshoot
    assert cured["overshoot_percent"] < 0.5 * naive["overshoot_percent"]
    assert cured["settling_time"] < naive["settling_time"]


def test_a_design_meeting_a_limit_only_without_saturation_says_so():
    p = problem_from_text(PLANT_TEXT + "[requirements]\nmax_overshoot_percent = 22\n"
                          "[actuator]\nlimits = [-1.2, 1.3]\n")
    v = verify(p, Controller((2.0, 1.5), (1.0, 0.0)))
    assert not v.feasible
    (text,) = v.violations
    assert "with the actuator limited" in text and "without saturation" in text
    assert "which meets it" in text


# ----------------------------------------------------------------------------------------------
# the bundled case through the design pipeline, re-checked independently
# ----------------------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def pump_run(tmp_path_factory):
    from pathlib import Path

    case = Path(__file__).resolve().parents[1] / "cases" / "booster-pump-pressure.toml"
    out = tmp_path_factory.mktemp("pump") / "design.json"
    res = subprocess.run([sys.executable, "-m", "synth.cli", "design", str(case), "--json",
                          str(out)], capture_output=True, text=True, timeout=300)
    return case, res, json.loads(out.read_text())


def test_bundled_pump_case_top_design_holds_through_the_limits(pump_run):
    case, res, doc = pump_run
    assert res.returncode == 0, res.stderr
    assert doc["actuator"]["limits"] == [0.0, 100.0]
    assert doc["designs"][0]["feasible"]
    # the best PI of the list: its law is the textbook one re-simulated below
    top = next(d for d in doc["designs"] if d["structure"] == "PI")
    assert top["feasible"]
    aw = top["anti_windup"]
    assert aw["scheme"] == "back-calculation" and aw["parameters"]["tracking_time"] > 0
    # re-simulate the top design without synth: the plant 6/((1.5 s+1)(4 s+1)) and the
    # compensator's PI (or PID) form with back-calculation, the drive's range 0..100 % at
    # rest 55 % and its 10 %/s ramp (a fast tracking loop), the 250 kPa step
    cn, cd = top["compensator"]["numerator"], top["compensator"]["denominator"]
    assert len(cd) == 2, "a PI here"
    kp, ki = cn
    tt = aw["parameters"]["tracking_time"]
    ag, bg, cg, _ = signal.tf2ss([6.0], np.polymul([1.5, 1.0], [4.0, 1.0]))
    lo, hi, rate, r, eps = -55.0, 45.0, 10.0, 250.0, 1e-4

    def f(t, x):
        xg, i_state, u = x[:2], x[2], x[3]
        y = float((cg @ xg)[0])
        v = kp * (r - y) + i_state
        du = float(np.clip((_sat(v, lo, hi) - u) / eps, -rate, rate))
        return [*(ag @ xg + bg[:, 0] * u), ki * (r - y) + (u - v) / tt, du]

    t = np.linspace(0.0, 60.0, 6001)
    sol = solve_ivp(f, (0.0, 60.0), [0.0] * 4, method="LSODA", rtol=1e-9, atol=1e-9,
                    dense_output=True)
    y = (cg @ sol.sol(t)[:2])[0] / r
    assert np.max(y) - 1.0 <= 0.10
    outside = np.flatnonzero(np.abs(y - 1.0) > 0.02)
    assert t[outside[-1] + 1] <= 16.0 * 1.01
    # the same PI without anti-windup winds up: it misses the settling limit, and says so
    p = problem_from_text(case.read_text(), str(case))
    naive = verify(p, Controller(tuple(cn), tuple(cd)))
    assert not naive.feasible
    assert any("which meets it" in v for v in naive.violations)


def test_report_of_the_pump_case_draws_linear_and_saturated_side_by_side(pump_run):
    # behaviour: with an actuator the design section gains the saturation figure, right after
    # the step response, and it draws (matplotlib Agg) without error
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure as MplFigure

    from synth.design import prepare_report
    from synth.outputs.report.document import SATURATION_FIGURE, Figure, build_sections

    case, _, doc = pump_run
    problem = problem_from_text(case.read_text(), str(case))
    report = prepare_report(problem, doc, top=1)
    sat = report.figures[0].curves.saturated
    assert sat is not None and sat.reference.step == 250.0
    kinds = [b.kind for sec in build_sections(report) for b in sec.blocks
             if isinstance(b, Figure)]
    assert kinds[kinds.index("step") + 1] == SATURATION_FIGURE
    (fig,) = [b for sec in build_sections(report) for b in sec.blocks
              if isinstance(b, Figure) and b.kind == SATURATION_FIGURE]
    target = MplFigure(figsize=(8, 3.6))
    FigureCanvasAgg(target)
    fig.draw(target)
    assert len(target.axes) == 4


@pytest.mark.parametrize("field,value,key", [
    ("anti_windup", {"scheme": "clamp-it", "parameters": {}}, "designs[0].anti_windup.scheme"),
    ("anti_windup", {"scheme": "back-calculation", "parameters": {}},
     "designs[0].anti_windup.parameters"),
    ("anti_windup", {"scheme": "observer", "parameters": {"tracking_time": -1.0}},
     "designs[0].anti_windup.parameters.tracking_time"),
    ("reference_filter", {"setpoint_weights": {"b": "half"}},
     "designs[0].reference_filter.setpoint_weights.b"),
    ("reference_filter", {"numerator": [], "denominator": [1.0]},
     "designs[0].reference_filter.numerator"),
])
def test_a_documents_controller_fields_are_checked(field, value, key):
    # behaviour: the one reader names the field of a malformed anti-windup or shaping
    from synth.outputs.document import read_design

    doc = {"schema": "synth.design/1", "designs": [{
        "rank": 1, "structure": "PI", "compensator": {"numerator": [2.0, 1.5],
                                                      "denominator": [1.0, 0.0]},
        field: value}]}
    with pytest.raises(InputError) as err:
        (lambda d: d.controller(d.designs[0]))(read_design(doc, "run.json"))
    assert str(err.value).startswith(f"run.json: {key}:")


def test_a_documents_controller_carries_shaping_and_anti_windup():
    from synth.outputs.document import read_design

    doc = {"schema": "synth.design/1", "designs": [{
        "rank": 1, "structure": "PI", "compensator": {"numerator": [2.0, 1.5],
                                                      "denominator": [1.0, 0.0]},
        "setpoint_weights": {"b": 0.5, "c": 0.0},
        "anti_windup": {"scheme": "back-calculation", "parameters": {"tracking_time": 1.3}}}]}
    document = read_design(doc)
    c = document.controller(document.designs[0])
    assert c.shaping.setpoint_weights == (0.5, 0.0)
    assert c.anti_windup == AntiWindup("back-calculation", {"tracking_time": 1.3})
