"""Reference shaping: set-point weights and prefilters leave the loop alone and shape the step.

External references, named beside each check:

* ``scipy.signal.freqresp`` (Ms, Mt of the loop, which no shaping touches);
* ``scipy.signal.step`` of the closed loop from the load to the output (the
  load response does not see the reference path) and of the reference path
  ``G C_r / (1 + G C)``, with ``C_r`` rebuilt from the set-point weights by
  ``scipy.signal.residue`` / ``scipy.signal.invres`` (tests/independent.py)
  or ``F C`` for a prefilter;
* the set-point weighting law ``u = kp (b r - y) + ki/s (r - y) + kd s/(1 +
  s Tf) (c r - y)`` (Astrom and Hagglund, Advanced PID Control, 2006, sec. 3.4).
"""

from __future__ import annotations

import numpy as np
import pytest
from independent import independent_check, reference_path
from scipy import signal

from synth.design import run_design
from synth.problem.requirements import problem_from_text
from synth.verify.controller import Controller, ReferenceShaping, setpoint_numerator
from synth.verify.simulation import simulate_step
from synth.verify.verdict import verify


def _problem(req="", search=""):
    return problem_from_text(f"""
[plant]
numerator = [1.0]
denominator = [1.0, 3.0, 3.0, 1.0]
[requirements]
{req}
[search]
{search}
""")


PID = ([2.6, 3.2, 1.1], [1.0, 2.5, 0.0])     # a PID with filter on 1/(s+1)^3


@pytest.mark.parametrize("shaping", [
    ReferenceShaping(setpoint_weights=(0.3, 0.0)),
    ReferenceShaping(setpoint_weights=(0.7, 1.0)),
    ReferenceShaping(numerator=(1.0,), denominator=(2.0, 1.0)),
])
def test_shaping_leaves_ms_mt_noise_and_the_load_response_unchanged(shaping):
    p = _problem()
    plain = verify(p, *PID)
    shaped = verify(p, Controller(tuple(PID[0]), tuple(PID[1]), shaping))
    for key in ("peak_sensitivity", "peak_complementary_sensitivity", "noise_gain",
                "load_iae", "load_peak", "phase_margin_deg", "gain_margin_db"):
        assert shaped.metrics[key] == pytest.approx(plain.metrics[key], rel=1e-12), key
    # ... and those are scipy's numbers for the loop C G
    w = np.geomspace(1e-3, 1e3, 200001)
    _, L = signal.freqresp(signal.TransferFunction(np.polymul(PID[0], [1.0]),
                                                   np.polymul(PID[1], [1.0, 3.0, 3.0, 1.0])), w)
    assert shaped.metrics["peak_sensitivity"] == pytest.approx(np.max(1 / np.abs(1 + L)), rel=1e-4)
    assert shaped.metrics["peak_complementary_sensitivity"] == pytest.approx(
        np.max(np.abs(L / (1 + L))), rel=1e-4)
    char = np.polyadd(np.polymul(PID[1], [1.0, 3.0, 3.0, 1.0]), PID[0])
    t = np.linspace(0, 60, 120001)
    _, yd = signal.step(signal.TransferFunction(PID[1], char), T=t)     # load: G/(1+CG)
    assert shaped.metrics["load_iae"] == pytest.approx(np.trapezoid(np.abs(yd), t), rel=1e-4)


@pytest.mark.parametrize("shaping", [
    ReferenceShaping(setpoint_weights=(0.3, 0.0)),
    ReferenceShaping(setpoint_weights=(0.7, 1.0)),
    ReferenceShaping(numerator=(1.0,), denominator=(2.0, 1.0)),
])
def test_shaped_reference_step_against_scipy(shaping):
    p = _problem()
    resp = simulate_step(p.plant, Controller(tuple(PID[0]), tuple(PID[1]), shaping), t_end=40.0)
    rf = ({"setpoint_weights": {"b": shaping.setpoint_weights[0],
                                "c": shaping.setpoint_weights[1]}}
          if shaping.setpoint_weights else
          {"numerator": list(shaping.numerator), "denominator": list(shaping.denominator)})
    nr, extra = reference_path(np.array(PID[0]), np.array(PID[1]), rf)
    char = np.polyadd(np.polymul(PID[1], [1.0, 3.0, 3.0, 1.0]), PID[0])
    _, y = signal.step(signal.TransferFunction(nr, np.polymul(extra, char)), T=resp.t)
    np.testing.assert_allclose(resp.y, y, atol=2e-4)


def test_setpoint_numerator_follows_the_weighting_law():
    # PID in parallel form kp + ki/s + kd s/(1 + s Tf), Tf = 1/p: the weighted reference path
    # b kp + ki/s + c kd s/(1 + s Tf) over s (s + p), expanded by hand (Astrom and Hagglund 2006)
    kp, ki, kd, p = 2.0, 1.0, 0.5, 10.0
    num = np.polyadd(np.polyadd(kp * np.polymul([1, 0], [1, p]), ki * np.array([1.0, p])),
                     kd * p * np.array([1.0, 0, 0]))
    for b, c in ((1.0, 1.0), (0.5, 0.0), (0.0, 0.3)):
        ref = np.polyadd(np.polyadd(b * kp * np.polymul([1, 0], [1, p]), ki * np.array([1.0, p])),
                         c * kd * p * np.array([1.0, 0, 0]))
        np.testing.assert_allclose(setpoint_numerator(num, [1.0, p, 0.0], b, c), ref, rtol=1e-12)


def test_set_point_weights_meet_an_overshoot_limit_the_loop_alone_misses():
    # load-optimal PI under Ms <= 1.6 overshoots a reference step; with shaping the overshoot
    # limit holds and the loop (hence Ms and the load IAE) is the one without the limit
    base = "max_peak_sensitivity = 1.6\nmax_steady_state_error = 0.0"
    search = 'structures = ["PI"]\nobjective = "disturbance"\neffort = 0.3'
    free = run_design(_problem(base, search))
    limited = run_design(_problem(base + "\nmax_overshoot_percent = 5.0", search))
    top_free, top = free.best, limited.best
    assert top.verdict.feasible and top.candidate.shaping is not None
    assert top.verdict.metrics["load_iae"] == pytest.approx(
        top_free.verdict.metrics["load_iae"], rel=0.02)
    doc = limited.to_json()
    assert doc["designs"][0]["reference_filter"]["setpoint_weights"]["c"] == 0.0
    independent_check(limited.problem, doc["designs"][0])


def test_shaping_off_keeps_the_loop_unshaped():
    p = _problem("max_peak_sensitivity = 1.6\nmax_overshoot_percent = 5.0",
                 'structures = ["PI"]\nreference_shaping = false\neffort = 0.3')
    run = run_design(p)
    assert all(d.candidate.shaping is None for d in run.designs)
    assert "reference_filter" not in run.to_json()["designs"][0]
